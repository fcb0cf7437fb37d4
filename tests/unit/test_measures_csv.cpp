// measures.csv: what is written reads back the same (RFC 4180 quoting, missing values, censored
// flags, doubles to the last bit), and malformed files are refused in one line naming the file
// and the line.
#include <sys/wait.h>
#include <unistd.h>

#include <catch2/catch.hpp>

#include <filesystem>
#include <fstream>
#include <string>

#include "core/base/errors.hpp"
#include "io/measures_csv.hpp"

using namespace tessera;
namespace fs = std::filesystem;

namespace {

fs::path temp_file(const std::string& name) {
  return fs::temp_directory_path() / ("tessera-measures-" + std::to_string(::getpid()) + name);
}

std::string refusal(const std::string& content) {
  const fs::path p = temp_file("-bad.csv");
  {
    std::ofstream out(p);
    out << content;
  }
  std::string message;
  try {
    read_measures_csv(p.string());
  } catch (const InputError& e) {
    message = e.what();
  }
  fs::remove(p);
  return message;
}

}  // namespace

TEST_CASE("measures.csv round trip") {
  const std::vector<Observation> rows = {
      {"novelty", "seed-1", "coverage", 0.1 + 0.2, false},
      {"nov,\"elty\"", "seed-2", "coverage", std::nullopt, false},
      {"objective", "seed-1", "readapt.goal-1", 5000.0, true},
      {"objective", "seed-2", "qd_score", -1.0e-300, false}};
  const fs::path p = temp_file(".csv");
  write_measures_csv(p.string(), rows);
  const auto back = read_measures_csv(p.string());
  fs::remove(p);
  REQUIRE(back.size() == rows.size());
  for (std::size_t i = 0; i < rows.size(); ++i) {
    CHECK(back[i].group == rows[i].group);
    CHECK(back[i].run == rows[i].run);
    CHECK(back[i].measure == rows[i].measure);
    CHECK(back[i].value == rows[i].value);  // bit-identical or both missing
    CHECK(back[i].censored == rows[i].censored);
  }
}

TEST_CASE("measures.csv: a temporary file left by a killed writer is removed by the next one") {
  // A study killed while writing measures.csv leaves its temporary file behind; a process of
  // this machine that is gone cannot be writing it any more, one that is alive may be. A killed
  // writer whose parent has not collected it yet (a zombie: under a container's init that
  // never reaps, for ever) is gone too (proc(5): state Z).
  const fs::path dir = temp_file("-stale");
  fs::create_directories(dir);
  const pid_t reaped = ::fork();
  if (reaped == 0) std::_Exit(0);
  REQUIRE(reaped > 0);
  ::waitpid(reaped, nullptr, 0);  // its process id names no process now
  const pid_t zombie = ::fork();
  if (zombie == 0) std::_Exit(0);
  REQUIRE(zombie > 0);
  for (int i = 0; i < 5000; ++i) {  // exited, not yet collected
    siginfo_t info{};
    if (::waitid(P_PID, static_cast<id_t>(zombie), &info, WEXITED | WNOHANG | WNOWAIT) == 0 &&
        info.si_pid == zombie)
      break;
    ::usleep(1000);
  }
  char host[256] = {0};
  ::gethostname(host, sizeof host - 1);
  const std::string prefix = ".measures.csv.tmp-" + std::string(host) + "-";
  const fs::path dead = dir / (prefix + std::to_string(reaped));
  const fs::path undead = dir / (prefix + std::to_string(zombie));
  const fs::path live = dir / (prefix + std::to_string(::getppid()));
  for (const auto& p : {dead, undead}) std::ofstream(p) << "group,run,measure,value,censored\nhalf";
  std::ofstream(live) << "group,run,measure,value,censored\n";
  write_measures_csv((dir / "measures.csv").string(), {{"a", "seed-1", "coverage", 0.5, false}});
  ::waitpid(zombie, nullptr, 0);
  CHECK_FALSE(fs::exists(dead));
  CHECK_FALSE(fs::exists(undead));
  CHECK(fs::exists(live));
  CHECK(read_measures_csv((dir / "measures.csv").string()).size() == 1);
  fs::remove_all(dir);
}

TEST_CASE("measures.csv refusals name the file and the line") {
  CHECK(refusal("").find("empty measures file") != std::string::npos);
  CHECK(refusal("group,run,value\n").find("line 1: the header") != std::string::npos);
  const std::string header = "group,run,measure,value,censored\n";
  CHECK(refusal(header + "a,s1,m,1\n").find("line 2: 4 fields") != std::string::npos);
  CHECK(refusal(header + "a,s1,m,nan,0\n").find("line 2: value 'nan'") != std::string::npos);
  CHECK(refusal(header + "a,s1,m,1,yes\n").find("censored must be 0 or 1") != std::string::npos);
  CHECK(refusal(header + "\n,s1,m,1,0\n").find("line 3: empty group") != std::string::npos);
  CHECK(refusal(header + "\"a,s1,m,1,0\n").find("unterminated quote") != std::string::npos);
  CHECK(refusal(header + "a,s1,m,1,0\n").empty());
}
