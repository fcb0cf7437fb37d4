// `tessera illuminate RUNFILE --out DIR`: runs a search and writes DIR/archive.h5.
#include <tbb/global_control.h>
#include <tbb/info.h>

#include <chrono>
#include <filesystem>
#include <iostream>
#include <memory>
#include <optional>

#include "cli/commands.hpp"
#include "cli/option_checks.hpp"
#include "cli/resource_checks.hpp"
#include "cli/run_driver.hpp"
#include "cli/summary.hpp"
#include "core/base/errors.hpp"

namespace tessera::cli {
namespace {

namespace fs = std::filesystem;

struct IlluminateOptions {
  std::string run_file;
  std::string out_dir;
  std::optional<std::int64_t> evaluations;
  std::optional<std::string> seed;
  std::size_t threads = 0;
  bool quiet = false;
  bool force = false;
  std::vector<std::string> overrides;
};

int run_illuminate(const IlluminateOptions& o) {
  auto overrides = o.overrides;
  if (o.evaluations) {
    check_evaluations_option(*o.evaluations);
    overrides.push_back("search.evaluations=" + std::to_string(*o.evaluations));
  }
  if (o.seed) {
    overrides.push_back("search.seed=" + std::to_string(parse_seed_option(*o.seed)));
  }
  RunConfig config = load_run_file(o.run_file, overrides);

  const fs::path out_dir(o.out_dir);
  const fs::path archive = out_dir / "archive.h5";
  std::error_code ec;
  if (fs::exists(archive, ec) && !o.force)
    throw InputError(archive.string() + ": already exists; pass --force to overwrite it, or " +
                     "continue it with `tessera resume " + archive.string() + "`");
  const bool created = !fs::exists(out_dir, ec);
  fs::create_directories(out_dir, ec);
  if (ec) throw InputError(out_dir.string() + ": cannot create the output folder: " + ec.message());
  try {
    check_output_writable(out_dir.string(), archive.string());
  } catch (...) {
    if (created) fs::remove(out_dir, ec);
    throw;
  }

  tbb::global_control threads(tbb::global_control::max_allowed_parallelism,
                              o.threads == 0 ? tbb::info::default_concurrency() : o.threads);
  PreparedRun run;
  try {
    run = prepare_run(std::move(config), o.threads, (out_dir / "workers.log").string());
  } catch (...) {
    // Leave nothing behind when the run could not even start.
    if (created) {
      fs::remove(out_dir / "workers.log", ec);
      fs::remove(out_dir, ec);
    }
    throw;
  }
  if (!o.quiet && !run.space_note.empty()) std::cerr << "tessera: " << run.space_note << "\n";

  const std::uint64_t start_evaluations = run.search->counters().evaluations;
  const auto start = std::chrono::steady_clock::now();
  const int code = drive_run(run, {archive.string(), o.quiet});
  const double seconds =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  if (code == 0) print_summary(std::cout, run, archive.string(), start_evaluations, seconds);
  return code;
}

}  // namespace

void register_illuminate(CLI::App& app) {
  auto o = std::make_shared<IlluminateOptions>();
  auto* cmd = app.add_subcommand(
      "illuminate",
      "Run a quality-diversity search and write DIR/archive.h5.\n"
      "The run file (TOML) names the problem, the descriptor space (grid or CVT), the search\n"
      "and its budget; see problems/*.toml. Checkpoints are written during the run; Ctrl-C\n"
      "stops after the batch in flight and leaves a checkpoint that `tessera resume` continues.");
  // Checked by the run-file reader, which says what is wrong in one line.
  cmd->add_option("RUNFILE", o->run_file, "run file (TOML), e.g. problems/arm.toml")->required();
  cmd->add_option("--out,-o", o->out_dir, "output folder (created if missing)")->required();
  cmd->add_option("--evaluations,-n", o->evaluations,
                  "evaluation budget (overrides search.evaluations)");
  cmd->add_option("--seed", o->seed,
                  "random seed, 0 to 9223372036854775807 (overrides search.seed)");
  cmd->add_option("--threads,-j", o->threads,
                  "worker threads (default: all cores); results do "
                  "not depend on it");
  cmd->add_flag("--quiet,-q", o->quiet, "no progress line");
  cmd->add_flag("--force", o->force, "overwrite an existing DIR/archive.h5");
  cmd->add_option("--set", o->overrides,
                  "override a run-file key, SECTION.KEY=VALUE (repeatable), e.g. "
                  "--set search.batch=512 --set space.resolution=[50,50]");
  cmd->callback([o] { throw CLI::RuntimeError(run_illuminate(*o)); });
}

}  // namespace tessera::cli
