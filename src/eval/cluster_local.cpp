// The single-process stand-in for builds without MPI (see cluster.hpp).
#ifndef TESSERA_HAVE_MPI

#include <stdexcept>

#include "eval/cluster.hpp"

namespace tessera::cluster {

void init(int*, char***) {}
bool built_with_mpi() { return false; }
bool active() { return false; }
int rank() { return 0; }
int size() { return 1; }
int serve(const ProblemOpener&) { return 0; }
EvaluateFn distributed_evaluator(WorkerSetup, int) {
  throw std::logic_error("this tessera was built without MPI");
}
void finish() {}

}  // namespace tessera::cluster

#endif
