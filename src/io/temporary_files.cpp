#include "io/temporary_files.hpp"

#include <signal.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <fstream>
#include <system_error>

namespace tessera {
namespace {

namespace fs = std::filesystem;

// Name of this machine: on a shared file system a process id alone does not say whose file it is.
std::string host_name() {
  char name[256] = {0};
  if (::gethostname(name, sizeof name - 1) != 0 || name[0] == 0) return "host";
  std::string out = name;
  std::replace(out.begin(), out.end(), '/', '_');
  return out;
}

// Gone, or a zombie: exited, its status not collected yet (an orphan under a container's init
// that never collects it stays one for ever), so it writes nothing any more (proc(5): state Z).
bool process_gone(pid_t pid) {
  if (::kill(pid, 0) != 0) return errno == ESRCH;
  std::ifstream stat("/proc/" + std::to_string(pid) + "/stat");
  std::string text;
  std::getline(stat, text);
  const std::size_t name_end = text.rfind(')');  // the name may hold spaces and parentheses
  return name_end != std::string::npos && name_end + 2 < text.size() && text[name_end + 2] == 'Z';
}

fs::path folder_of(const fs::path& target) {
  return target.has_parent_path() ? target.parent_path() : fs::path(".");
}

}  // namespace

std::string temporary_prefix(const fs::path& target) {
  return "." + target.filename().string() + ".tmp-" + host_name() + "-";
}

fs::path temporary_path(const fs::path& target) {
  return folder_of(target) / (temporary_prefix(target) + std::to_string(::getpid()));
}

void remove_stale_temporaries(const fs::path& target) {
  const std::string prefix = temporary_prefix(target);
  std::error_code ec;
  for (const auto& entry : fs::directory_iterator(folder_of(target), ec)) {
    const std::string name = entry.path().filename().string();
    if (name.rfind(prefix, 0) != 0) continue;
    const std::string digits = name.substr(prefix.size());
    if (digits.empty() || digits.size() > 9 ||
        digits.find_first_not_of("0123456789") != std::string::npos)
      continue;
    const pid_t pid = static_cast<pid_t>(std::stol(digits));
    if (pid > 0 && process_gone(pid)) {
      std::error_code ignored;
      fs::remove(entry.path(), ignored);
    }
  }
}

}  // namespace tessera
