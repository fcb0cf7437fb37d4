// Archive file throughput: writes and reads back a large archive (default 1,000,000 elites with
// 100-parameter genomes, 2-D descriptors on a 1000 x 1000 grid), stored as is (the default) and
// compressed (checkpoint.compress), checks the copy read back is bit-identical, and prints write
// and read throughput next to plain file copies of the same file for scale, with the ratio
// write rate / (copy + fsync) rate of that file (aim >= 0.5, stored as is). Medians of 5 repeats.
// Usage: bench_archive_io [ELITES [GENOME [REPEATS [FOLDER]]]]
#include <fcntl.h>
#include <stdlib.h>
#include <sys/resource.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <numbers>
#include <string>
#include <vector>

#include "core/base/rng.hpp"
#include "core/archive/snapshot.hpp"
#include "io/archive_file.hpp"

#include "bench_timing.hpp"

using tessera::bench::median;
using tessera::bench::seconds_since;

namespace fs = std::filesystem;
using tessera::ArchiveSnapshot;

namespace {


// Processor time of this process (all threads): on a shared machine wall time also counts the
// time other programs held the processors.
double cpu_seconds() {
  rusage u{};
  ::getrusage(RUSAGE_SELF, &u);
  return static_cast<double>(u.ru_utime.tv_sec + u.ru_stime.tv_sec) +
         1e-6 * static_cast<double>(u.ru_utime.tv_usec + u.ru_stime.tv_usec);
}


ArchiveSnapshot make_snapshot(std::size_t n, std::size_t g) {
  const std::int64_t side = 1000;
  ArchiveSnapshot s;
  s.problem = "bench";
  s.config = "[problem]\nname = \"bench\"\n";
  s.seed = 1;
  s.evaluations = 10 * n;
  s.tool_version = "bench";
  s.space_kind = "grid";
  s.descriptor_bounds = {{0.0, 0.0}, {1.0, 1.0}};
  s.descriptor_names = {"x", "y"};
  s.resolution = {side, side};
  s.genome_bounds.lower.assign(g, -std::numbers::pi);
  s.genome_bounds.upper.assign(g, std::numbers::pi);
  const auto cells = static_cast<std::uint64_t>(side * side);
  tessera::Rng rng(7, 0);
  s.cell.resize(n);
  s.fitness.resize(n);
  s.birth.resize(n);
  s.genome.resize(n * g);
  s.descriptor.resize(n * 2);
  for (std::size_t i = 0; i < n; ++i) {
    // 999983 is prime, so i * 999983 mod 10^6 visits every cell once, in a scrambled order.
    const std::uint64_t cell = (i * 999983ull) % cells;
    s.cell[i] = static_cast<std::int64_t>(cell);
    s.fitness[i] = -rng.uniform(0.0, 10.0);
    s.birth[i] = 10 * i;
    for (std::size_t j = 0; j < g; ++j) s.genome[i * g + j] = rng.uniform(-3.14, 3.14);
    s.descriptor[2 * i] = (static_cast<double>(cell / side) + 0.5) / side;
    s.descriptor[2 * i + 1] = (static_cast<double>(cell % side) + 0.5) / side;
  }
  for (std::uint64_t t = 1; t <= 100; ++t)
    s.history.push_back({t * n / 10, 0.01 * t, -1.0 * t, -0.5});
  s.fitness_floor = -10.0;
  tessera::ResumeState r;
  r.algorithm = "map-elites";
  r.next_batch = 100;
  r.counters = {{"invalid", 0}, {"out_of_bounds", 12}};
  s.resume = r;
  return s;
}

bool same(const ArchiveSnapshot& a, const ArchiveSnapshot& b) {
  const auto bits = [](const std::vector<double>& x, const std::vector<double>& y) {
    return x.size() == y.size() && std::memcmp(x.data(), y.data(), x.size() * sizeof(double)) == 0;
  };
  return a.cell == b.cell && a.birth == b.birth && bits(a.fitness, b.fitness) &&
         bits(a.genome, b.genome) && bits(a.descriptor, b.descriptor) &&
         a.history.size() == b.history.size() && a.resolution == b.resolution &&
         a.evaluations == b.evaluations && a.resume.has_value() == b.resume.has_value() &&
         a.resume->counters == b.resume->counters;
}

void fsync_path(const fs::path& p) {
  const int fd = ::open(p.c_str(), O_RDONLY);
  if (fd >= 0) {
    (void)::fsync(fd);
    ::close(fd);
  }
}

}  // namespace

