// The cluster evaluator of cluster.hpp over MPI (built when CMake finds MPI). The MPI calls go
// through the transport table of the tessera-mpi module, loaded when a launcher started the
// process (mpi_transport.hpp says why).
#include <dlfcn.h>

#include <algorithm>
#include <cmath>
#include <csignal>
#include <cstdlib>
#include <cstring>
#include <deque>
#include <filesystem>
#include <optional>
#include <stdexcept>
#include <utility>
#include <vector>

#include "core/base/errors.hpp"
#include "eval/cluster.hpp"
#include "eval/mpi_transport.hpp"
#include "eval/thread_evaluator.hpp"
#include "problems/registry.hpp"

namespace tessera::cluster {
namespace {

enum Tag : int { kSetup = 1, kWork = 2, kResult = 3, kStop = 4, kFailure = 5 };

bool g_initialised = false;
bool g_finished = false;
const MpiTransport* g_mpi = nullptr;

bool launched_by_mpirun() {
  for (const char* var : {"OMPI_COMM_WORLD_SIZE", "PMI_SIZE", "PMIX_RANK", "SLURM_PROCID"})
    if (std::getenv(var)) return true;
  return false;
}

// Where the module may be: beside the executable (build tree), in the installed layout relative
// to it, then the absolute build and install paths (for programs elsewhere, such as the benches).
std::vector<std::filesystem::path> module_candidates() {
  namespace fs = std::filesystem;
  std::vector<fs::path> out;
  if (const fs::path exe = executable_dir(); !exe.empty()) {
    out.push_back(exe / "tessera-mpi.so");
    out.push_back((exe / ".." / "lib" / "tessera" / "tessera-mpi.so").lexically_normal());
  }
#ifdef TESSERA_MPI_MODULE_BUILD_PATH
  out.emplace_back(TESSERA_MPI_MODULE_BUILD_PATH);
#endif
#ifdef TESSERA_MPI_MODULE_INSTALL_PATH
  out.emplace_back(TESSERA_MPI_MODULE_INSTALL_PATH);
#endif
  std::vector<fs::path> unique;
  for (const auto& path : out)
    if (std::find(unique.begin(), unique.end(), path) == unique.end()) unique.push_back(path);
  return unique;
}

const MpiTransport* load_transport() {
  std::string tried;
  for (const auto& path : module_candidates()) {
    std::error_code ec;
    if (!std::filesystem::is_regular_file(path, ec)) {
      tried += (tried.empty() ? "" : ", ") + path.string();
      continue;
    }
    // RTLD_GLOBAL: Open MPI's own components, loaded later, look for libmpi's symbols globally.
    void* module = ::dlopen(path.c_str(), RTLD_NOW | RTLD_GLOBAL);
    if (!module)
      throw std::runtime_error("cannot load the MPI module " + path.string() + ": " + ::dlerror());
    auto* entry =
        reinterpret_cast<const MpiTransport* (*)()>(::dlsym(module, "tessera_mpi_transport"));
    const MpiTransport* transport = entry ? entry() : nullptr;
    if (!transport || transport->version != kMpiTransportVersion)
      throw std::runtime_error(path.string() +
                               " is not this tessera's MPI module (another build?)");
    return transport;
  }
  throw std::runtime_error(
      "started by an MPI launcher, but no MPI module tessera-mpi.so was found (looked at " + tried +
      ")");
}

std::string receive_string(int source, int tag) {
  int found_source = 0, found_tag = 0;
  std::size_t bytes = 0;
  g_mpi->probe(source, tag, &found_source, &found_tag, &bytes);
  std::string text(bytes, '\0');
  g_mpi->receive(text.data(), bytes, found_source, tag);
  return text;
}

void send_string(const std::string& text, int dest, int tag) {
  g_mpi->send(text.data(), text.size(), dest, tag);
}

void send_doubles(const std::vector<double>& values, int dest, int tag) {
  g_mpi->send(values.data(), values.size() * sizeof(double), dest, tag);
}

// Receives a message of doubles already probed (its size in bytes known).
void receive_doubles(std::vector<double>& values, std::size_t bytes, int source, int tag) {
  if (bytes % sizeof(double) != 0)
    throw std::runtime_error("a message of " + std::to_string(bytes) + " bytes from rank " +
                             std::to_string(source) + " is not a whole number of doubles");
  values.resize(bytes / sizeof(double));
  g_mpi->receive(values.data(), bytes, source, tag);
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
  std::size_t work_size(std::size_t count) const { return 2 + count * g; }
  std::size_t result_size(std::size_t count) const { return 2 + count * (2 + d + e); }
};

struct ChunkHeader {
  std::size_t first, count;
};

// The [first, count] header of a work or result message, when it has one of whole numbers that
// a double holds exactly (anything else, cast to an index, would be undefined).
std::optional<ChunkHeader> header_of(const std::vector<double>& message) {
  if (message.size() < 2) return std::nullopt;
  for (const double v : {message[0], message[1]})
    if (!(v >= 0.0 && v <= 0x1p53 && v == std::floor(v))) return std::nullopt;
  return ChunkHeader{static_cast<std::size_t>(message[0]), static_cast<std::size_t>(message[1])};
}

}  // namespace

void init(int* argc, char*** argv) {
  if (!launched_by_mpirun()) return;
  g_mpi = load_transport();
  g_mpi->init(argc, argv);
  g_initialised = true;
}

bool built_with_mpi() { return true; }

int rank() {
  return g_initialised ? g_mpi->rank() : 0;
}

int size() {
  return g_initialised ? g_mpi->size() : 1;
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
    int source = 0, tag = 0;
    std::size_t bytes = 0;
    g_mpi->probe(0, kAnyTag, &source, &tag, &bytes);
    if (tag == kStop) {
      g_mpi->receive(nullptr, 0, 0, kStop);
      break;
    }
    if (tag == kSetup) {
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
    receive_doubles(buffer, bytes, 0, kWork);
    if (!evaluator) continue;  // setup failed; the coordinator already knows
    const auto header = header_of(buffer);
    if (!header || buffer.size() != layout.work_size(header->count)) {
      send_string("rank " + std::to_string(rank()) + ": a malformed work message", 0, kFailure);
      continue;
    }
    const std::size_t n = header->count;
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
    reply[0] = buffer[0];  // the chunk's first index, echoed
    reply[1] = buffer[1];
    auto out = reply.begin() + 2;
    out = std::copy(batch.fitness.begin(), batch.fitness.end(), out);
    out = std::copy(batch.descriptors.begin(), batch.descriptors.end(), out);
    for (unsigned char v : batch.valid) *out++ = v;
    std::copy(batch.extras.begin(), batch.extras.end(), out);
    send_doubles(reply, 0, kResult);
  }
  g_mpi->finalize();
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
    std::vector<void*> requests(static_cast<std::size_t>(ranks), nullptr);
    auto send_next = [&](int r) {
      if (pending.empty()) return false;
      const std::size_t first = pending.front();
      pending.pop_front();
      const std::size_t n = std::min(chunk, batch.count - first);
      auto& msg = outbox[static_cast<std::size_t>(r)];
      g_mpi->wait(std::exchange(requests[static_cast<std::size_t>(r)], nullptr));
      msg.resize(layout.work_size(n));
      msg[0] = static_cast<double>(first);
      msg[1] = static_cast<double>(n);
      std::copy_n(batch.genomes.begin() + static_cast<std::ptrdiff_t>(first * layout.g), n * layout.g,
                  msg.begin() + 2);
      requests[static_cast<std::size_t>(r)] =
          g_mpi->send_async(msg.data(), msg.size() * sizeof(double), r, kWork);
      return true;
    };
    std::size_t in_flight = 0;
    for (int r = 1; r < ranks; ++r)
      if (send_next(r)) ++in_flight;
    std::vector<double> reply;
    while (in_flight > 0) {
      int source = 0, tag = 0;
      std::size_t bytes = 0;
      g_mpi->probe(kAnySource, kAnyTag, &source, &tag, &bytes);
      if (tag == kFailure) {
        const std::string why = receive_string(source, kFailure);
        throw InputError("evaluator " + why);
      }
      receive_doubles(reply, bytes, source, kResult);
      --in_flight;
      const auto header = header_of(reply);
      if (!header || reply.size() != layout.result_size(header->count) ||
          header->first + header->count > batch.count)
        throw std::runtime_error("malformed result message from rank " + std::to_string(source));
      const auto [first, n] = *header;
      auto in = reply.begin() + 2;
      std::copy_n(in, n, batch.fitness.begin() + static_cast<std::ptrdiff_t>(first));
      in += static_cast<std::ptrdiff_t>(n);
      std::copy_n(in, n * layout.d, batch.descriptors.begin() + static_cast<std::ptrdiff_t>(first * layout.d));
      in += static_cast<std::ptrdiff_t>(n * layout.d);
      for (std::size_t i = 0; i < n; ++i) batch.valid[first + i] = in[static_cast<std::ptrdiff_t>(i)] != 0.0;
      in += static_cast<std::ptrdiff_t>(n);
      std::copy_n(in, n * layout.e, batch.extras.begin() + static_cast<std::ptrdiff_t>(first * layout.e));
      if (send_next(source)) ++in_flight;
    }
    for (auto& request : requests) g_mpi->wait(std::exchange(request, nullptr));
  };
}

void finish() {
  if (!g_initialised || g_finished) return;
  g_finished = true;
  if (rank() == 0)
    for (int r = 1; r < size(); ++r) g_mpi->send(nullptr, 0, r, kStop);
  g_mpi->finalize();
}

}  // namespace tessera::cluster
