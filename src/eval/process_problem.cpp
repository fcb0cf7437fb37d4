#include "eval/process_problem.hpp"

#include <fcntl.h>
#include <poll.h>
#include <signal.h>
#include <spawn.h>
#include <sys/eventfd.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <chrono>
#include <cmath>
#include <condition_variable>
#include <cstdio>
#include <cstring>
#include <deque>
#include <limits>
#include <map>
#include <mutex>
#include <nlohmann/json.hpp>
#include <optional>
#include <set>
#include <stdexcept>
#include <string>
#include <string_view>
#include <thread>
#include <vector>

#include "core/base/errors.hpp"
#include "eval/worker_answer.hpp"

extern char** environ;

namespace tessera {
namespace {

using Clock = std::chrono::steady_clock;

// Requests one worker may hold at once: enough to hide the pipe round trip, small enough that
// a killed worker loses little work.
constexpr std::size_t kWindow = 4;
// A worker line longer than this without a newline is taken as garbage (protects memory).
constexpr std::size_t kMaxLine = std::size_t{64} << 20;

std::string errno_text(int error) {
  return std::strerror(error);
}

std::string join_command(const std::vector<std::string>& command) {
  std::string out;
  for (const auto& word : command) out += (out.empty() ? "" : " ") + word;
  return out;
}

std::string describe_status(int status) {
  if (WIFEXITED(status)) return "exit status " + std::to_string(WEXITSTATUS(status));
  if (WIFSIGNALED(status)) return "killed by signal " + std::to_string(WTERMSIG(status));
  return "stopped";
}

struct Job {
  std::size_t remaining = 0;
};

// One evaluation: reads the genome from and writes the results into the caller's batch.
struct Request {
  std::uint64_t id = 0;
  const double* genome = nullptr;
  double* fitness = nullptr;
  double* descriptor = nullptr;
  unsigned char* valid = nullptr;
  // Optional messages (scene, trace): sent instead of a genome; the answer object goes to reply.
  const nlohmann::ordered_json* message = nullptr;
  nlohmann::json* reply = nullptr;
  bool suspect = false;          // was held by a worker that crashed: retried once, alone
  std::uint64_t line_start = 0;  // offset of its line in the worker's stdin stream
  Job* job = nullptr;
};

struct Worker {
  pid_t pid = -1;
  int in = -1;   // write end of the worker's stdin
  int out = -1;  // read end of the worker's stdout
  std::string write_buffer;
  std::string read_buffer;
  std::deque<Request*> held;        // in the order sent: front is the oldest
  std::uint64_t bytes_queued = 0;   // request bytes handed to write_buffer since the start
  std::uint64_t bytes_written = 0;  // of which written into the pipe
  Clock::time_point progress;       // last answer, or when the worker became busy

  bool alive() const { return pid > 0; }
};

// The worker processes and the thread that talks to them. Callers on any thread hand requests
// over through `incoming_` and wait; only the I/O thread touches workers and pipes.
class WorkerPool {
 public:
  WorkerPool(const ProblemSpec& spec, std::size_t genome_size, std::size_t descriptor_size)
      : command_(spec.command),
        label_(join_command(spec.command)),
        timeout_(std::chrono::duration_cast<Clock::duration>(
            std::chrono::duration<double>(spec.timeout_seconds))),
        genome_size_(genome_size),
        descriptor_size_(descriptor_size),
        workers_(spec.workers) {
    const std::string log = spec.log_path.empty() ? "/dev/null" : spec.log_path;
    log_fd_ = ::open(log.c_str(), O_WRONLY | O_CREAT | O_APPEND | O_CLOEXEC, 0644);
    if (log_fd_ < 0) throw InputError(log + ": cannot open the worker log: " + errno_text(errno));
    wake_fd_ = ::eventfd(0, EFD_CLOEXEC | EFD_NONBLOCK);
    if (wake_fd_ < 0) {
      ::close(log_fd_);
      throw std::runtime_error("eventfd: " + errno_text(errno));
    }
    for (auto& worker : workers_) {
      const std::string error = start(worker);
      if (!error.empty()) {
        shut_down_workers();
        ::close(wake_fd_);
        ::close(log_fd_);
        throw InputError((spec.source.empty() ? std::string("process problem") : spec.source) +
                         ": cannot start worker '" + label_ + "': " + error);
      }
    }
    thread_ = std::thread([this] { run(); });
  }

