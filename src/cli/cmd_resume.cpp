// `tessera resume ARCHIVE.h5`: continues a checkpointed run in place, bit-identically.
#include <tbb/global_control.h>
#include <tbb/info.h>

#include <chrono>
#include <filesystem>
#include <iostream>
#include <memory>
#include <optional>

#include "cli/commands.hpp"
#include "cli/resource_checks.hpp"
#include "cli/option_checks.hpp"
#include "cli/run_driver.hpp"
#include "cli/summary.hpp"
#include "core/base/errors.hpp"
#include "io/archive_file.hpp"

namespace tessera::cli {
namespace {

namespace fs = std::filesystem;

struct ResumeOptions {
  std::string archive;
  std::optional<std::int64_t> evaluations;
  std::size_t threads = 0;
  bool quiet = false;
};

int run_resume(const ResumeOptions& o) {
  const ArchiveSnapshot saved = read_archive_file(o.archive);
  if (!saved.resume)
    throw InputError(o.archive +
                     ": holds no resume state (written by a command that does not "
                     "checkpoint)");
  std::vector<std::string> overrides;
  if (o.evaluations) {
    check_evaluations_option(*o.evaluations);
    if (static_cast<std::uint64_t>(*o.evaluations) < saved.evaluations)
      throw InputError("--evaluations " + std::to_string(*o.evaluations) + ": " + o.archive +
                       " already holds " + std::to_string(saved.evaluations) +
                       " evaluations; the new total budget must be at least that");
    overrides.push_back("search.evaluations=" + std::to_string(*o.evaluations));
  }
  const std::string base = fs::absolute(fs::path(o.archive)).parent_path().string();
  check_output_writable(base, "");  // the folder must take the next checkpoint
  RunConfig config =
      parse_run_text(saved.config, o.archive + " [stored run file]", base, overrides);
  // MAP-Elites with its variation emitter stores a batch cut by the budget and completes it
  // exactly. Population searches score a batch as a whole, and CMA emitters keep the steps they
  // sampled between asking and learning: for them a cut batch is not completed exactly.
  const bool exact_cut = saved.resume->algorithm == "map-elites" && config.emitters.empty();
  if (!exact_cut && saved.evaluations % config.search.batch != 0)
    std::cerr << "tessera: warning: " << o.archive << " stopped inside a batch ("
              << saved.evaluations << " evaluations, batch " << config.search.batch
              << "); with this search the resumed run differs from one uninterrupted run (stop "
                 "at a multiple of the batch for an exact resume)\n";

  tbb::global_control threads(tbb::global_control::max_allowed_parallelism,
                              o.threads == 0 ? tbb::info::default_concurrency() : o.threads);
  // Errors name the archive through the config's source, e.g. a problem no longer available.
  PreparedRun run =
      prepare_run(std::move(config), o.threads, (fs::path(base) / "workers.log").string(), &saved);
  try {
    run.search->restore(saved);
  } catch (const std::invalid_argument& e) {
    throw InputError(o.archive + ": cannot resume: " + e.what());
  }
  const std::uint64_t start_evaluations = run.search->counters().evaluations;
  const auto start = std::chrono::steady_clock::now();
  const int code = drive_run(run, {o.archive, o.quiet});
  const double seconds =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  if (code == 0) print_summary(std::cout, run, o.archive, start_evaluations, seconds);
  return code;
}

}  // namespace

void register_resume(CLI::App& app) {
  auto o = std::make_shared<ResumeOptions>();
  auto* cmd =
      app.add_subcommand("resume",
                         "Continue a checkpointed run in place up to a new total budget.\n"
                         "The result is bit-identical to the same run done without interruption.");
  cmd->add_option("ARCHIVE", o->archive, "archive written by illuminate (or a checkpoint of it)")
      ->required();
  cmd->add_option("--evaluations,-n", o->evaluations,
                  "new total budget (default: the run file's budget)");
  cmd->add_option("--threads,-j", o->threads, "worker threads (default: all cores)");
  cmd->add_flag("--quiet,-q", o->quiet, "no progress line");
  cmd->callback([o] { throw CLI::RuntimeError(run_resume(*o)); });
}

}  // namespace tessera::cli
