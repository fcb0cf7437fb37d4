#include "core/search.hpp"

namespace tessera {

void save_counters(const SearchCounters& counters, ResumeState& state) {
  state.counters["invalid"] = counters.invalid;
  state.counters["out_of_bounds"] = counters.out_of_bounds;
  state.counters["new_cells"] = counters.new_cells;
  state.counters["improvements"] = counters.improvements;
}

SearchCounters load_counters(const ResumeState& state, std::uint64_t evaluations) {
  SearchCounters c;
  c.evaluations = evaluations;
  auto get = [&](const char* key) {
    auto it = state.counters.find(key);
    return it == state.counters.end() ? std::uint64_t{0} : it->second;
  };
  c.invalid = get("invalid");
  c.out_of_bounds = get("out_of_bounds");
  c.new_cells = get("new_cells");
  c.improvements = get("improvements");
  return c;
}

}  // namespace tessera
