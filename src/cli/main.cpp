// The tessera command: parses the command line and dispatches to one subcommand.
#include <cstdio>
#include <exception>
#include <iostream>

#include "cli/commands.hpp"
#include "cli/run_setup.hpp"
#include "eval/cluster.hpp"
#include "core/base/errors.hpp"

namespace {

const char* kAbout =
    "Tessera: quality-diversity illumination of design spaces.\n"
    "Keeps the best solution for every behaviour niche of a problem in an HDF5 archive\n"
    "(MAP-Elites with grid or CVT archives, novelty search), then answers questions about it.\n"
    "Start with:  tessera illuminate problems/arm.toml --out runs/arm";

}  // namespace

int main(int argc, char** argv) {
  // Under mpirun every rank runs this binary: ranks 1..N-1 serve evaluations and exit.
  tessera::cluster::init(&argc, &argv);
  if (tessera::cluster::active() && tessera::cluster::rank() != 0)
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
