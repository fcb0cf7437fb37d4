#include "problems/problem.hpp"

#include <cmath>
#include <stdexcept>

namespace tessera {

void check_problem_info(const ProblemInfo& info) {
  const std::string who = "problem '" + info.name + "'";
  if (info.name.empty()) throw std::invalid_argument("problem without a name");
  check_bounds(info.genome, who + " genome bounds");
  check_bounds(info.descriptor, who + " descriptor bounds");
  if (info.descriptor_names.size() != info.descriptor.size())
    throw std::invalid_argument(who + ": descriptor names and bounds have different lengths");
  if (!std::isfinite(info.fitness_lower))
    throw std::invalid_argument(who + ": the lowest fitness must be finite (it is the QD offset)");
  if (!(info.fitness_upper > info.fitness_lower))
    throw std::invalid_argument(who + ": fitness upper bound must exceed the lower bound");
}

}  // namespace tessera
