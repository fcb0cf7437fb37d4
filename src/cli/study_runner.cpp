#include "cli/study_runner.hpp"

#include <fcntl.h>
#include <sys/prctl.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <csignal>
#include <cstdio>
#include <cstring>
#include <fstream>
#include <map>
#include <thread>

#include "cli/format.hpp"

extern char** environ;

namespace tessera::cli {
namespace {

namespace fs = std::filesystem;

volatile std::sig_atomic_t g_study_stop = 0;
volatile std::sig_atomic_t g_stop_requests = 0;  // each is passed on: a second one stops at once

void on_study_stop(int signal) {
  g_study_stop = signal;
  g_stop_requests = g_stop_requests + 1;
}

enum class State { pending, running, done, failed };

// The last non-empty line of a run's log: why it failed, in its own words.
std::string last_line(const fs::path& log) {
  std::ifstream in(log);
  std::string line, last;
  while (std::getline(in, line))
    if (!line.empty()) last = line;
  return last.empty() ? "(no message)" : last;
}

void write_marker(const fs::path& path, const std::string& text) {
  std::ofstream out(path, std::ios::trunc);
  out << text << "\n";
}

// Child: its own process group, dies with the study, its own log, no terminal input, no MPI
// environment (a run is a plain single process), then exec.
[[noreturn]] void exec_child(const std::string& exe, const std::vector<std::string>& args,
                             const fs::path& log, pid_t study) {
  // Ctrl-C signals the terminal's whole process group: a run outside it gets the stop request
  // once, from the study, and checkpoints; a second request would stop it at once.
  ::setpgid(0, 0);
  // A study killed outright cannot stop its runs; the kernel does, so that no run goes on
  // writing into a folder the next call continues. Runs resume from their last checkpoint.
  ::prctl(PR_SET_PDEATHSIG, SIGKILL);
  if (::getppid() != study) std::_Exit(128 + SIGKILL);  // the study died before the prctl
  const int fd = ::open(log.c_str(), O_WRONLY | O_CREAT | O_APPEND, 0644);
  if (fd >= 0) {
    ::dup2(fd, STDOUT_FILENO);
    ::dup2(fd, STDERR_FILENO);
    ::close(fd);
  }
  // Outside the terminal's foreground group, reading it would stop the run (SIGTTIN).
  const int none = ::open("/dev/null", O_RDONLY);
  if (none >= 0) {
    ::dup2(none, STDIN_FILENO);
    ::close(none);
  }
  std::vector<std::string> drop;
  for (char** e = environ; *e; ++e) {
    const std::string var(*e);
    for (const char* prefix : {"OMPI_", "PMIX_", "PMI_", "SLURM_PROCID"})
      if (var.rfind(prefix, 0) == 0) drop.push_back(var.substr(0, var.find('=')));
  }
  for (const auto& name : drop) ::unsetenv(name.c_str());
  std::vector<char*> argv;
  argv.push_back(const_cast<char*>(exe.c_str()));
  for (const auto& a : args) argv.push_back(const_cast<char*>(a.c_str()));
  argv.push_back(nullptr);
  // /proc/self/exe: the very binary of the study, even if the file was replaced meanwhile.
  ::execv("/proc/self/exe", argv.data());
  std::fprintf(stderr, "tessera: cannot start %s: %s\n", exe.c_str(), std::strerror(errno));
  std::_Exit(127);
}

class StudyProgress {
 public:
  StudyProgress(bool enabled, std::size_t total) : enabled_(enabled), total_(total) {}
  void update(std::size_t done, std::size_t running, std::size_t failed, std::size_t done_here,
              double elapsed, bool force) {
    if (!enabled_ || (!force && elapsed - last_ < 0.5)) return;
    last_ = elapsed;
    const std::size_t left_runs = total_ - done - failed;
    std::string left = "?";
    if (done_here > 0)
      left = duration(elapsed / static_cast<double>(done_here) * static_cast<double>(left_runs));
    std::string line = "  study: " + std::to_string(done) + "/" + std::to_string(total_) +
                       " runs done, " + std::to_string(running) + " running";
    if (failed > 0) line += ", " + std::to_string(failed) + " failed";
    line += "  left " + (left_runs == 0 ? std::string("0s") : left);
    std::fprintf(stderr, "\r%-80s", line.c_str());
    std::fflush(stderr);
    shown_ = true;
  }
  void finish() {
    if (shown_) std::fprintf(stderr, "\n");
    shown_ = false;
  }
  // A line of its own, above the progress line.
  void say(const std::string& text) {
    if (shown_) std::fprintf(stderr, "\r%-80s\r", "");
    std::fprintf(stderr, "%s\n", text.c_str());
    last_ = -1.0;
  }