  ~WorkerPool() {
    {
      std::lock_guard lock(mutex_);
      stop_ = true;
    }
    wake();
    thread_.join();
    shut_down_workers();
    ::close(wake_fd_);
    ::close(log_fd_);
  }

  WorkerPool(const WorkerPool&) = delete;
  WorkerPool& operator=(const WorkerPool&) = delete;

  // Evaluates candidates [first, first + count) of the batch; safe from any thread.
  void evaluate(Batch& batch, std::size_t first, std::size_t count) {
    if (batch.genome_size != genome_size_ || batch.descriptor_size != descriptor_size_)
      throw std::runtime_error("process problem '" + label_ + "': batch sizes do not match");
    if (count == 0) return;
    for (std::size_t k = first; k < first + count; ++k)
      for (std::size_t j = 0; j < batch.extra_size; ++j) batch.extras[k * batch.extra_size + j] = 0;
    Job job;
    job.remaining = count;
    std::vector<Request> requests(count);
    {
      std::unique_lock lock(mutex_);
      if (!fatal_.empty()) throw InputError(fatal_);
      for (std::size_t k = 0; k < count; ++k) {
        Request& r = requests[k];
        const std::size_t i = first + k;
        r.id = next_id_++;
        r.genome = batch.genomes.data() + i * genome_size_;
        r.fitness = batch.fitness.data() + i;
        r.descriptor = batch.descriptors.data() + i * descriptor_size_;
        r.valid = batch.valid.data() + i;
        r.job = &job;
        incoming_.push_back(&r);
      }
    }
    wake();
    std::unique_lock lock(mutex_);
    done_.wait(lock, [&] { return job.remaining == 0; });
    // A worker command that cannot run is the run file's fault: one line, exit 2.
    if (!fatal_.empty()) throw InputError(fatal_);
  }

  // Sends one optional message (its fields besides the id) and waits for the answer object;
  // std::nullopt when the worker gave none (crash, timeout, garbage). Safe from any thread.
  std::optional<nlohmann::json> ask(const nlohmann::ordered_json& message) {
    Job job;
    job.remaining = 1;
    double fitness = 0.0;
    std::vector<double> descriptor(descriptor_size_);
    unsigned char valid = 0;
    nlohmann::json reply;
    Request r;
    r.fitness = &fitness;
    r.descriptor = descriptor.data();
    r.valid = &valid;
    r.message = &message;
    r.reply = &reply;
    r.job = &job;
    {
      std::lock_guard lock(mutex_);
      if (!fatal_.empty()) throw std::runtime_error(fatal_);
      r.id = next_id_++;
      incoming_.push_back(&r);
    }
    wake();
    std::unique_lock lock(mutex_);
    done_.wait(lock, [&] { return job.remaining == 0; });
    if (!fatal_.empty()) throw std::runtime_error(fatal_);
    if (valid == 0) return std::nullopt;
    return reply;
  }

  std::vector<std::pair<std::string, std::uint64_t>> failure_counts() const {
    std::lock_guard lock(mutex_);
    return {counts_.begin(), counts_.end()};
  }

 private:
  void wake() {
    const std::uint64_t one = 1;
    [[maybe_unused]] ssize_t n = ::write(wake_fd_, &one, sizeof one);
  }

