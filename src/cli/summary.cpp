#include "cli/summary.hpp"

#include <algorithm>
#include <cstdio>

#include "cli/format.hpp"
#include "cli/hardware_caution.hpp"
#include "core/search/map_elites.hpp"

namespace tessera::cli {

void print_summary(std::ostream& out, const PreparedRun& run, const std::string& archive_path,
                   std::uint64_t start_evaluations, double seconds) {
  const auto& search = *run.search;
  const auto f = search.figures();
  const auto& c = search.counters();
  const auto& info = run.problem->info();
  out << "problem      " << info.name << " (" << info.genome_size() << " parameters; descriptor ";
  for (std::size_t i = 0; i < info.descriptor_names.size(); ++i)
    out << (i ? ", " : "") << info.descriptor_names[i];
  out << ")\n";
  out << "search       " << search.name() << ", seed " << run.config.search.seed << ", batch "
      << run.config.search.batch << "\n";
  const std::uint64_t here = c.evaluations - std::min(start_evaluations, c.evaluations);
  out << "evaluations  " << with_thousands(c.evaluations);
  if (start_evaluations == 0) {
    out << " in " << duration(seconds) << " ("
        << human_rate(seconds > 0 ? static_cast<double>(here) / seconds : 0) << "/s)\n";
  } else if (here == 0) {
    out << ", all done before; nothing was left to run (raise the budget with --evaluations)\n";
  } else {
    out << " (" << with_thousands(here) << " run now in " << duration(seconds) << ", "
        << human_rate(seconds > 0 ? static_cast<double>(here) / seconds : 0) << "/s; "
        << with_thousands(start_evaluations) << " before)\n";
  }
  out << "elites       " << with_thousands(f.elites) << "  coverage " << percent(f.coverage)
      << "  QD-score " << short_number(f.qd_score) << "  max fitness " << short_number(f.max_fitness)
      << "\n";
  // Out-of-bounds candidates are not rejected: their descriptor is clamped into the edge cell
  // and they compete there like any other.
  out << "invalid      " << with_thousands(c.invalid)
      << " (NaN, infinite or failed evaluations; not stored)\n";
  out << "clamped      " << with_thousands(c.out_of_bounds)
      << " with a descriptor outside the bounds (kept: stored at the bound, in the edge cell)\n";
  if (const auto* me = dynamic_cast<const MapElitesSearch*>(&search)) {
    if (const auto best = me->archive().best()) {
      out << "best elite   cell " << me->archive().cell(*best) << ", fitness "
          << short_number(me->archive().fitness(*best)) << ", descriptor (";
      const auto d = me->archive().descriptor(*best);
      for (std::size_t i = 0; i < d.size(); ++i) out << (i ? ", " : "") << short_number(d[i]);
      out << ")\n";
    }
  }
  for (const auto& [reason, count] : run.problem->failure_counts())
    out << "failed       " << reason << ": " << with_thousands(count) << "\n";
  out << "archive      " << archive_path << "\n";
  if (may_drive_hardware(info.name, info.origin)) out << kHardwareCaution << "\n";
}

}  // namespace tessera::cli
