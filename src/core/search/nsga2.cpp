#include "core/search/nsga2.hpp"

#include <algorithm>
#include <limits>
#include <numeric>
#include <stdexcept>

#include "core/select/front.hpp"

namespace tessera {

Nsga2Ranking nsga2_rank(std::span<const double> values, std::size_t objectives) {
  if (objectives == 0 || values.size() % objectives != 0)
    throw std::invalid_argument("nsga2: values do not form rows of the objectives");
  const std::size_t n = values.size() / objectives;
  Nsga2Ranking out;
  out.rank.assign(n, 0);
  out.crowding.assign(n, 0.0);
  const std::vector<Goal> goals(objectives, Goal::maximize);

  // Peel the fronts one after the other.
  std::vector<std::size_t> remaining(n);
  std::iota(remaining.begin(), remaining.end(), 0);
  std::vector<double> sub;
  for (std::size_t rank = 0; !remaining.empty(); ++rank) {
    sub.clear();
    for (std::size_t r : remaining)
      sub.insert(sub.end(), values.begin() + r * objectives, values.begin() + (r + 1) * objectives);
    const std::vector<std::size_t> front_local = non_dominated(sub, goals);
    std::vector<std::size_t> front;
    for (std::size_t i : front_local) front.push_back(remaining[i]);

    // Crowding distance: per objective, sort the front and credit each row with the normalised
    // gap between its neighbours; the extremes get infinity.
    for (std::size_t m = 0; m < objectives; ++m) {
      std::vector<std::size_t> order = front;
      std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) {
        return values[a * objectives + m] < values[b * objectives + m];
      });
      const double lo = values[order.front() * objectives + m];
      const double hi = values[order.back() * objectives + m];
      out.crowding[order.front()] = std::numeric_limits<double>::infinity();
      out.crowding[order.back()] = std::numeric_limits<double>::infinity();
      if (!(hi > lo)) continue;
      for (std::size_t i = 1; i + 1 < order.size(); ++i)
        out.crowding[order[i]] +=
            (values[order[i + 1] * objectives + m] - values[order[i - 1] * objectives + m]) /
            (hi - lo);
    }
    for (std::size_t r : front) out.rank[r] = rank;
    std::vector<std::size_t> rest;
    std::set_difference(remaining.begin(), remaining.end(), front.begin(), front.end(),
                        std::back_inserter(rest));
    remaining = std::move(rest);
  }
  return out;
}

std::vector<std::size_t> nsga2_survivors(const Nsga2Ranking& ranking, std::size_t count) {
  const std::size_t n = ranking.rank.size();
  std::vector<std::size_t> order(n);
  std::iota(order.begin(), order.end(), 0);
  std::stable_sort(order.begin(), order.end(),
                   [&](std::size_t a, std::size_t b) { return crowded_better(ranking, a, b); });
  order.resize(std::min(count, n));
  std::sort(order.begin(), order.end());
  return order;
}

}  // namespace tessera
