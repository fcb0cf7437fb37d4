#include "cli/summary.hpp"

#include <cstdio>

#include "cli/format.hpp"
#include "cli/hardware_caution.hpp"
#include "core/search/map_elites.hpp"

namespace tessera::cli {

void print_summary(std::ostream& out, const PreparedRun& run, const std::string& archive_path,
                   double seconds) {
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
  out << "evaluations  " << with_thousands(c.evaluations) << " in " << duration(seconds) << " ("
      << human_rate(seconds > 0 ? static_cast<double>(c.evaluations) / seconds : 0) << "/s)\n";
  out << "elites       " << with_thousands(f.elites) << "  coverage " << percent(f.coverage)
      << "  QD-score " << short_number(f.qd_score) << "  max fitness " << short_number(f.max_fitness)
      << "\n";
  out << "rejected     invalid " << with_thousands(c.invalid) << ", out of bounds (clamped) "
      << with_thousands(c.out_of_bounds) << "\n";
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
