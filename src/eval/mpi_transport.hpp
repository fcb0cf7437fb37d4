// The few MPI calls the cluster evaluator makes, as a table of plain functions. The table lives in
// a module of its own (tessera-mpi.so, built from mpi_transport.cpp and linked with MPI) that
// tessera loads only when a launcher started it: a run without mpirun never maps Open MPI's
// libraries (8 ms of every process start on the test VM). Messages are bytes; tags and ranks are
// MPI's. Shared by the module and tessera_eval only, so it is no public ABI: both come from one
// build and the loader checks the version below.
#pragma once

#include <cstddef>

namespace tessera::cluster {

inline constexpr int kMpiTransportVersion = 1;
inline constexpr int kAnySource = -1;
inline constexpr int kAnyTag = -1;

struct MpiTransport {
  int version;
  // MPI_Init_thread with MPI_THREAD_FUNNELED (only the calling thread talks to MPI).
  void (*init)(int* argc, char*** argv);
  int (*rank)();
  int (*size)();
  // Waits for a message matching source and tag (or kAny*), leaves it queued and says what it is.
  void (*probe)(int source, int tag, int* found_source, int* found_tag, std::size_t* bytes);
  void (*receive)(void* data, std::size_t bytes, int source, int tag);
  void (*send)(const void* data, std::size_t bytes, int dest, int tag);
  // Starts a send of a buffer that must stay untouched until wait() on the returned handle.
  void* (*send_async)(const void* data, std::size_t bytes, int dest, int tag);
  void (*wait)(void* handle);  // a null handle returns at once
  void (*finalize)();
};

}  // namespace tessera::cluster

// The module's one exported symbol.
extern "C" const tessera::cluster::MpiTransport* tessera_mpi_transport();
