// `tessera compare --group LABEL='GLOB'... [--measures FILE] [--measure M]... [--reference LABEL]
// [--format text|json|csv] [--report DIR]`: statistics (and a report) over groups of runs.
#include <iostream>
#include <memory>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "cli/compare_archives.hpp"
#include "cli/compare_output.hpp"
#include "core/base/errors.hpp"
#include "io/measures_csv.hpp"

namespace tessera::cli {
namespace {

struct CompareOptions {
  std::vector<std::string> groups;
  std::string measures_file;
  std::vector<std::string> measures;
  std::string reference;
  std::string format = "text";
  std::string report_dir;
};

int run_compare(const CompareOptions& o) {
  if (o.groups.empty() && o.measures_file.empty())
    throw InputError("compare: give --group LABEL=GLOB (two or more) or --measures FILE");
  ObservationTable table;
  CompareOutputOptions out;
  if (!o.measures_file.empty()) {
    table.finals = read_measures_csv(o.measures_file);
    out.title = o.measures_file;
  }
  std::vector<ArchiveGroup> groups;
  for (const std::string& text : o.groups) {
    groups.push_back(parse_archive_group(text));
    for (std::size_t i = 0; i + 1 < groups.size(); ++i)
      if (groups[i].label == groups.back().label)
        throw InputError("compare: group '" + groups.back().label + "' given twice");
    out.groups.push_back(groups.back().label);
    if (out.title == "Comparison" || out.title.empty())
      out.title = groups.back().label;
    else if (o.measures_file.empty())
      out.title += " / " + groups.back().label;
  }
  add_archive_observations(groups, table, std::cerr);
  out.format = o.format;
  out.report_dir = o.report_dir;
  out.reference = o.reference;
  out.measures = o.measures;
  write_comparison(std::cout, table, out);
  if (!o.report_dir.empty()) std::cerr << "report: " << o.report_dir << "/index.html\n";
  return 0;
}

}  // namespace

void register_compare(CLI::App& app) {
  auto o = std::make_shared<CompareOptions>();
  auto* cmd = app.add_subcommand(
      "compare",
      "Compare groups of runs: per measure each group's n, median and quartiles, and every pair\n"
      "of groups tested (two-sided Mann-Whitney U, Fisher's exact test for success measures,\n"
      "Holm's correction over the pairs of a measure, Vargha-Delaney A12). Archives give the\n"
      "final coverage, qd_score and max_fitness and their curves over evaluations; a study's\n"
      "measures.csv gives any recorded measure.");
  cmd->add_option("--group", o->groups,
                  "LABEL=GLOB: the archives of one group, e.g. novelty='runs/nov-*/archive.h5' "
                  "(quote the pattern); repeatable");
  cmd->add_option("--measures", o->measures_file, "a study's measures.csv");
  cmd->add_option("--measure", o->measures, "compare only this measure; repeatable");
  cmd->add_option("--reference", o->reference,
                  "group the curves are tested against (default: the first group)");
  cmd->add_option("--format", o->format, "text (default), json or csv (long format)");
  cmd->add_option("--report", o->report_dir,
                  "also write an HTML report with the plots (SVG and PNG) to this folder");
  cmd->footer(
      "Examples:\n"
      "  tessera compare --group novelty='runs/nov-*/archive.h5' \\\n"
      "                  --group objective='runs/obj-*/archive.h5' --report runs/cmp\n"
      "  tessera compare --measures runs/study/measures.csv --measure success --format json\n"
      "\nReading the output: p is the raw p-value of a pair, p_holm the same corrected by\n"
      "Holm's method over all pairs of that measure (measures are not corrected against each\n"
      "other); stars use p_holm: * < 0.05, ** < 0.01, *** < 0.001. A12 is the chance that a\n"
      "run of a scores higher than a run of b (ties half): 0.5 no effect; from 0.56 (0.44)\n"
      "small, 0.64 (0.36) medium, 0.71 (0.29) large. 'missing' runs are left out, never taken\n"
      "as zero; 'censored' runs (goal not reached within the budget) rank at the budget.\n"
      "Measure names: coverage, qd_score, max_fitness, and those of measures.csv (success,\n"
      "probe.NAME.FIGURE, readapt.NAME.PLACE, ...).");
  cmd->callback([o] { throw CLI::RuntimeError(run_compare(*o)); });
}

}  // namespace tessera::cli