  // Spawns a worker; returns an error text or "" on success.
  std::string start(Worker& worker) {
    int in_pipe[2], out_pipe[2];
    if (::pipe2(in_pipe, O_CLOEXEC) != 0) return "pipe: " + errno_text(errno);
    if (::pipe2(out_pipe, O_CLOEXEC) != 0) {
      const int error = errno;
      ::close(in_pipe[0]);
      ::close(in_pipe[1]);
      return "pipe: " + errno_text(error);
    }
    posix_spawn_file_actions_t actions;
    posix_spawn_file_actions_init(&actions);
    posix_spawn_file_actions_adddup2(&actions, in_pipe[0], 0);
    posix_spawn_file_actions_adddup2(&actions, out_pipe[1], 1);
    posix_spawn_file_actions_adddup2(&actions, log_fd_, 2);
    // The I/O thread blocks SIGPIPE; workers start with an empty mask and default handlers.
    // Their own process group keeps a Ctrl-C in the terminal from killing them mid-batch:
    // tessera finishes the batch in flight, then ends them.
    posix_spawnattr_t attributes;
    posix_spawnattr_init(&attributes);
    sigset_t empty, defaults;
    sigemptyset(&empty);
    sigemptyset(&defaults);
    sigaddset(&defaults, SIGPIPE);
    posix_spawnattr_setsigmask(&attributes, &empty);
    posix_spawnattr_setsigdefault(&attributes, &defaults);
    posix_spawnattr_setpgroup(&attributes, 0);
    posix_spawnattr_setflags(
        &attributes, POSIX_SPAWN_SETSIGMASK | POSIX_SPAWN_SETSIGDEF | POSIX_SPAWN_SETPGROUP);
    std::vector<char*> argv;
    for (const auto& word : command_) argv.push_back(const_cast<char*>(word.c_str()));
    argv.push_back(nullptr);
    pid_t pid = -1;
    const int error = ::posix_spawnp(&pid, argv[0], &actions, &attributes, argv.data(), environ);
    posix_spawn_file_actions_destroy(&actions);
    posix_spawnattr_destroy(&attributes);
    ::close(in_pipe[0]);
    ::close(out_pipe[1]);
    if (error != 0) {
      ::close(in_pipe[1]);
      ::close(out_pipe[0]);
      return errno_text(error);
    }
    ::fcntl(in_pipe[1], F_SETFL, O_NONBLOCK);
    ::fcntl(out_pipe[0], F_SETFL, O_NONBLOCK);
    worker.pid = pid;
    worker.in = in_pipe[1];
    worker.out = out_pipe[0];
    worker.write_buffer.clear();
    worker.read_buffer.clear();
    worker.held.clear();
    worker.bytes_queued = worker.bytes_written = 0;
    return "";
  }

  // Ends a worker and collects its exit status; answers it wrote before its end are still
  // read. `grace` lets a worker that is exiting finish on its own, so that its real status is
  // reported.
  int stop(Worker& worker, Clock::duration grace, bool drain = false) {
    int status = 0;
    if (worker.alive()) {
      const auto until = Clock::now() + grace;
      pid_t got = 0;
      while ((got = ::waitpid(worker.pid, &status, WNOHANG)) == 0 && Clock::now() < until)
        std::this_thread::sleep_for(std::chrono::milliseconds(1));
      if (got == 0) {
        ::kill(worker.pid, SIGKILL);
        while (::waitpid(worker.pid, &status, 0) < 0 && errno == EINTR) {
        }
      }
    }
    if (drain && worker.out >= 0) {
      read_lines(worker);
      // A last answer without its newline still counts: the worker is gone, the line complete.
      if (!worker.read_buffer.empty()) {
        const std::string last = std::move(worker.read_buffer);
        worker.read_buffer.clear();
        on_line(worker, last);
      }
    }
    if (worker.in >= 0) ::close(worker.in);
    if (worker.out >= 0) ::close(worker.out);
    worker.pid = -1;
    worker.in = worker.out = -1;
    return status;
  }

  // Destructor path: closing stdin asks well-behaved workers to exit; the rest are killed.
  void shut_down_workers() {
    for (auto& worker : workers_) {
      if (worker.in >= 0) ::close(worker.in);
      worker.in = -1;
    }
    const auto until = Clock::now() + std::chrono::milliseconds(200);
    for (auto& worker : workers_) {
      const auto left = std::max(Clock::duration::zero(), until - Clock::now());
      stop(worker, left);
    }
  }

  // Counts a failure reason and reports the first of each kind on tessera's stderr.
  // Crashes before any answer are not shown: a worker command that cannot run at all ends the
  // run with one line saying so instead.
  void note(const std::string& reason, const std::string& detail) {
    bool first = false;
    {
      std::lock_guard lock(mutex_);
      ++counts_[reason];
      first = (reason != "crash" || answered_) && shown_.insert(reason).second;
    }
    if (first)
      std::fprintf(stderr, "tessera: worker '%s': %s (%s); further ones are counted, not shown\n",
                   label_.c_str(), reason.c_str(), detail.c_str());
  }

  void complete(Request* r) {
    std::lock_guard lock(mutex_);
    if (--r->job->remaining == 0) done_.notify_all();
  }

  void fail(Request* r, const std::string& reason, const std::string& detail) {
    *r->fitness = std::numeric_limits<double>::quiet_NaN();
    std::fill(r->descriptor, r->descriptor + descriptor_size_,
              std::numeric_limits<double>::quiet_NaN());
    *r->valid = 0;
    // An optional message the worker does not serve is no failed evaluation.
    if (!reason.empty() && r->message == nullptr) note(reason, detail);
    complete(r);
  }