int main(int argc, char** argv) {
  const std::size_t n = argc > 1 ? std::stoul(argv[1]) : 1000000;
  const std::size_t g = argc > 2 ? std::stoul(argv[2]) : 100;
  const int repeats = argc > 3 ? std::stoi(argv[3]) : 5;
  std::string folder_template =
      (argc > 4 ? std::string(argv[4]) : fs::temp_directory_path().string()) +
      "/tessera-bench-XXXXXX";
  if (!::mkdtemp(folder_template.data())) {
    std::perror("mkdtemp");
    return 1;
  }
  const fs::path folder = folder_template;
  const fs::path archive = folder / "archive.h5";
  const fs::path copy = folder / "copy.h5";

  std::setvbuf(stdout, nullptr, _IOLBF, 0);  // figures appear as they are measured
  double load[3] = {0, 0, 0};
  if (::getloadavg(load, 3) == 3)
    std::printf("load averages at start (uptime): %.2f %.2f %.2f\n", load[0], load[1], load[2]);
  std::printf("building a snapshot of %zu elites x %zu parameters...\n", n, g);
  const ArchiveSnapshot snapshot = make_snapshot(n, g);
  // Payload: every number the archive holds, 8 bytes each.
  const double payload =
      8.0 * static_cast<double>(n * (g + 2 + 3) + snapshot.history.size() * 4 + 2 * g + 6);

  bool all_identical = true;
  for (const bool compress : {false, true}) {
    std::vector<double> write_s, read_s, copy_s, copy_sync_s, write_cpu, read_cpu;
    bool identical = true;
    for (int r = 0; r < repeats; ++r) {
      auto t0 = std::chrono::steady_clock::now();
      double c0 = cpu_seconds();
      tessera::write_archive_file(archive.string(), snapshot, {.compress = compress});
      write_s.push_back(seconds_since(t0));
      write_cpu.push_back(cpu_seconds() - c0);

      t0 = std::chrono::steady_clock::now();
      c0 = cpu_seconds();
      const ArchiveSnapshot back = tessera::read_archive_file(archive.string());
      read_s.push_back(seconds_since(t0));
      read_cpu.push_back(cpu_seconds() - c0);
      identical = identical && same(snapshot, back);

      t0 = std::chrono::steady_clock::now();
      fs::copy_file(archive, copy, fs::copy_options::overwrite_existing);
      copy_s.push_back(seconds_since(t0));
      fs::remove(copy);

      // The writer syncs its file to disk; so does this copy, for a like-for-like figure.
      t0 = std::chrono::steady_clock::now();
      fs::copy_file(archive, copy, fs::copy_options::overwrite_existing);
      fsync_path(copy);
      copy_sync_s.push_back(seconds_since(t0));
      fs::remove(copy);
    }
    const double file_bytes = static_cast<double>(fs::file_size(archive));
    const double mb = 1e6;
    std::printf("%s: elites %zu, genome %zu, payload %.1f MB, file %.1f MB (%.1f%% of payload)\n",
                compress ? "compressed (shuffle + deflate)" : "stored as is (default)", n, g,
                payload / mb, file_bytes / mb, 100.0 * file_bytes / payload);
    std::printf("read back bit-identical: %s\n", identical ? "yes" : "NO");
    std::printf("medians of %d repeats:\n", repeats);
    std::printf("  write archive       %7.2f s  %8.1f MB/s payload  %8.1f MB/s file\n",
                median(write_s), payload / mb / median(write_s), file_bytes / mb / median(write_s));
    std::printf("  read archive        %7.2f s  %8.1f MB/s payload  %8.1f MB/s file\n",
                median(read_s), payload / mb / median(read_s), file_bytes / mb / median(read_s));
    std::printf("  write, processor    %7.2f s  %8.1f MB/s payload\n", median(write_cpu),
                payload / mb / median(write_cpu));
    std::printf("  read, processor     %7.2f s  %8.1f MB/s payload\n", median(read_cpu),
                payload / mb / median(read_cpu));
    std::printf("  copy file           %7.2f s                        %8.1f MB/s file\n",
                median(copy_s), file_bytes / mb / median(copy_s));
    std::printf("  copy file + fsync   %7.2f s                        %8.1f MB/s file\n",
                median(copy_sync_s), file_bytes / mb / median(copy_sync_s));
    std::printf("  write / (copy + fsync) time ratio %.2f, read / copy time ratio %.2f\n",
                median(write_s) / median(copy_sync_s), median(read_s) / median(copy_s));
    // The aim is the default's; deflate is an option a user picks knowing it costs time.
    std::printf("  write rate / (copy + fsync) rate %.2f%s\n",
                median(copy_sync_s) / median(write_s),
                compress ? " (no aim: compression is optional)" : " (aim >= 0.5)");
    all_identical = all_identical && identical;
  }
  if (::getloadavg(load, 3) == 3)
    std::printf("load averages at end (uptime): %.2f %.2f %.2f\n", load[0], load[1], load[2]);
  fs::remove_all(folder);
  return all_identical ? 0 : 1;
}
