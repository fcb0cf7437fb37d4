#include "eval/problem_factory.hpp"

#include "core/base/errors.hpp"
#include "eval/process_problem.hpp"
#include "problems/registry.hpp"

namespace tessera {

std::shared_ptr<Problem> open_problem(const ProblemSpec& spec) {
  if (spec.kind == "plugin") {
    try {
      return open_plugin_problem(spec.name, spec.options_toml);
    } catch (const InputError& e) {
      // The run file asked for it: name it first, then the plugin file and its fault.
      if (spec.source.empty()) throw;
      throw InputError(spec.source + ": " + e.what());
    }
  }
  if (spec.kind == "process") return open_process_problem(spec);
  throw InputError((spec.source.empty() ? std::string("[problem]") : spec.source) +
                   ": problem kind '" + spec.kind + "' is unknown (expected plugin or process)");
}

}  // namespace tessera
