// Reading one line a process worker wrote on its stdout (docs/process-protocol.md): first as an
// answer object with an integer id, then, for an evaluation request, as its fitness and
// descriptor. Pure functions of the bytes, so that they can be fuzzed and tested without
// workers; the pool (eval/process_problem.cpp) decides what each outcome does to its requests.
#pragma once

#include <cstddef>
#include <cstdint>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <string_view>

namespace tessera {

// Worker text (error messages, garbage lines) shown on one line of tessera's stderr: control
// characters become spaces, text past `limit` bytes becomes "...".
std::string one_line(std::string_view text, std::size_t limit = 160);

// A worker line in single quotes, made one line, for messages.
std::string quoted(std::string_view text);

struct WorkerLine {
  enum class Kind {
    blank,      // only spaces and tabs: ignored
    malformed,  // not a JSON object with an integer id
    answer,     // an object with an integer id
  };
  Kind kind = Kind::blank;
  std::string_view text;  // the line without a trailing carriage return (a view of the input)
  std::int64_t id = 0;
  nlohmann::json object;
  // The line used Python's NaN / Infinity spelling, read as null.
  bool non_finite_token = false;
};

// Reads a line (without its newline). Never throws on any input.
WorkerLine read_worker_line(std::string_view line);

// Why an answer gives no valid evaluation: a failure reason of the protocol ("worker error",
// "malformed answer", "wrong descriptor length", "not finite", "wrong genome digest") and the
// detail shown with it.
struct AnswerFault {
  std::string reason;
  std::string detail;
};

// Reads the results of an evaluation answer for the genome sent under its id. On success stores
// the fitness and the descriptor_size descriptor values and returns std::nullopt; on a fault the
// descriptor may be partly written and the caller discards it. Never throws on any answer.
std::optional<AnswerFault> read_evaluation(const WorkerLine& answer, const double* genome,
                                           std::size_t genome_size, std::size_t descriptor_size,
                                           double& fitness, double* descriptor);

}  // namespace tessera
