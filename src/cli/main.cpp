// The tessera command: parses the command line and dispatches to one subcommand.
#include <cstdio>
#include <exception>
#include <iostream>
#include <string>

#include "cli/commands.hpp"
#include "cli/run_setup.hpp"
#include "cli/stop_signal.hpp"
#include "core/base/errors.hpp"
#include "eval/cluster.hpp"

namespace {

const char* kAbout =
    "Tessera: quality-diversity illumination of design spaces.\n"
    "Keeps the best solution for every behaviour niche of a problem in an HDF5 archive\n"
    "(MAP-Elites with grid or CVT archives, novelty search), then answers questions about it.\n"
    "Start with:  tessera illuminate problems/arm.toml --out runs/arm";

}  // namespace

int main(int argc, char** argv) {
  // First thing: a Ctrl-C even in the first instant must end in a checkpoint or a clean exit.
  const bool checkpoints = argc > 1 && tessera::cli::command_checkpoints(argv[1]);
  if (checkpoints) tessera::cli::install_stop_handlers();
  // Under mpirun every rank runs this binary: ranks 1..N-1 serve evaluations and exit. MPI's
  // start-up installs handlers and threads of its own: stop signals wait (blocked) meanwhile and
  // reach ours afterwards.
  if (checkpoints) tessera::cli::hold_stop_signals(true);
  try {
    tessera::cluster::init(&argc, &argv);
  } catch (const std::exception& e) {
    std::cerr << "tessera: " << e.what() << '\n';
    return 1;
  }
  if (checkpoints) {
    tessera::cli::install_stop_handlers();
    tessera::cli::hold_stop_signals(false);
  }
  // `study` spreads whole runs over the ranks instead: every rank runs its share.
  const bool whole_runs = argc > 1 && std::string(argv[1]) == "study";
  if (tessera::cluster::active() && tessera::cluster::rank() != 0 && !whole_runs)
    return tessera::cluster::serve(tessera::cli::open_worker_problem);
  struct ClusterGuard {
    ~ClusterGuard() { tessera::cluster::finish(); }
  } cluster_guard;
  CLI::App app{kAbout, "tessera"};
  app.require_subcommand(1);
  app.set_version_flag("--version", std::string("tessera ") + TESSERA_VERSION
#ifdef TESSERA_HAVE_MPI
                                        + " (MPI evaluator: built in)"
#else
                                        + " (MPI evaluator: not built)"
#endif
  );
  tessera::cli::register_illuminate(app);
  tessera::cli::register_resume(app);
  tessera::cli::register_inspect(app);
  tessera::cli::register_problems(app);
  tessera::cli::register_query(app);
  tessera::cli::register_front(app);
  tessera::cli::register_report(app);
  tessera::cli::register_adapt(app);
  tessera::cli::register_trace(app);
  tessera::cli::register_transfer(app);
  tessera::cli::register_study(app);
  tessera::cli::register_compare(app);
  try {
    app.parse(argc, argv);
  } catch (const CLI::ParseError& e) {
    if (e.get_name() != "RuntimeError" && e.get_exit_code() != 0) {
      // Usage errors exit 2, like every other bad input.
      app.exit(e);
      return 2;
    }
    return app.exit(e);
  } catch (const tessera::InputError& e) {
    std::cerr << "tessera: " << e.what() << "\n";
    return 2;
  } catch (const std::exception& e) {
    std::cerr << "tessera: internal error: " << e.what() << "\n";
    return 1;
  }
  return 0;
}
