// The [problem] section of a run file, parsed: which problem to open and how.
#pragma once

#include <cstddef>
#include <string>
#include <vector>

#include "problems/problem.hpp"

namespace tessera {

struct ProblemSpec {
  std::string kind = "plugin";   // "plugin" | "process"
  std::string name;              // plugin: the problem name; process: a label for the archive
  std::string options_toml;      // [problem.options] serialised as TOML (plugin only)
  std::string source;            // run file path, for error messages

  // kind = "process": an external evaluator speaking the JSON line protocol.
  std::vector<std::string> command;   // argv of the worker
  std::size_t workers = 1;
  double timeout_seconds = 60.0;      // per evaluation
  ProblemInfo declared;               // bounds, names and fitness range from the run file
  std::string log_path;               // workers' stderr; set by the command from the output dir
};

}  // namespace tessera
