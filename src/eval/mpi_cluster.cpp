// MPI implementation of cluster.hpp (built only when CMake finds MPI).
#include <mpi.h>

#include <algorithm>
#include <csignal>
#include <cstdlib>
#include <cstring>
#include <deque>
#include <iostream>
#include <stdexcept>
#include <vector>

#include "core/base/errors.hpp"
#include "eval/cluster.hpp"
#include "eval/thread_evaluator.hpp"

namespace tessera::cluster {
namespace {

enum Tag : int { kSetup = 1, kWork = 2, kResult = 3, kStop = 4, kFailure = 5 };

bool g_initialised = false;
bool g_finished = false;

bool launched_by_mpirun() {
  for (const char* var : {"OMPI_COMM_WORLD_SIZE", "PMI_SIZE", "PMIX_RANK", "SLURM_PROCID"})
    if (std::getenv(var)) return true;
  return false;
}

std::string receive_string(int source, int tag, MPI_Status* status_out = nullptr) {
  MPI_Status status;
  MPI_Probe(source, tag, MPI_COMM_WORLD, &status);
  int count = 0;
  MPI_Get_count(&status, MPI_CHAR, &count);
  std::string text(static_cast<std::size_t>(count), '\0');
  MPI_Recv(text.data(), count, MPI_CHAR, status.MPI_SOURCE, tag, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
  if (status_out) *status_out = status;
  return text;
}

void send_string(const std::string& text, int dest, int tag) {
  MPI_Send(text.data(), static_cast<int>(text.size()), MPI_CHAR, dest, tag, MPI_COMM_WORLD);
}

// Setup travels as four fields separated by NUL characters.
std::string pack_setup(const WorkerSetup& s) {
  std::string out = std::to_string(s.threads);
  out += '\0';
  out += s.base_dir;
  out += '\0';
  out += s.log_path;
  out += '\0';
  out += s.config_text;
  return out;
}

WorkerSetup unpack_setup(const std::string& text) {
  WorkerSetup s;
  std::size_t a = text.find('\0');
  std::size_t b = text.find('\0', a + 1);
  std::size_t c = text.find('\0', b + 1);
  if (a == std::string::npos || b == std::string::npos || c == std::string::npos)
    throw std::runtime_error("malformed setup message from rank 0");
  s.threads = std::stoul(text.substr(0, a));
  s.base_dir = text.substr(a + 1, b - a - 1);
  s.log_path = text.substr(b + 1, c - b - 1);
  s.config_text = text.substr(c + 1);
  return s;
}

// A chunk of work: [first, count, genomes...]; a result: [first, count, fitness..., descriptors...,
// valid..., extras...], all as doubles (indices and flags are exact in a double).
struct Layout {
  std::size_t g, d, e;
  std::size_t result_size(std::size_t count) const { return 2 + count * (2 + d + e); }
};

}  // namespace

void init(int* argc, char*** argv) {
  if (!launched_by_mpirun()) return;
  int provided = 0;
  MPI_Init_thread(argc, argv, MPI_THREAD_FUNNELED, &provided);
  g_initialised = true;
}

bool built_with_mpi() { return true; }

int rank() {
  if (!g_initialised) return 0;
  int r = 0;
  MPI_Comm_rank(MPI_COMM_WORLD, &r);
  return r;
}

int size() {
  if (!g_initialised) return 1;
  int s = 1;
  MPI_Comm_size(MPI_COMM_WORLD, &s);
  return s;
}

bool active() { return g_initialised && size() > 1; }

int serve(const ProblemOpener& open) {
  // The coordinator handles SIGINT/SIGTERM (finishing its batch needs us): ignore them here.
  std::signal(SIGINT, SIG_IGN);
  std::signal(SIGTERM, SIG_IGN);
  std::unique_ptr<ThreadEvaluator> evaluator;
  Layout layout{0, 0, 0};
  std::vector<double> buffer, reply;
  Batch batch;
  for (;;) {
    MPI_Status status;
    MPI_Probe(0, MPI_ANY_TAG, MPI_COMM_WORLD, &status);
    if (status.MPI_TAG == kStop) {
      MPI_Recv(nullptr, 0, MPI_CHAR, 0, kStop, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
      break;
    }
    if (status.MPI_TAG == kSetup) {
      const WorkerSetup setup = unpack_setup(receive_string(0, kSetup));
      try {
        auto problem = open(setup);
        const auto& info = problem->info();
        layout = {info.genome_size(), info.descriptor_size(), info.extra_names.size()};
        evaluator = std::make_unique<ThreadEvaluator>(problem, setup.threads);
      } catch (const std::exception& e) {
        send_string("rank " + std::to_string(rank()) + ": " + e.what(), 0, kFailure);
      }
      continue;
    }
    int count = 0;
    MPI_Get_count(&status, MPI_DOUBLE, &count);
    buffer.resize(static_cast<std::size_t>(count));
    MPI_Recv(buffer.data(), count, MPI_DOUBLE, 0, kWork, MPI_COMM_WORLD, MPI_STATUS_IGNORE);
    if (!evaluator) continue;  // setup failed; the coordinator already knows
    const auto first = static_cast<std::size_t>(buffer[0]);
    const auto n = static_cast<std::size_t>(buffer[1]);
    batch.resize(n, layout.g, layout.d, layout.e);
    std::copy(buffer.begin() + 2, buffer.begin() + 2 + static_cast<std::ptrdiff_t>(n * layout.g),
              batch.genomes.begin());
    try {
      evaluator->evaluate(batch);
    } catch (const std::exception& e) {
      send_string("rank " + std::to_string(rank()) + ": " + e.what(), 0, kFailure);
      continue;
    }
    reply.resize(layout.result_size(n));
    reply[0] = static_cast<double>(first);
    reply[1] = static_cast<double>(n);
    auto out = reply.begin() + 2;
    out = std::copy(batch.fitness.begin(), batch.fitness.end(), out);
    out = std::copy(batch.descriptors.begin(), batch.descriptors.end(), out);
    for (unsigned char v : batch.valid) *out++ = v;
    std::copy(batch.extras.begin(), batch.extras.end(), out);
    MPI_Send(reply.data(), static_cast<int>(reply.size()), MPI_DOUBLE, 0, kResult, MPI_COMM_WORLD);
  }
  MPI_Finalize();
  g_finished = true;
  return 0;
}

EvaluateFn distributed_evaluator(WorkerSetup setup, int evaluator_ranks) {
  const int ranks = evaluator_ranks > 0 ? std::min(size(), evaluator_ranks + 1) : size();
  // Each evaluator sends its own setup once, so a later evaluator (another problem) replaces
  // the ranks' problem.
  auto setup_sent = std::make_shared<bool>(false);
  return [setup = std::move(setup), ranks, setup_sent](Batch& batch) {
    if (!*setup_sent) {
      const std::string packed = pack_setup(setup);
      for (int r = 1; r < size(); ++r) send_string(packed, r, kSetup);
      *setup_sent = true;
    }
    const std::size_t workers = static_cast<std::size_t>(ranks - 1);
    if (batch.count == 0) return;
    // About four chunks per evaluator rank: small enough to balance uneven evaluation times,
    // large enough that message latency stays small next to the work.
    const std::size_t chunk = std::max<std::size_t>(1, (batch.count + 4 * workers - 1) / (4 * workers));
    std::deque<std::size_t> pending;
    for (std::size_t first = 0; first < batch.count; first += chunk) pending.push_back(first);
    const Layout layout{batch.genome_size, batch.descriptor_size, batch.extra_size};
    std::vector<std::vector<double>> outbox(static_cast<std::size_t>(ranks));
    std::vector<MPI_Request> requests(static_cast<std::size_t>(ranks), MPI_REQUEST_NULL);
    auto send_next = [&](int r) {
      if (pending.empty()) return false;
      const std::size_t first = pending.front();
      pending.pop_front();
      const std::size_t n = std::min(chunk, batch.count - first);
      auto& msg = outbox[static_cast<std::size_t>(r)];
      MPI_Wait(&requests[static_cast<std::size_t>(r)], MPI_STATUS_IGNORE);
      msg.resize(2 + n * layout.g);
      msg[0] = static_cast<double>(first);
      msg[1] = static_cast<double>(n);
      std::copy_n(batch.genomes.begin() + static_cast<std::ptrdiff_t>(first * layout.g), n * layout.g,
                  msg.begin() + 2);
      MPI_Isend(msg.data(), static_cast<int>(msg.size()), MPI_DOUBLE, r, kWork, MPI_COMM_WORLD,
                &requests[static_cast<std::size_t>(r)]);
      return true;
    };
    std::size_t in_flight = 0;
    for (int r = 1; r < ranks; ++r)
      if (send_next(r)) ++in_flight;
    std::vector<double> reply;
    while (in_flight > 0) {
      MPI_Status status;
      MPI_Probe(MPI_ANY_SOURCE, MPI_ANY_TAG, MPI_COMM_WORLD, &status);
      if (status.MPI_TAG == kFailure) {
        const std::string why = receive_string(status.MPI_SOURCE, kFailure);
        throw InputError("evaluator " + why);
      }
      int count = 0;
      MPI_Get_count(&status, MPI_DOUBLE, &count);
      reply.resize(static_cast<std::size_t>(count));
      MPI_Recv(reply.data(), count, MPI_DOUBLE, status.MPI_SOURCE, kResult, MPI_COMM_WORLD,
               MPI_STATUS_IGNORE);
      --in_flight;
      const auto first = static_cast<std::size_t>(reply[0]);
      const auto n = static_cast<std::size_t>(reply[1]);
      if (reply.size() != layout.result_size(n) || first + n > batch.count)
        throw std::runtime_error("malformed result message from rank " +
                                 std::to_string(status.MPI_SOURCE));
      auto in = reply.begin() + 2;
      std::copy_n(in, n, batch.fitness.begin() + static_cast<std::ptrdiff_t>(first));
      in += static_cast<std::ptrdiff_t>(n);
      std::copy_n(in, n * layout.d, batch.descriptors.begin() + static_cast<std::ptrdiff_t>(first * layout.d));
      in += static_cast<std::ptrdiff_t>(n * layout.d);
      for (std::size_t i = 0; i < n; ++i) batch.valid[first + i] = in[static_cast<std::ptrdiff_t>(i)] != 0.0;
      in += static_cast<std::ptrdiff_t>(n);
      std::copy_n(in, n * layout.e, batch.extras.begin() + static_cast<std::ptrdiff_t>(first * layout.e));
      if (send_next(status.MPI_SOURCE)) ++in_flight;
    }
    for (auto& request : requests) MPI_Wait(&request, MPI_STATUS_IGNORE);
  };
}

void finish() {
  if (!g_initialised || g_finished) return;
  g_finished = true;
  if (rank() == 0)
    for (int r = 1; r < size(); ++r) MPI_Send(nullptr, 0, MPI_CHAR, r, kStop, MPI_COMM_WORLD);
  MPI_Finalize();
}

}  // namespace tessera::cluster
