#include "core/archive/snapshot.hpp"

namespace tessera {

std::optional<std::size_t> ArchiveSnapshot::extra_index(const std::string& name) const {
  for (std::size_t e = 0; e < extra_names.size(); ++e)
    if (extra_names[e] == name) return e;
  return std::nullopt;
}

std::int64_t ArchiveSnapshot::cell_count() const {
  if (space_kind == "grid") {
    std::int64_t cells = 1;
    for (auto r : resolution) cells *= r;
    return cells;
  }
  if (space_kind == "cvt" && descriptor_size() > 0)
    return static_cast<std::int64_t>(centroids.size() / descriptor_size());
  return static_cast<std::int64_t>(elite_count());
}

}  // namespace tessera