  // A worker exited or closed its stdout: restart it and retry what it held.
  void on_crash(Worker& worker, const std::string& how) {
    const int status = stop(worker, std::chrono::milliseconds(100), true);
    const std::string detail = how + ", " + describe_status(status);
    if (worker.held.empty()) {
      // Before any answer this is a command that cannot run; the fatal error says so.
      if (answered_) note_event("worker exited while idle and was restarted", detail);
    }
    std::deque<Request*> unsent;
    for (Request* r : worker.held) {
      if (r->line_start >= worker.bytes_written) {
        unsent.push_back(r);  // not a byte reached the worker: resent as if never sent
      } else if (r->suspect) {
        fail(r, "crash", detail);
      } else {
        r->suspect = true;
        suspects_.push_back(r);
      }
    }
    worker.held.clear();
    for (auto it = unsent.rbegin(); it != unsent.rend(); ++it)
      ((*it)->suspect ? suspects_ : queue_).push_front(*it);
    // A worker that dies again and again without answering anything (bad command, script
    // error) would otherwise be restarted forever.
    if (++deaths_since_answer_ > 2 * workers_.size() + 8) {
      set_fatal("worker '" + label_ + "' keeps exiting without answering (" + detail +
                "); see its log");
      return;
    }
    restart(worker);
  }

  void on_timeout(Worker& worker) {
    stop(worker, Clock::duration::zero());
    Request* oldest = worker.held.front();
    worker.held.pop_front();
    // The rest never had a fair chance: resend them first, keeping their order.
    for (auto it = worker.held.rbegin(); it != worker.held.rend(); ++it) queue_.push_front(*it);
    worker.held.clear();
    char detail[96];
    std::snprintf(detail, sizeof detail, "no answer within %g s; worker killed and restarted",
                  std::chrono::duration<double>(timeout_).count());
    fail(oldest, "timeout", detail);
    restart(worker);
  }

  void restart(Worker& worker) {
    const std::string error = start(worker);
    if (!error.empty()) set_fatal("cannot restart worker '" + label_ + "': " + error);
  }

  // Events that fail no evaluation, reported once each.
  void note_event(const std::string& what, const std::string& detail) {
    if (events_.insert(what).second)
      std::fprintf(stderr, "tessera: worker '%s': %s (%s)\n", label_.c_str(), what.c_str(),
                   detail.c_str());
  }

  // Gives up on the pool: every waiting caller gets InputError(message).
  void set_fatal(const std::string& message) {
    {
      std::lock_guard lock(mutex_);
      fatal_ = message;  // first, so that no waiter returns without seeing it
    }
    for (auto& worker : workers_) {
      for (Request* r : worker.held) fail(r, "", "");
      worker.held.clear();
      stop(worker, Clock::duration::zero());
    }
    for (Request* r : queue_) fail(r, "", "");
    for (Request* r : suspects_) fail(r, "", "");
    queue_.clear();
    suspects_.clear();
    std::lock_guard lock(mutex_);
    for (Request* r : incoming_) {
      *r->valid = 0;
      if (--r->job->remaining == 0) done_.notify_all();
    }
    incoming_.clear();
    done_.notify_all();
  }

  void send(Worker& worker, Request* r) {
    if (worker.held.empty()) worker.progress = Clock::now();
    worker.held.push_back(r);
    nlohmann::ordered_json line;
    line["id"] = r->id;
    if (r->message != nullptr)
      for (const auto& [key, value] : r->message->items()) line[key] = value;
    else
      line["genome"] = std::vector<double>(r->genome, r->genome + genome_size_);
    r->line_start = worker.bytes_queued;
    const std::size_t before = worker.write_buffer.size();
    worker.write_buffer += line.dump();
    worker.write_buffer += '\n';
    worker.bytes_queued += worker.write_buffer.size() - before;
  }

  // Suspects go alone to idle workers, so a second crash proves who caused it; ordinary
  // requests wait until no suspect is left.
  void dispatch() {
    for (auto& worker : workers_) {
      if (!worker.alive()) continue;
      if (!suspects_.empty()) {
        if (worker.held.empty()) {
          send(worker, suspects_.front());
          suspects_.pop_front();
        }
        continue;
      }
      if (!worker.held.empty() && worker.held.front()->suspect) continue;
      while (worker.held.size() < kWindow && !queue_.empty()) {
        send(worker, queue_.front());
        queue_.pop_front();
      }
    }
  }