 private:
  bool enabled_;
  std::size_t total_;
  double last_ = -1.0;
  bool shown_ = false;
};

}  // namespace

RunnerResult run_jobs(const StudyPlan& plan, const std::vector<std::size_t>& selected,
                      const RunnerOptions& options) {
  RunnerResult result;
  const std::string exe = fs::read_symlink("/proc/self/exe").string();
  std::map<std::size_t, State> state;
  for (std::size_t j : selected) {
    state[j] = plan.jobs[j].done() ? State::done : State::pending;
    if (state[j] == State::done) ++result.skipped;
  }
  struct sigaction stop {};
  stop.sa_handler = on_study_stop;
  sigemptyset(&stop.sa_mask);
  sigaddset(&stop.sa_mask, SIGINT);  // one handler at a time: no request is lost
  sigaddset(&stop.sa_mask, SIGTERM);
  struct sigaction old_int {
  }, old_term{};
  sigaction(SIGINT, &stop, &old_int);
  sigaction(SIGTERM, &stop, &old_term);

  const bool tty = ::isatty(STDERR_FILENO) != 0;
  StudyProgress progress(!options.quiet && tty, selected.size());
  std::map<pid_t, std::size_t> running;
  std::size_t done = result.skipped, failed = 0;
  std::sig_atomic_t forwarded = 0;  // stop requests passed on to the runs already started
  const auto start = std::chrono::steady_clock::now();
  auto elapsed = [&] {
    return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  };
  auto fail = [&](std::size_t j, const std::string& why) {
    state[j] = State::failed;
    ++failed;
    const std::string line = plan.jobs[j].name + ": " + why;
    result.failures.push_back(line);
    std::error_code ec;
    fs::create_directories(plan.jobs[j].dir, ec);
    write_marker(plan.jobs[j].failed_marker(), why);
    progress.say("tessera: run failed: " + line);
  };
  // What a need says for job j: ready, wait, or the reason j cannot run.
  auto need_status = [&](std::size_t need, std::string& why) {
    const auto it = state.find(need);
    if (it != state.end()) {
      if (it->second == State::done) return 1;
      if (it->second == State::failed) {
        why = "needs run '" + plan.jobs[need].name + "', which failed";
        return -1;
      }
      return 0;
    }
    if (plan.jobs[need].done()) return 1;
    std::error_code ec;
    if (options.wait_for_others && !fs::exists(plan.jobs[need].failed_marker(), ec)) return 0;
    why = "needs run '" + plan.jobs[need].name + "', which is not finished (run it first)";
    return -1;
  };

  while (true) {
    if (g_study_stop == 0) {
      for (std::size_t j : selected) {
        if (running.size() >= options.jobs) break;
        if (state[j] != State::pending) continue;
        const StudyJob& job = plan.jobs[j];
        int ready = 1;
        std::string why;
        for (std::size_t need : job.needs) ready = std::min(ready, need_status(need, why));
        if (ready < 0) fail(j, why);
        if (ready != 1) continue;
        std::error_code ec;
        fs::create_directories(job.dir, ec);
        if (ec) {
          fail(j, "cannot create " + job.dir.string() + ": " + ec.message());
          continue;
        }
        fs::remove(job.failed_marker(), ec);
        std::vector<std::string> args;
        if (fs::exists(job.archive(), ec)) {
          args = {"resume", job.archive().string()};  // continues from its checkpoint
        } else {
          try {
            args = job.fresh_args();
          } catch (const std::exception& e) {
            fail(j, e.what());
            continue;
          }
        }
        args.insert(args.end(), {"--threads", std::to_string(options.threads), "--quiet"});
        const pid_t study = ::getpid();
        const pid_t pid = ::fork();
        if (pid == 0) exec_child(exe, args, job.dir / "log.txt", study);
        if (pid > 0) ::setpgid(pid, pid);  // also here: no signal may find it in the old group
        if (pid < 0) {
          fail(j, std::string("cannot start a process: ") + std::strerror(errno));
          continue;
        }
        state[j] = State::running;
        running[pid] = j;
      }
    }
    bool pending_left = false;
    for (std::size_t j : selected) pending_left = pending_left || state[j] == State::pending;
    if (running.empty() && (!pending_left || g_study_stop != 0)) break;
    progress.update(done, running.size(), failed, result.finished, elapsed(), false);

    int status = 0;
    const pid_t pid = ::waitpid(-1, &status, WNOHANG);
    if (pid <= 0) {
      for (; forwarded < g_stop_requests; ++forwarded)
        for (const auto& [child, j] : running) ::kill(child, g_study_stop);
      std::this_thread::sleep_for(std::chrono::milliseconds(100));
      continue;
    }
    const auto it = running.find(pid);
    if (it == running.end()) continue;
    const std::size_t j = it->second;
    running.erase(it);
    const StudyJob& job = plan.jobs[j];
    const int code = WIFEXITED(status) ? WEXITSTATUS(status) : 128 + WTERMSIG(status);
    if (code == 0) {
      write_marker(job.done_marker(), "finished");
      state[j] = State::done;
      ++done;
      ++result.finished;
      if (!tty && !options.quiet)
        progress.say("tessera: run done: " + job.name + " (" + std::to_string(done) + "/" +
                     std::to_string(selected.size()) + ")");
    } else if ((code == 130 || code == 143) && g_study_stop != 0) {
      state[j] = State::pending;  // checkpointed; the next call resumes it
    } else {
      fail(j, "exit code " + std::to_string(code) + ": " + last_line(job.dir / "log.txt") +
                  " (log: " + (job.dir / "log.txt").string() + ")");
    }
  }
  progress.update(done, 0, failed, result.finished, elapsed(), true);
  progress.finish();
  sigaction(SIGINT, &old_int, nullptr);
  sigaction(SIGTERM, &old_term, nullptr);
  result.stop_signal = g_study_stop;
  return result;
}

}  // namespace tessera::cli
