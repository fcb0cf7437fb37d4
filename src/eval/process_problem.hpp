// Problems evaluated by external worker processes (any language) over a JSON line protocol.
//
// Tessera keeps a pool of `workers` child processes started from the command line of the run
// file. Each request is one line on a worker's stdin, each answer one line on its stdout:
//   request  {"id": N, "genome": [g0, g1, ...]}
//   answer   {"id": N, "fitness": F, "descriptor": [d0, d1, ...]}   or   {"id": N, "error": "text"}
// Optional (docs/process-protocol.md), outside runs only: {"id": N, "scene": true} and
// {"id": N, "trace": [g0, ...]}, answered by {"id": N, "scene" | "trace": {"items": [...]}}; any
// other outcome means the worker does not serve them, and never counts as a failure.
// Answers may come in any order; a worker may hold a few requests at once. Numbers are written in
// the shortest form that reads back to the same double, so genomes reach the worker bit-exact.
//
// Faults never stop a run; each makes the affected evaluation invalid (valid = 0), is counted by
// reason (failure_counts) and is reported on tessera's stderr once per reason:
//   "crash"                    the worker exited or closed stdout: it is restarted and the requests
//                              it held are retried once, each alone on a worker, so an innocent
//                              request never pays for another's crash; a second crash fails it.
//   "timeout"                  a busy worker gave no answer for timeout_seconds: it is killed
//                              (SIGKILL) and restarted; its oldest request fails without retry
//                              (a hang usually repeats, and a retry would cost another timeout),
//                              the others are resent.
//   "malformed answer"         a line that is not a JSON object with an integer id
//   "unknown id"               an answer whose id the worker does not hold
//   "not finite"               a NaN or infinite fitness or descriptor value
//   "wrong descriptor length"  a descriptor without exactly D numbers
//   "worker error"             an {"error": ...} answer
// A line that cannot be matched to a request it holds is charged to the worker's oldest request,
// since the protocol gives one line per request. The timeout clock of a worker runs while it
// holds requests and restarts at each answer, so a freshly started worker's first answer must
// also cover its start-up. Workers' stderr is appended to log_path; they run in their own
// process group, with the user's rights, and are ended (stdin closed, then SIGKILL) when the
// problem is destroyed.
#pragma once

#include <memory>

#include "problems/problem.hpp"
#include "problems/problem_spec.hpp"

namespace tessera {

// Starts the worker processes of a kind = "process" problem. Throws InputError naming
// spec.source when the description is inconsistent or a worker cannot be started.
// The pool is shared by all instances and safe to use from any number of threads.
std::shared_ptr<Problem> open_process_problem(const ProblemSpec& spec);

}  // namespace tessera