  // Returns false when the worker is gone (its stdin closed).
  bool flush(Worker& worker) {
    while (!worker.write_buffer.empty()) {
      const ssize_t n = ::write(worker.in, worker.write_buffer.data(), worker.write_buffer.size());
      if (n > 0) {
        worker.write_buffer.erase(0, static_cast<std::size_t>(n));
        worker.bytes_written += static_cast<std::uint64_t>(n);
      } else if (n < 0 && errno == EINTR) {
        continue;
      } else if (n < 0 && (errno == EAGAIN || errno == EWOULDBLOCK)) {
        return true;
      } else {
        return false;
      }
    }
    return true;
  }

  // Charges a line that matches no held request to the oldest one.
  void charge_oldest(Worker& worker, const std::string& reason, std::string_view line) {
    if (worker.held.empty()) {
      note_event("line while holding no request, ignored", quoted(line));
      return;
    }
    Request* r = worker.held.front();
    worker.held.pop_front();
    worker.progress = Clock::now();
    fail(r, reason, quoted(line));
  }

  void on_line(Worker& worker, std::string_view text) {
    WorkerLine line = read_worker_line(text);
    if (line.kind == WorkerLine::Kind::blank) return;
    if (line.kind == WorkerLine::Kind::malformed) {
      charge_oldest(worker, "malformed answer", line.text);
      return;
    }
    auto it = std::find_if(worker.held.begin(), worker.held.end(), [&](const Request* r) {
      return static_cast<std::int64_t>(r->id) == line.id;
    });
    if (it == worker.held.end()) {
      charge_oldest(worker, "unknown id", line.text);
      return;
    }
    Request* r = *it;
    worker.held.erase(it);
    worker.progress = Clock::now();
    deaths_since_answer_ = 0;
    answered_ = true;

    if (r->reply != nullptr) {
      *r->reply = std::move(line.object);
      *r->valid = 1;
      complete(r);
      return;
    }
    if (const auto fault = read_evaluation(line, r->genome, genome_size_, descriptor_size_,
                                           *r->fitness, r->descriptor)) {
      fail(r, fault->reason, fault->detail);
      return;
    }
    *r->valid = 1;
    complete(r);
  }

  // Returns false when the worker reached end of file (or a read error).
  bool read_lines(Worker& worker) {
    char chunk[65536];
    for (;;) {
      const ssize_t n = ::read(worker.out, chunk, sizeof chunk);
      if (n > 0) {
        worker.read_buffer.append(chunk, static_cast<std::size_t>(n));
        std::size_t start = 0, end;
        while ((end = worker.read_buffer.find('\n', start)) != std::string::npos) {
          on_line(worker, std::string_view(worker.read_buffer).substr(start, end - start));
          start = end + 1;
        }
        worker.read_buffer.erase(0, start);
        if (worker.read_buffer.size() > kMaxLine) {
          charge_oldest(worker, "malformed answer", "a line of more than 64 MiB");
          worker.read_buffer.clear();
        }
      } else if (n < 0 && errno == EINTR) {
        continue;
      } else if (n < 0 && (errno == EAGAIN || errno == EWOULDBLOCK)) {
        return true;
      } else {
        return false;
      }
    }
  }

