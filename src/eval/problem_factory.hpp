// Opens the problem a run file names: a plugin from the registry, or an external process.
#pragma once

#include <memory>

#include "problems/problem.hpp"
#include "problems/problem_spec.hpp"

namespace tessera {

std::shared_ptr<Problem> open_problem(const ProblemSpec& spec);

}  // namespace tessera
