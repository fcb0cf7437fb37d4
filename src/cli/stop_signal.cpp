#include "cli/stop_signal.hpp"

#include <pthread.h>
#include <unistd.h>

#include <csignal>
#include <cstdlib>
#include <cstring>
#include <initializer_list>

namespace tessera::cli {
namespace {

volatile std::sig_atomic_t g_stop_signal = 0;
volatile std::sig_atomic_t g_writing = 0;
volatile std::sig_atomic_t g_exit_pending = 0;  // a second signal arrived during a write
volatile std::sig_atomic_t g_announce = 0;      // stderr is a terminal: say what happens

void say(const char* text) {
  (void)!::write(STDERR_FILENO, text, std::strlen(text));
}

void on_stop_signal(int signal) {
  if (g_stop_signal == 0) {
    g_stop_signal = signal;
    if (g_announce)
      say("\ntessera: stopping after the batch in flight (send the signal again to stop at "
          "once)\n");
    return;
  }
  if (g_writing) {
    g_exit_pending = 1;
    return;
  }
  say("tessera: stopped at once; the last checkpoint is intact\n");
  std::_Exit(stop_exit_code(g_stop_signal));
}

}  // namespace

bool command_checkpoints(const char* command) {
  if (command == nullptr) return false;
  for (const char* name : {"illuminate", "resume", "adapt", "study"})
    if (std::strcmp(command, name) == 0) return true;
  return false;
}

void install_stop_handlers() {
  g_announce = ::isatty(STDERR_FILENO) ? 1 : 0;
  struct sigaction stop {};
  stop.sa_handler = on_stop_signal;
  sigemptyset(&stop.sa_mask);
  sigaction(SIGINT, &stop, nullptr);
  sigaction(SIGTERM, &stop, nullptr);
}

void hold_stop_signals(bool hold) {
  sigset_t set;
  sigemptyset(&set);
  sigaddset(&set, SIGINT);
  sigaddset(&set, SIGTERM);
  pthread_sigmask(hold ? SIG_BLOCK : SIG_UNBLOCK, &set, nullptr);
}

int stop_signal() {
  return g_stop_signal;
}

int stop_exit_code(int signal) {
  return signal == SIGTERM ? 143 : 130;
}

CheckpointWriteGuard::CheckpointWriteGuard() {
  g_writing = 1;
}

CheckpointWriteGuard::~CheckpointWriteGuard() {
  g_writing = 0;
  if (g_exit_pending) {
    say("tessera: stopped at once after the checkpoint write\n");
    std::_Exit(stop_exit_code(g_stop_signal));
  }
}

}  // namespace tessera::cli