  void run() {
    // Writing to a worker that died raises SIGPIPE; in this thread it only yields EPIPE.
    sigset_t pipe_signal;
    sigemptyset(&pipe_signal);
    sigaddset(&pipe_signal, SIGPIPE);
    pthread_sigmask(SIG_BLOCK, &pipe_signal, nullptr);

    std::vector<pollfd> fds;
    for (;;) {
      {
        std::lock_guard lock(mutex_);
        if (stop_ || !fatal_.empty()) return;
        queue_.insert(queue_.end(), incoming_.begin(), incoming_.end());
        incoming_.clear();
      }
      dispatch();
      for (auto& worker : workers_)
        if (worker.alive() && !flush(worker)) on_crash(worker, "stdin closed");
      if (!fatal_empty()) return;

      // Wait for answers, writable stdins, new requests or the next deadline.
      fds.assign(1, pollfd{wake_fd_, POLLIN, 0});
      auto deadline = Clock::time_point::max();
      for (auto& worker : workers_) {
        fds.push_back(pollfd{worker.out, POLLIN, 0});
        // Even with nothing to write, POLLERR tells that the worker closed its stdin.
        fds.push_back(
            pollfd{worker.in, static_cast<short>(worker.write_buffer.empty() ? 0 : POLLOUT), 0});
        if (!worker.held.empty()) deadline = std::min(deadline, worker.progress + timeout_);
      }
      int wait_ms = -1;
      if (deadline != Clock::time_point::max()) {
        const auto left = deadline - Clock::now();
        wait_ms = static_cast<int>(
            std::max<std::int64_t>(0, std::chrono::ceil<std::chrono::milliseconds>(left).count()));
      }
      if (::poll(fds.data(), fds.size(), wait_ms) < 0 && errno != EINTR)
        throw std::runtime_error("poll: " + errno_text(errno));  // cannot happen with valid fds
      if (fds[0].revents & POLLIN) {
        std::uint64_t value;
        [[maybe_unused]] ssize_t n = ::read(wake_fd_, &value, sizeof value);
      }
      for (std::size_t w = 0; w < workers_.size(); ++w) {
        Worker& worker = workers_[w];
        if (!worker.alive()) continue;
        const pollfd& out = fds[1 + 2 * w];
        const pollfd& in = fds[2 + 2 * w];
        if ((out.revents & (POLLIN | POLLHUP | POLLERR)) && !read_lines(worker)) {
          on_crash(worker, "stdout closed");
        } else if ((in.revents & POLLERR) || ((in.revents & POLLOUT) && !flush(worker))) {
          on_crash(worker, "stdin closed");
        }
        if (!fatal_empty()) return;
      }
      const auto now = Clock::now();
      for (auto& worker : workers_)
        if (worker.alive() && !worker.held.empty() && now >= worker.progress + timeout_)
          on_timeout(worker);
      if (!fatal_empty()) return;
    }
  }

  bool fatal_empty() {
    std::lock_guard lock(mutex_);
    return fatal_.empty();
  }

  const std::vector<std::string> command_;
  const std::string label_;
  const Clock::duration timeout_;
  const std::size_t genome_size_;
  const std::size_t descriptor_size_;
  int log_fd_ = -1;
  int wake_fd_ = -1;

  // Owned by the I/O thread (and the constructor and destructor around it).
  std::vector<Worker> workers_;
  std::deque<Request*> queue_;
  std::deque<Request*> suspects_;
  std::size_t deaths_since_answer_ = 0;
  bool answered_ = false;  // some worker has answered a request
  std::set<std::string> events_;

  // Shared with callers, under mutex_.
  mutable std::mutex mutex_;
  std::condition_variable done_;
  std::deque<Request*> incoming_;
  std::uint64_t next_id_ = 0;
  bool stop_ = false;
  std::string fatal_;
  std::map<std::string, std::uint64_t> counts_;
  std::set<std::string> shown_;  // reasons already reported on stderr

  std::thread thread_;
};

// A worker's figure: {"items": [{"kind", "name", "style", "closed", "columns", "rows", "text"}]}
// (docs/process-protocol.md). Throws std::invalid_argument naming the fault.
Figure figure_from_json(const nlohmann::json& document) {
  if (!document.is_object() || !document.contains("items") || !document["items"].is_array())
    throw std::invalid_argument("expected an object with an array \"items\"");
  Figure figure;
  for (const auto& entry : document["items"]) {
    if (!entry.is_object()) throw std::invalid_argument("an item is not an object");
    const auto text_of = [&](const char* key, const std::string& fallback) {
      if (!entry.contains(key)) return fallback;
      if (!entry[key].is_string())
        throw std::invalid_argument(std::string("item field \"") + key + "\" is not a string");
      return one_line(entry[key].get<std::string>(), 4096);
    };
    FigureItem item;
    item.name = text_of("name", "");
    const std::string kind = text_of("kind", "");
    const std::string style = text_of("style", "line");
    const auto k = figure_kind_from(kind);
    const auto st = figure_style_from(style);
    if (!k) throw std::invalid_argument("item '" + item.name + "': unknown kind '" + kind + "'");
    if (!st) throw std::invalid_argument("item '" + item.name + "': unknown style '" + style + "'");
    item.kind = *k;
    item.style = *st;
    item.closed = entry.value("closed", false);
    item.text = text_of("text", "");
    if (entry.contains("columns")) {
      if (!entry["columns"].is_array()) throw std::invalid_argument("\"columns\" is not an array");
      for (const auto& c : entry["columns"]) {
        if (!c.is_string()) throw std::invalid_argument("a column name is not a string");
        item.columns.push_back(one_line(c.get<std::string>(), 256));
      }
    }
    if (entry.contains("rows")) {
      if (!entry["rows"].is_array()) throw std::invalid_argument("\"rows\" is not an array");
      for (const auto& row : entry["rows"]) {
        if (!row.is_array() || row.size() != item.columns.size())
          throw std::invalid_argument("item '" + item.name + "': a row is not an array of " +
                                      std::to_string(item.columns.size()) + " numbers");
        for (const auto& v : row) {
          if (!v.is_number())
            throw std::invalid_argument("item '" + item.name + "': a value is not a number");
          item.values.push_back(v.get<double>());
        }
      }
    }
    figure.items.push_back(std::move(item));
  }
  check_figure(figure);
  return figure;
}

class ProcessInstance final : public ProblemInstance {
 public:
  explicit ProcessInstance(std::shared_ptr<WorkerPool> pool) : pool_(std::move(pool)) {}
  void evaluate(Batch& batch, std::size_t first, std::size_t count) override {
    pool_->evaluate(batch, first, count);
  }

