#include "cli/resource_checks.hpp"

#include <fcntl.h>
#include <sys/resource.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <condition_variable>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <memory>
#include <mutex>
#include <new>
#include <system_error>
#include <thread>
#include <vector>

#include "core/base/errors.hpp"

namespace tessera::cli {
namespace {

namespace fs = std::filesystem;

std::uint64_t mapped_bytes() {
  std::ifstream statm("/proc/self/statm");
  std::uint64_t pages = 0;
  statm >> pages;
  return pages * static_cast<std::uint64_t>(::sysconf(_SC_PAGESIZE));
}

std::uint64_t cgroup_limit() {
  std::ifstream in("/sys/fs/cgroup/memory.max");
  std::string text;
  if (!(in >> text) || text == "max") return UINT64_MAX;
  try {
    return std::stoull(text);
  } catch (const std::exception&) {
    return UINT64_MAX;
  }
}

}  // namespace

std::string byte_size(double bytes) {
  const char* units[] = {"bytes", "KB", "MB", "GB", "TB", "PB", "EB"};
  int u = 0;
  while (bytes >= 1000.0 && u < 6) {
    bytes /= 1000.0;
    ++u;
  }
  char text[64];
  std::snprintf(text, sizeof text, u == 0 ? "%.0f %s" : "%.1f %s", bytes, units[u]);
  return text;
}

std::uint64_t available_memory_bytes() {
  std::uint64_t limit = static_cast<std::uint64_t>(::sysconf(_SC_PHYS_PAGES)) *
                        static_cast<std::uint64_t>(::sysconf(_SC_PAGESIZE));
  limit = std::min(limit, cgroup_limit());
  rlimit as{};
  if (::getrlimit(RLIMIT_AS, &as) == 0 && as.rlim_cur != RLIM_INFINITY) {
    const std::uint64_t mapped = mapped_bytes();
    limit = std::min<std::uint64_t>(limit, as.rlim_cur > mapped ? as.rlim_cur - mapped : 0);
  }
  return limit;
}

void check_threads(std::size_t threads) {
  const unsigned cores = std::max(1u, std::thread::hardware_concurrency());
  if (threads > kMaxThreads)
    throw InputError("--threads " + std::to_string(threads) + ": more than " +
                     std::to_string(kMaxThreads) + " worker threads; give 0 (all " +
                     std::to_string(cores) + " cores) or a number up to " +
                     std::to_string(kMaxThreads));
  const std::size_t wanted = threads == 0 ? cores : threads;
  // Start them all, held at a gate, so that every stack exists at once as it will in the run.
  std::mutex mutex;
  std::condition_variable gate;
  bool open = false;
  std::vector<std::thread> started;
  std::string failure;
  std::size_t starved = 0;  // threads that started but could not allocate (under mutex)
  try {
    started.reserve(wanted);
    for (std::size_t i = 1; i < wanted; ++i)
      started.emplace_back([&] {
        // An allocation gives the thread its own malloc arena, as a worker thread gets one. Under
        // an address-space limit that allocation fails: counted, never thrown out of the thread
        // (which would end the process with "terminate called").
        std::unique_ptr<char[]> scratch;
        try {
          scratch = std::make_unique<char[]>(4096);
          static_cast<volatile char*>(scratch.get())[0] = 1;
        } catch (const std::bad_alloc&) {
          std::lock_guard lock(mutex);
          ++starved;
          return;
        }
        std::unique_lock lock(mutex);
        gate.wait(lock, [&] { return open; });
      });
  } catch (const std::system_error& e) {
    failure = e.code().message();
  } catch (const std::bad_alloc&) {
    failure = "out of memory";
  }
  {
    std::lock_guard lock(mutex);
    open = true;
  }
  gate.notify_all();
  for (auto& t : started) t.join();
  if (failure.empty() && starved > 0) failure = "out of memory";
  if (!failure.empty())
    throw InputError("--threads " + std::to_string(wanted) + ": could start only " +
                     std::to_string(started.size() + 1 - starved) + " threads (" + failure +
                     "); use fewer with --threads N, or raise the limit (ulimit -u / -v)");
}

std::uint64_t cvt_build_bytes(const CvtSettings& settings, std::size_t dimensions) {
  const double samples =
      static_cast<double>(std::max<std::int64_t>(settings.samples, 0) > 0
                              ? settings.samples
                              : std::max<std::int64_t>(100000, 100 * settings.cells));
  const double cells = static_cast<double>(settings.cells);
  const double d = static_cast<double>(dimensions);
  // samples (D doubles) + nearest-centroid index (8 bytes); centroids, sums and the k-d tree
  // (about 4 D doubles per cell) + counts.
  const double bytes = samples * (8.0 * d + 8.0) + cells * (32.0 * d + 16.0);
  return bytes >= 1.8e19 ? UINT64_MAX : static_cast<std::uint64_t>(bytes);
}

void check_cvt_build(const CvtSettings& settings, std::size_t dimensions, bool cached,
                     const std::string& source) {
  if (cached) return;
  const std::uint64_t need = cvt_build_bytes(settings, dimensions);
  const std::uint64_t have = available_memory_bytes();
  const std::string what =
      "space.cells = " + std::to_string(settings.cells) + " with " +
      std::to_string(settings.samples > 0 ? settings.samples
                                          : std::max<std::int64_t>(100000, 100 * settings.cells)) +
      " samples";
  const std::int64_t samples = settings.samples > 0
                                   ? settings.samples
                                   : std::max<std::int64_t>(100000, 100 * settings.cells);
  if (samples > kMaxCvtSamples)
    throw InputError(source + ": " + what + " would need about " +
                     byte_size(static_cast<double>(need)) + " and hours of Lloyd iterations; " +
                     "at most " + std::to_string(kMaxCvtSamples) +
                     " samples are allowed: lower space.samples or space.cells (the default is " +
                     "100 samples per cell)");
  if (need > have)
    throw InputError(source + ": " + what + " needs about " + byte_size(static_cast<double>(need)) +
                     " of memory to build the CVT, more than the " +
                     byte_size(static_cast<double>(have)) +
                     " available; lower space.cells or space.samples");
  if (need >= (std::uint64_t{256} << 20))
    std::cerr << "tessera: building a CVT of " << what << " (about "
              << byte_size(static_cast<double>(need))
              << " of memory; it may take minutes and is cached for later runs)\n";
}

void check_output_writable(const std::string& folder, const std::string& archive) {
  std::error_code ec;
  if (!archive.empty() && fs::is_directory(archive, ec))
    throw InputError(archive +
                     ": is a folder; the archive cannot be written there (remove or "
                     "rename it, or choose another --out)");
  const fs::path probe = fs::path(folder) / (".tessera-write-test-" + std::to_string(::getpid()));
  const int fd = ::open(probe.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0600);
  if (fd < 0)
    throw InputError(folder + ": cannot write the archive in this folder: " + std::strerror(errno) +
                     " (choose another --out or fix its permissions)");
  ::close(fd);
  fs::remove(probe, ec);
}

}  // namespace tessera::cli
