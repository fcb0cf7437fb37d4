#include "cli/run_driver.hpp"

#include <unistd.h>

#include <chrono>
#include <csignal>
#include <cstdio>
#include <cstring>
#include <iostream>
#include <string>

#include "cli/format.hpp"
#include "cli/stop_signal.hpp"
#include "io/archive_file.hpp"

namespace tessera::cli {
namespace {

char g_crash_message[512] = {0};

// A plugin that crashes takes the process with it; say so in one line, pointing at the intact
// checkpoint, instead of leaving a bare "Segmentation fault".
void on_fatal_signal(int signal) {
  const char* name = signal == SIGSEGV  ? "segmentation fault"
                     : signal == SIGBUS ? "bus error"
                     : signal == SIGFPE ? "floating-point exception"
                     : signal == SIGILL ? "illegal instruction"
                                        : "abort";
  char line[768];
  const int n =
      std::snprintf(line, sizeof line, "tessera: %s during the run %s\n", name, g_crash_message);
  if (n > 0) (void)!::write(STDERR_FILENO, line, static_cast<std::size_t>(n));
  std::_Exit(3);
}

void install_handlers(const PreparedRun& run, const std::string& archive_path) {
  std::snprintf(g_crash_message, sizeof g_crash_message,
                "(problem '%s' from %s); the last checkpoint %s is intact",
                run.problem->info().name.c_str(), run.problem->info().origin.c_str(),
                archive_path.c_str());
  install_stop_handlers();
  struct sigaction fatal {};
  fatal.sa_handler = on_fatal_signal;
  sigemptyset(&fatal.sa_mask);
  fatal.sa_flags = static_cast<int>(SA_RESETHAND);
  for (int s : {SIGSEGV, SIGBUS, SIGFPE, SIGILL}) sigaction(s, &fatal, nullptr);
}

class ProgressLine {
 public:
  explicit ProgressLine(bool enabled) : enabled_(enabled) {}
  void update(const SearchFigures& f, std::uint64_t start_evals, double elapsed, bool force) {
    if (!enabled_) return;
    if (!force && elapsed - last_ < 0.2) return;
    last_ = elapsed;
    const double rate =
        elapsed > 0 ? static_cast<double>(f.evaluations - start_evals) / elapsed : 0;
    const double left = rate > 0 ? static_cast<double>(f.budget - f.evaluations) / rate : 0;
    std::string line = "  " + with_thousands(f.evaluations) + "/" + with_thousands(f.budget) +
                       " evaluations  " + human_rate(rate) + "/s  coverage " + percent(f.coverage) +
                       "  QD-score " + short_number(f.qd_score) + "  best " +
                       short_number(f.max_fitness) + "  left " + duration(left);
    std::fprintf(stderr, "\r%-100s", line.c_str());
    std::fflush(stderr);
    shown_ = true;
  }
  void finish() {
    if (shown_) std::fprintf(stderr, "\n");
  }

 private:
  bool enabled_;
  bool shown_ = false;
  double last_ = -1.0;
};

}  // namespace

void write_checkpoint(const PreparedRun& run, const std::string& path) {
  const ArchiveSnapshot snapshot = snapshot_of(run);
  const CheckpointWriteGuard writing;
  write_archive_file(path, snapshot, {.compress = run.config.checkpoint.compress});
}

int drive_run(PreparedRun& run, const DriveOptions& options) {
  install_handlers(run, options.archive_path);
  using clock = std::chrono::steady_clock;
  const auto start = clock::now();
  auto last_checkpoint = start;
  auto& search = *run.search;
  const std::uint64_t start_evals = search.counters().evaluations;
  std::uint64_t checkpoint_evals = start_evals;
  const auto& every = run.config.checkpoint;
  ProgressLine progress(!options.quiet && ::isatty(STDERR_FILENO));

  while (!search.finished() && stop_signal() == 0) {
    search.step();
    const auto now = clock::now();
    const double elapsed = std::chrono::duration<double>(now - start).count();
    progress.update(search.figures(), start_evals, elapsed, false);
    const bool by_count =
        every.every_evaluations > 0 &&
        search.counters().evaluations - checkpoint_evals >= every.every_evaluations;
    const bool by_time =
        every.every_seconds > 0 &&
        std::chrono::duration<double>(now - last_checkpoint).count() >= every.every_seconds;
    if ((by_count || by_time) && !search.finished()) {
      write_checkpoint(run, options.archive_path);
      checkpoint_evals = search.counters().evaluations;
      last_checkpoint = clock::now();
    }
  }
  progress.update(search.figures(), start_evals,
                  std::chrono::duration<double>(clock::now() - start).count(), true);
  progress.finish();
  write_checkpoint(run, options.archive_path);
  if (stop_signal() != 0 && !search.finished()) {
    std::cerr << "tessera: interrupted after " << with_thousands(search.counters().evaluations)
              << " evaluations; checkpoint written to " << options.archive_path
              << "\n  continue with: tessera resume " << options.archive_path << "\n";
    return stop_exit_code(stop_signal());
  }
  return 0;
}

}  // namespace tessera::cli
