#include "io/snapshot_check.hpp"

#include <toml++/toml.h>

#include <algorithm>
#include <bit>
#include <cmath>
#include <cstdint>
#include <memory>
#include <numeric>
#include <stdexcept>
#include <string>
#include <vector>

#include "core/archive/cvt.hpp"
#include "core/archive/space.hpp"
#include "core/base/finite.hpp"

namespace tessera {
namespace {

std::string str(std::uint64_t n) {
  return std::to_string(n);
}

std::string describe(double v) {
  if (std::isnan(v)) return "NaN";
  return v > 0 ? "+inf" : "-inf";
}

std::optional<std::string> first_non_finite(const std::vector<double>& values,
                                            const std::string& name, std::size_t columns = 0) {
  constexpr std::size_t kBlock = 4096;
  std::size_t clean = 0;  // values before this index are known finite
  while (clean < values.size() &&
         all_finite({values.data() + clean, std::min(values.size(), clean + kBlock) - clean}))
    clean = std::min(values.size(), clean + kBlock);
  for (std::size_t i = clean; i < values.size(); ++i) {
    if (std::isfinite(values[i])) continue;
    // Built by appending: GCC 12 reports a false -Wrestrict on "[" + std::string.
    std::string out = name;
    out += '[';
    out += columns == 0 ? str(i) : str(i / columns);
    if (columns != 0) out.append(", ").append(str(i % columns));
    out.append("] is ").append(describe(values[i]));
    return out;
  }
  return std::nullopt;
}

std::optional<std::string> bounds_fault(const Bounds& b, const std::string& group) {
  if (b.lower.size() != b.upper.size())
    return group + "/lower has " + str(b.lower.size()) + " entries but " + group + "/upper has " +
           str(b.upper.size());
  if (b.lower.empty()) return group + "/lower is empty";
  if (auto f = first_non_finite(b.lower, group + "/lower")) return f;
  if (auto f = first_non_finite(b.upper, group + "/upper")) return f;
  for (std::size_t i = 0; i < b.size(); ++i)
    if (!(b.lower[i] < b.upper[i])) return group + ": lower >= upper in dimension " + str(i);
  return std::nullopt;
}

}  // namespace

std::optional<std::string> space_fault(const ArchiveSnapshot& s) {
  const std::size_t d = s.descriptor_size();
  if (d > kMaxDescriptorSize)
    return "/space has more than " + str(kMaxDescriptorSize) + " dimensions";
  if (auto f = bounds_fault(s.descriptor_bounds, "/space")) return f;
  if (s.descriptor_names.size() != d)
    return "/space/names has " + str(s.descriptor_names.size()) + " entries but /space/lower has " +
           str(d);
  if (s.space_kind == "grid") {
    if (s.resolution.size() != d)
      return "/space/resolution has " + str(s.resolution.size()) +
             " entries but /space/lower has " + str(d);
    std::int64_t cells = 1;
    for (std::size_t i = 0; i < d; ++i) {
      const std::int64_t r = s.resolution[i];
      if (r < 1) return "/space/resolution[" + str(i) + "] is " + std::to_string(r) + " (below 1)";
      if (cells > kMaxCells / r) return "/space/resolution asks for more than 2^28 cells";
      cells *= r;
    }
  } else if (s.space_kind == "cvt") {
    if (s.centroids.empty()) return "/space/centroids is empty";
    if (s.centroids.size() % d != 0)
      return "/space/centroids does not have " + str(d) + " columns (one per descriptor dimension)";
    if (s.centroids.size() / d > static_cast<std::uint64_t>(kMaxCells))
      return "/space/centroids has more than 2^28 rows";
    if (auto f = first_non_finite(s.centroids, "/space/centroids", d)) return f;
  } else if (s.space_kind != "unstructured") {
    return "/space kind \"" + s.space_kind + "\" is not grid, cvt or unstructured";
  }
  return std::nullopt;
}

namespace {

std::optional<std::string> elites_fault(const ArchiveSnapshot& s) {
  const std::size_t n = s.elite_count();
  const std::size_t g = s.genome_size();
  const std::size_t d = s.descriptor_size();
  if (s.cell.size() != n)
    return "/elites/cell has " + str(s.cell.size()) + " rows but /elites/fitness has " + str(n);
  if (s.birth.size() != n)
    return "/elites/birth has " + str(s.birth.size()) + " rows but /elites/fitness has " + str(n);
  if (s.genome.size() != n * g)
    return "/elites/genome holds " + str(s.genome.size()) + " values, not " + str(n) + " x " +
           str(g) + " (elites x /genome/lower)";
  if (s.descriptor.size() != n * d)
    return "/elites/descriptor holds " + str(s.descriptor.size()) + " values, not " + str(n) +
           " x " + str(d) + " (elites x /space/lower)";
  const std::size_t e = s.extra_size();
  if (e > kMaxExtraSize)
    return "/elites/extra_names has more than " + str(kMaxExtraSize) + " names";
  if (s.extras.size() != n * e)
    return "/elites/extras holds " + str(s.extras.size()) + " values, not " + str(n) + " x " +
           str(e) + " (elites x /elites/extra_names)";
  if (auto f = first_non_finite(s.fitness, "/elites/fitness")) return f;
  if (auto f = first_non_finite(s.genome, "/elites/genome", g)) return f;
  if (auto f = first_non_finite(s.descriptor, "/elites/descriptor", d)) return f;

  const std::int64_t cells = s.cell_count();
  if (static_cast<std::uint64_t>(n) > static_cast<std::uint64_t>(cells))
    return str(n) + " elites for " + std::to_string(cells) + " cells";
  std::vector<bool> taken(static_cast<std::size_t>(cells), false);
  for (std::size_t i = 0; i < n; ++i) {
    const std::int64_t c = s.cell[i];
    if (c < 0 || c >= cells)
      return "/elites/cell[" + str(i) + "] = " + std::to_string(c) + " is outside 0.." +
             std::to_string(cells - 1);
    if (taken[static_cast<std::size_t>(c)])
      return "/elites/cell[" + str(i) + "] = " + std::to_string(c) + " is a duplicated cell";
    taken[static_cast<std::size_t>(c)] = true;
  }
  return std::nullopt;
}

std::optional<std::string> novelty_archive_fault(const ArchiveSnapshot& s) {
  if (!s.novelty_archive) return std::nullopt;
  const BehaviourRows& b = *s.novelty_archive;
  const std::size_t m = b.size();
  const std::size_t g = s.genome_size();
  const std::size_t d = s.descriptor_size();
  if (b.birth.size() != m)
    return "/novelty_archive/birth has " + str(b.birth.size()) +
           " rows but /novelty_archive/fitness has " + str(m);
  if (b.genome.size() != m * g)
    return "/novelty_archive/genome holds " + str(b.genome.size()) + " values, not " + str(m) +
           " x " + str(g);
  if (b.descriptor.size() != m * d)
    return "/novelty_archive/descriptor holds " + str(b.descriptor.size()) + " values, not " +
           str(m) + " x " + str(d);
  if (auto f = first_non_finite(b.fitness, "/novelty_archive/fitness")) return f;
  if (auto f = first_non_finite(b.genome, "/novelty_archive/genome", g)) return f;
  if (auto f = first_non_finite(b.descriptor, "/novelty_archive/descriptor", d)) return f;
  return std::nullopt;
}

std::optional<std::string> history_fault(const ArchiveSnapshot& s) {
  if (!std::isfinite(s.fitness_floor))
    return "/history fitness_floor is " + describe(s.fitness_floor);
  for (std::size_t t = 0; t < s.history.size(); ++t) {
    const HistoryRow& row = s.history[t];
    std::string at = "[";
    at.append(str(t)).append("]");
    if (!std::isfinite(row.coverage))
      return "/history/coverage" + at + " is " + describe(row.coverage);
    if (!std::isfinite(row.qd_score))
      return "/history/qd_score" + at + " is " + describe(row.qd_score);
    // -inf is the maximum of no elites at all (EliteArchive::max_fitness), so it is allowed
    // exactly while the archive is empty.
    const bool empty_max = row.max_fitness == -INFINITY && row.coverage == 0.0;
    if (!std::isfinite(row.max_fitness) && !empty_max)
      return "/history/max_fitness" + at + " is " + describe(row.max_fitness);
  }
  return std::nullopt;
}

// Every centroid inside the descriptor box and no two alike: Lloyd centroids are means of
// samples of the box, and two equal centroids would make one cell unreachable.
std::optional<std::string> centroids_fault(const ArchiveSnapshot& s) {
  const std::size_t d = s.descriptor_size();
  const std::size_t k = s.centroids.size() / d;
  for (std::size_t i = 0; i < k; ++i)
    for (std::size_t j = 0; j < d; ++j) {
      const double v = s.centroids[i * d + j];
      if (v < s.descriptor_bounds.lower[j] || v > s.descriptor_bounds.upper[j])
        return "/space/centroids[" + str(i) + ", " + str(j) + "] lies outside /space bounds";
    }
  std::vector<std::size_t> order(k);
  std::iota(order.begin(), order.end(), std::size_t{0});
  const double* c = s.centroids.data();
  auto row_less = [&](std::size_t a, std::size_t b) {
    return std::lexicographical_compare(c + a * d, c + a * d + d, c + b * d, c + b * d + d);
  };
  std::sort(order.begin(), order.end(), row_less);
  for (std::size_t i = 1; i < k; ++i)
    if (std::equal(c + order[i - 1] * d, c + order[i - 1] * d + d, c + order[i] * d))
      return "/space/centroids rows " + str(std::min(order[i - 1], order[i])) + " and " +
             str(std::max(order[i - 1], order[i])) + " are the same point";
  return std::nullopt;
}

// Each elite's genome within /genome bounds (children are clipped to them) and its descriptor
// within the space and mapped to the elite's own cell (descriptors are stored clamped).
std::optional<std::string> placement_fault(const ArchiveSnapshot& s) {
  const std::size_t n = s.elite_count();
  const std::size_t g = s.genome_size();
  const std::size_t d = s.descriptor_size();
  const double* lower = s.genome_bounds.lower.data();
  const double* upper = s.genome_bounds.upper.data();
  for (std::size_t i = 0; i < n; ++i) {
    const double* row = s.genome.data() + i * g;
    // Branch-free over the row, so that it vectorises (see all_finite): a value below its lower
    // bound makes value - lower negative, one above its upper bound upper - value (a difference of
    // two distinct doubles is never zero). Only a row with a sign bit set is searched; a NaN may
    // set one without being outside, and then the search finds nothing.
    std::uint64_t outside = 0;
    for (std::size_t j = 0; j < g; ++j)
      outside |= (std::bit_cast<std::uint64_t>(row[j] - lower[j]) |
                  std::bit_cast<std::uint64_t>(upper[j] - row[j])) >>
                 63;
    if (outside == 0) continue;
    for (std::size_t j = 0; j < g; ++j)
      if (row[j] < lower[j] || row[j] > upper[j])
        return "/elites/genome[" + str(i) + ", " + str(j) + "] lies outside /genome bounds";
  }
  if (s.space_kind != "grid" && s.space_kind != "cvt") return std::nullopt;
  std::unique_ptr<DescriptorSpace> space;
  try {
    if (s.space_kind == "grid")
      space = std::make_unique<GridSpace>(s.descriptor_bounds, s.descriptor_names, s.resolution);
    else
      space = std::make_unique<CvtSpace>(s.descriptor_bounds, s.descriptor_names, s.centroids);
  } catch (const std::exception& e) {
    return std::string("/space: ") + e.what();
  }
  for (std::size_t i = 0; i < n; ++i) {
    const std::span<const double> x(s.descriptor.data() + i * d, d);
    for (std::size_t j = 0; j < d; ++j)
      if (x[j] < s.descriptor_bounds.lower[j] || x[j] > s.descriptor_bounds.upper[j])
        return "/elites/descriptor[" + str(i) + ", " + str(j) + "] lies outside /space bounds";
    const std::int64_t cell = space->cell_of(x).cell;
    if (cell != s.cell[i])
      return "/elites/descriptor[" + str(i) + "] lies in cell " + std::to_string(cell) +
             ", not in its cell " + std::to_string(s.cell[i]);
  }
  return std::nullopt;
}

// /history and /resume tell the same story: evaluations only grow, the last row is the root
// evaluations, a counter of candidates never exceeds them, and every batch left one row (a
// batch cut by the budget leaves its row before the batch index moves on).
std::optional<std::string> progress_fault(const ArchiveSnapshot& s) {
  for (std::size_t t = 1; t < s.history.size(); ++t)
    if (s.history[t].evaluations <= s.history[t - 1].evaluations)
      return "/history/evaluations[" + str(t) + "] does not exceed the row before";
  if (!s.history.empty() && s.history.back().evaluations != s.evaluations)
    return "/history ends at " + str(s.history.back().evaluations) +
           " evaluations but the archive says " + str(s.evaluations);
  if (!s.resume) return std::nullopt;
  const ResumeState& r = *s.resume;
  for (const auto& [name, value] : r.counters) {
    const bool counts_candidates = name == "invalid" || name == "out_of_bounds" ||
                                   name == "new_cells" || name == "improvements" ||
                                   name.rfind("failed:", 0) == 0;
    if (counts_candidates && value > s.evaluations)
      return "/resume/counters " + name + " = " + str(value) + " exceeds the " +
             str(s.evaluations) + " evaluations";
  }
  const std::uint64_t rows = s.history.size();
  if (r.next_batch > rows || r.next_batch + 1 < rows)
    return "/resume next_batch = " + str(r.next_batch) + " does not fit the " + str(rows) +
           " rows of /history";
  return std::nullopt;
}

// The stored run file's [space] must describe /space (a grid's resolution, a CVT's cell count);
// resume rebuilds the search from both.
std::optional<std::string> config_fault(const ArchiveSnapshot& s) {
  if (s.space_kind != "grid" && s.space_kind != "cvt") return std::nullopt;
  toml::table config;
  try {
    config = toml::parse(s.config);
  } catch (const toml::parse_error&) {
    return std::nullopt;  // commands that need the run file say so when they parse it
  }
  const toml::table* space = config["space"].as_table();
  if (!space) return std::nullopt;
  const std::string kind = (*space)["kind"].value_or(std::string("grid"));
  if (kind != s.space_kind)
    return "the stored run file has space.kind \"" + kind + "\" but /space is a " + s.space_kind;
  const std::size_t d = s.descriptor_size();
  if (kind == "grid") {
    std::vector<std::int64_t> resolution;
    if (const auto* array = (*space)["resolution"].as_array()) {
      for (const auto& e : *array) resolution.push_back(e.value<std::int64_t>().value_or(0));
    } else if (auto one = (*space)["resolution"].value<std::int64_t>()) {
      resolution.push_back(*one);
    }
    if (resolution.size() == 1 && d > 1) resolution.assign(d, resolution[0]);
    if (!resolution.empty() && resolution != s.resolution)
      return "the stored run file's space.resolution differs from /space/resolution";
  } else if (auto cells = (*space)["cells"].value<std::int64_t>()) {
    if (static_cast<std::uint64_t>(*cells) * d != s.centroids.size())
      return "the stored run file has space.cells = " + std::to_string(*cells) +
             " but /space/centroids has " + str(s.centroids.size() / d) + " rows";
  }
  return std::nullopt;
}

}  // namespace

bool valid_resume_name(const std::string& name) {
  return !name.empty() && name != "." && name.find('/') == std::string::npos &&
         name.find('\0') == std::string::npos && name.find('\n') == std::string::npos;
}

std::optional<std::string> snapshot_fault(const ArchiveSnapshot& s) {
  if (auto f = space_fault(s)) return f;
  if (s.genome_size() > kMaxGenomeSize)
    return "/genome has more than " + str(kMaxGenomeSize) + " parameters";
  if (auto f = bounds_fault(s.genome_bounds, "/genome")) return f;
  if (auto f = elites_fault(s)) return f;
  if (auto f = novelty_archive_fault(s)) return f;
  if (auto f = history_fault(s)) return f;
  if (s.resume) {
    if (s.resume->counters.size() > kMaxResumeEntries ||
        s.resume->arrays.size() > kMaxResumeEntries)
      return "/resume has more than " + str(kMaxResumeEntries) + " entries";
    for (const auto& [name, value] : s.resume->counters)
      if (!valid_resume_name(name)) return "/resume/counters has an unusable name \"" + name + "\"";
    for (const auto& [name, values] : s.resume->arrays)
      if (!valid_resume_name(name)) return "/resume/arrays has an unusable name \"" + name + "\"";
  }
  if (s.space_kind == "cvt")
    if (auto f = centroids_fault(s)) return f;
  if (auto f = placement_fault(s)) return f;
  if (auto f = progress_fault(s)) return f;
  if (auto f = config_fault(s)) return f;
  return std::nullopt;
}

}  // namespace tessera
