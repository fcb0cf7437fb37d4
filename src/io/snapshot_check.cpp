#include "io/snapshot_check.hpp"

#include <cmath>
#include <string>
#include <vector>

#include "core/archive/space.hpp"

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
  for (std::size_t i = 0; i < values.size(); ++i) {
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

}  // namespace

bool valid_resume_name(const std::string& name) {
  return !name.empty() && name != "." && name.find('/') == std::string::npos &&
         name.find('\0') == std::string::npos;
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
  return std::nullopt;
}

}  // namespace tessera