 private:
  std::shared_ptr<WorkerPool> pool_;
};

class ProcessProblem final : public Problem {
 public:
  ProcessProblem(ProblemInfo info, std::shared_ptr<WorkerPool> pool)
      : info_(std::move(info)), pool_(std::move(pool)) {}
  const ProblemInfo& info() const override { return info_; }
  std::unique_ptr<ProblemInstance> make_instance() const override {
    return std::make_unique<ProcessInstance>(pool_);
  }
  std::vector<std::pair<std::string, std::uint64_t>> failure_counts() const override {
    return pool_->failure_counts();
  }

  std::optional<Figure> scene() const override {
    nlohmann::ordered_json message;
    message["scene"] = true;
    return figure("scene", message);
  }

  std::optional<Figure> trace(const std::vector<double>& genome) const override {
    nlohmann::ordered_json message;
    message["trace"] = genome;
    return figure("trace", message);
  }

 private:
  // The answer's member `key` is the figure; an "error" member is a failure; anything else
  // (no answer, another reply) means that the worker does not serve this message.
  std::optional<Figure> figure(const char* key, const nlohmann::ordered_json& message) const {
    const auto reply = pool_->ask(message);
    if (!reply || !reply->is_object()) return std::nullopt;
    const std::string where =
        "worker '" + info_.origin.substr(info_.origin.find(' ') + 1) + "': " + key;
    if (reply->contains(key)) {
      try {
        return figure_from_json((*reply)[key]);
      } catch (const std::invalid_argument& e) {
        throw std::runtime_error(where + " answer is malformed: " + e.what());
      }
    }
    if (reply->contains("error")) {
      const auto& text = (*reply)["error"];
      throw std::runtime_error(
          where + " failed: " + one_line(text.is_string() ? text.get<std::string>() : text.dump()));
    }
    return std::nullopt;
  }

  ProblemInfo info_;
  std::shared_ptr<WorkerPool> pool_;
};

}  // namespace

std::shared_ptr<Problem> open_process_problem(const ProblemSpec& spec) {
  const std::string where = spec.source.empty() ? "process problem" : spec.source;
  if (spec.command.empty() || spec.command[0].empty())
    throw InputError(where + ": [problem] command is empty");
  if (spec.workers < 1 || spec.workers > 1024)
    throw InputError(where + ": [problem] workers must be between 1 and 1024");
  if (!std::isfinite(spec.timeout_seconds) || !(spec.timeout_seconds > 0.0))
    throw InputError(where + ": [problem] timeout must be a positive number of seconds");
  ProblemInfo info = spec.declared;
  if (info.name.empty()) info.name = spec.name;
  if (info.origin.empty()) info.origin = "process: " + join_command(spec.command);
  try {
    check_problem_info(info);
  } catch (const std::invalid_argument& e) {
    throw InputError(where + ": " + e.what());
  }
  if (!info.extra_names.empty())
    throw InputError(where + ": a process problem has no extra figures");
  auto pool = std::make_shared<WorkerPool>(spec, info.genome_size(), info.descriptor_size());
  return std::make_shared<ProcessProblem>(std::move(info), std::move(pool));
}

}  // namespace tessera
