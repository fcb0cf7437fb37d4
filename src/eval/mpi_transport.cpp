// The MPI side of mpi_transport.hpp: the only file that includes <mpi.h> and the only code of the
// tessera-mpi module.
#include "eval/mpi_transport.hpp"

#include <mpi.h>

#include <climits>
#include <stdexcept>

namespace {

using tessera::cluster::kAnySource;
using tessera::cluster::kAnyTag;

int byte_count(std::size_t bytes) {
  if (bytes > static_cast<std::size_t>(INT_MAX))
    throw std::length_error("an MPI message of more than 2 GiB");
  return static_cast<int>(bytes);
}

void init(int* argc, char*** argv) {
  int provided = 0;
  MPI_Init_thread(argc, argv, MPI_THREAD_FUNNELED, &provided);
}

int rank() {
  int r = 0;
  MPI_Comm_rank(MPI_COMM_WORLD, &r);
  return r;
}

int size() {
  int s = 1;
  MPI_Comm_size(MPI_COMM_WORLD, &s);
  return s;
}

void probe(int source, int tag, int* found_source, int* found_tag, std::size_t* bytes) {
  MPI_Status status;
  MPI_Probe(source == kAnySource ? MPI_ANY_SOURCE : source, tag == kAnyTag ? MPI_ANY_TAG : tag,
            MPI_COMM_WORLD, &status);
  int count = 0;
  MPI_Get_count(&status, MPI_BYTE, &count);
  *found_source = status.MPI_SOURCE;
  *found_tag = status.MPI_TAG;
  *bytes = static_cast<std::size_t>(count);
}

void receive(void* data, std::size_t bytes, int source, int tag) {
  MPI_Recv(data, byte_count(bytes), MPI_BYTE, source, tag, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
}

void send(const void* data, std::size_t bytes, int dest, int tag) {
  MPI_Send(data, byte_count(bytes), MPI_BYTE, dest, tag, MPI_COMM_WORLD);
}

void* send_async(const void* data, std::size_t bytes, int dest, int tag) {
  auto* request = new MPI_Request;
  MPI_Isend(data, byte_count(bytes), MPI_BYTE, dest, tag, MPI_COMM_WORLD, request);
  return request;
}

void wait(void* handle) {
  if (!handle) return;
  auto* request = static_cast<MPI_Request*>(handle);
  MPI_Wait(request, MPI_STATUS_IGNORE);
  delete request;
}

void finalize() {
  MPI_Finalize();
}

const tessera::cluster::MpiTransport kTransport{tessera::cluster::kMpiTransportVersion,
                                                init,
                                                rank,
                                                size,
                                                probe,
                                                receive,
                                                send,
                                                send_async,
                                                wait,
                                                finalize};

}  // namespace

extern "C" __attribute__((visibility("default"))) const tessera::cluster::MpiTransport*
tessera_mpi_transport() {
  return &kTransport;
}
