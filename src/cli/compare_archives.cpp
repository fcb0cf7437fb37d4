#include "cli/compare_archives.hpp"

#include <glob.h>

#include <algorithm>
#include <span>

#include "core/base/errors.hpp"
#include "io/archive_file.hpp"

namespace tessera::cli {

ArchiveGroup parse_archive_group(const std::string& text) {
  const auto eq = text.find('=');
  if (eq == std::string::npos || eq == 0)
    throw InputError("--group '" + text +
                     "': expected LABEL=GLOB, e.g. novelty='runs/nov-*/archive.h5'");
  ArchiveGroup group;
  group.label = text.substr(0, eq);
  const std::string pattern = text.substr(eq + 1);
  glob_t found{};
  const int rc = ::glob(pattern.c_str(), 0, nullptr, &found);
  if (rc == 0)
    for (std::size_t i = 0; i < found.gl_pathc; ++i) group.archives.emplace_back(found.gl_pathv[i]);
  ::globfree(&found);
  if (group.archives.empty())
    throw InputError("--group " + group.label + ": '" + pattern + "' matches no file");
  std::sort(group.archives.begin(), group.archives.end());
  return group;
}

void add_archive_observations(const std::vector<ArchiveGroup>& groups, ObservationTable& table,
                              std::ostream& warnings, bool with_finals) {
  static const char* const kMeasures[] = {"coverage", "qd_score", "max_fitness"};
  const std::span<const char* const> finals =
      with_finals ? std::span<const char* const>(kMeasures) : std::span<const char* const>();
  for (const ArchiveGroup& g : groups) {
    for (const std::string& path : g.archives) {
      ArchiveSnapshot s;
      bool ok = true;
      try {
        s = read_archive_file(path);
      } catch (const InputError& e) {
        warnings << "tessera: warning: " << e.what() << "; its measures count as missing\n";
        ok = false;
      }
      const HistoryRow* last = ok && !s.history.empty() ? &s.history.back() : nullptr;
      for (const char* m : finals) {
        Observation o;
        o.group = g.label;
        o.run = path;
        o.measure = m;
        if (last) {
          const std::string name = m;
          o.value = name == "coverage"   ? last->coverage
                    : name == "qd_score" ? last->qd_score
                                         : last->max_fitness;
        }
        table.finals.push_back(std::move(o));
      }
      if (!ok) continue;
      for (const HistoryRow& row : s.history) {
        table.curves.push_back({g.label, path, "coverage", row.evaluations, row.coverage});
        table.curves.push_back({g.label, path, "qd_score", row.evaluations, row.qd_score});
        table.curves.push_back({g.label, path, "max_fitness", row.evaluations, row.max_fitness});
      }
    }
  }
}

}  // namespace tessera::cli
