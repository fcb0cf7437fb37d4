#include "core/select/front.hpp"

#include <algorithm>
#include <limits>
#include <numeric>
#include <stdexcept>

namespace tessera {
namespace {

// Values turned so that larger is better on every objective.
std::vector<double> as_maximized(std::span<const double> values, std::span<const Goal> goals) {
  std::vector<double> out(values.begin(), values.end());
  const std::size_t m = goals.size();
  for (std::size_t i = 0; i < out.size(); ++i)
    if (goals[i % m] == Goal::minimize) out[i] = -out[i];
  return out;
}

std::vector<std::size_t> front_of_two(const std::vector<double>& v, std::size_t n) {
  std::vector<std::size_t> order(n);
  std::iota(order.begin(), order.end(), std::size_t{0});
  // Best first on objective 1, then on objective 2.
  std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) {
    if (v[2 * a] != v[2 * b]) return v[2 * a] > v[2 * b];
    return v[2 * a + 1] > v[2 * b + 1];
  });
  std::vector<std::size_t> front;
  // best_before: the best objective 2 among rows strictly better on objective 1.
  double best_before = -std::numeric_limits<double>::infinity();
  for (std::size_t g = 0; g < n;) {
    // A group of rows equal on objective 1; its first row has the group's best objective 2.
    std::size_t end = g;
    while (end < n && v[2 * order[end]] == v[2 * order[g]]) ++end;
    const double top = v[2 * order[g] + 1];
    // A row is on the front when nothing in its group beats it on objective 2 and nothing better
    // on objective 1 is at least as good on objective 2.
    if (top > best_before)
      for (std::size_t i = g; i < end && v[2 * order[i] + 1] == top; ++i) front.push_back(order[i]);
    best_before = std::max(best_before, top);
    g = end;
  }
  std::sort(front.begin(), front.end());
  return front;
}

bool dominates(const double* a, const double* b, std::size_t m) {
  bool strictly = false;
  for (std::size_t j = 0; j < m; ++j) {
    if (a[j] < b[j]) return false;
    if (a[j] > b[j]) strictly = true;
  }
  return strictly;
}

std::vector<std::size_t> front_of_many(const std::vector<double>& v, std::size_t n, std::size_t m) {
  std::vector<std::size_t> order(n);
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) {
    return std::lexicographical_compare(v.begin() + b * m, v.begin() + (b + 1) * m,
                                        v.begin() + a * m, v.begin() + (a + 1) * m);
  });
  // A dominating row is lexicographically greater, so it comes earlier; and if a dominated row
  // dominates r, the row that dominates it dominates r too and is already on the front.
  std::vector<std::size_t> front;
  for (std::size_t r : order) {
    bool dominated = false;
    for (std::size_t f : front)
      if (dominates(&v[f * m], &v[r * m], m)) {
        dominated = true;
        break;
      }
    if (!dominated) front.push_back(r);
  }
  std::sort(front.begin(), front.end());
  return front;
}

}  // namespace

std::vector<std::size_t> non_dominated(std::span<const double> values,
                                       std::span<const Goal> goals) {
  const std::size_t m = goals.size();
  if (m == 0 || values.size() % m != 0)
    throw std::invalid_argument("front: values do not form rows of the objectives");
  const std::size_t n = values.size() / m;
  const std::vector<double> v = as_maximized(values, goals);
  if (m == 1) {
    std::vector<std::size_t> best;
    for (std::size_t i = 0; i < n; ++i) {
      if (!best.empty() && v[i] < v[best.front()]) continue;
      if (!best.empty() && v[i] > v[best.front()]) best.clear();
      best.push_back(i);
    }
    return best;
  }
  return m == 2 ? front_of_two(v, n) : front_of_many(v, n, m);
}

double objective_value(const ArchiveSnapshot& s, std::size_t elite, const Objective& o) {
  if (o.fitness) return s.fitness[elite];
  if (o.extra) return s.extra(elite, o.dimension);
  return s.descriptor[elite * s.descriptor_size() + o.dimension];
}

std::vector<std::size_t> elite_front(const ArchiveSnapshot& s, std::span<const std::size_t> rows,
                                     std::span<const Objective> objectives) {
  const std::size_t m = objectives.size();
  std::vector<double> values(rows.size() * m);
  std::vector<Goal> goals(m);
  for (std::size_t j = 0; j < m; ++j) goals[j] = objectives[j].goal;
  for (std::size_t r = 0; r < rows.size(); ++r)
    for (std::size_t j = 0; j < m; ++j)
      values[r * m + j] = objective_value(s, rows[r], objectives[j]);
  std::vector<std::size_t> front;
  for (std::size_t r : non_dominated(values, goals)) front.push_back(rows[r]);
  // Best-first on each objective in turn, then by row.
  const auto key = [&](std::size_t elite, std::size_t j) {
    const double x = objective_value(s, elite, objectives[j]);
    return objectives[j].goal == Goal::maximize ? -x : x;
  };
  std::sort(front.begin(), front.end(), [&](std::size_t a, std::size_t b) {
    for (std::size_t j = 0; j < m; ++j) {
      const double ka = key(a, j), kb = key(b, j);
      if (ka != kb) return ka < kb;
    }
    return a < b;
  });
  return front;
}

}  // namespace tessera
