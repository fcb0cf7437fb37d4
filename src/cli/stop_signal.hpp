// SIGINT/SIGTERM for the commands that write checkpoints (illuminate, resume, adapt, ...). The
// handler is installed first thing in main, so a signal at any instant is recorded rather than
// killing the process with nothing written. The first signal asks the run to stop after the
// batch in flight; a second one stops at once (the last checkpoint stays intact), except while
// a checkpoint is being written, which always completes.
#pragma once

namespace tessera::cli {

// True when `command` (argv[1]) is one that honours stop requests by checkpointing.
bool command_checkpoints(const char* command);

// Installs the handlers; idempotent, keeps a signal already recorded.
void install_stop_handlers();

// Blocks (true) or unblocks (false) SIGINT and SIGTERM for this thread and the threads it
// starts; a signal sent meanwhile is delivered when unblocked.
void hold_stop_signals(bool hold);

// The first stop signal received (SIGINT or SIGTERM), or 0.
int stop_signal();

// Exit code for a stop by `signal`: 130 for SIGINT, 143 for SIGTERM.
int stop_exit_code(int signal);

// While alive, a second signal waits for the write to finish instead of exiting at once, so no
// temporary file is left behind.
class CheckpointWriteGuard {
 public:
  CheckpointWriteGuard();
  ~CheckpointWriteGuard();
  CheckpointWriteGuard(const CheckpointWriteGuard&) = delete;
  CheckpointWriteGuard& operator=(const CheckpointWriteGuard&) = delete;
};

}  // namespace tessera::cli
