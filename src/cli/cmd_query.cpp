// `tessera query ARCHIVE.h5 --target V1,V2,... [--k N] [--min-fitness F] [--within NAME=LO:HI]...
// [--format text|json|csv]`: the k elites nearest to a required descriptor among those that
// satisfy the constraints. `--targets FILE.csv` answers many requirements with one k-d tree.
#include <iostream>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "cli/format.hpp"
#include "cli/selection_args.hpp"
#include "core/base/errors.hpp"
#include "core/select/query.hpp"
#include "io/archive_file.hpp"
#include "io/table_output.hpp"
#include "io/targets_csv.hpp"

namespace tessera::cli {
namespace {

struct QueryOptions {
  std::string archive;
  std::string target;
  std::string targets_file;
  std::size_t k = 1;
  std::optional<double> min_fitness;
  std::vector<std::string> within;
  std::string format = "text";
};

std::vector<std::string> genome_parts(std::size_t g) {
  std::vector<std::string> parts;
  for (std::size_t i = 0; i < g; ++i) parts.push_back(std::to_string(i));
  return parts;
}

// One line on stderr when targets lie outside the descriptor bounds: the answer is then only
// the elites nearest the edge of the map, which may be far from what was asked for.
void warn_outside_bounds(const std::vector<std::vector<double>>& targets, const ArchiveSnapshot& s,
                         const std::string& origin) {
  std::size_t outside = 0;
  std::string first;
  for (std::size_t t = 0; t < targets.size(); ++t)
    for (std::size_t i = 0; i < targets[t].size(); ++i) {
      const double v = targets[t][i];
      const double lo = s.descriptor_bounds.lower[i], hi = s.descriptor_bounds.upper[i];
      if (v >= lo && v <= hi) continue;
      if (outside++ == 0)
        first = (targets.size() > 1 ? "target " + std::to_string(t + 1) + ": " : std::string()) +
                s.descriptor_names[i] + " = " + short_number(v) + " lies outside [" +
                short_number(lo) + ", " + short_number(hi) + "]";
      break;
    }
  if (outside == 0) return;
  std::cerr << "tessera: warning: " << origin << ": "
            << (targets.size() > 1
                    ? std::to_string(outside) + " of " + std::to_string(targets.size()) +
                          " targets lie outside the descriptor bounds (first: " + first + ")"
                    : first + ", the descriptor bounds")
            << "; the answer is the elites nearest the edge of the map\n";
}

int run_query(const QueryOptions& o) {
  if (o.target.empty() == o.targets_file.empty())
    throw InputError("query: give exactly one of --target V1,V2,... and --targets FILE.csv");
  if (o.k == 0) throw InputError("query: --k must be at least 1");
  const ArchiveSnapshot s = read_archive_file(o.archive);
  if (s.elite_count() == 0) throw InputError(o.archive + ": the archive holds no elites");
  const std::size_t d = s.descriptor_size();

  // Everything the user gave is checked before any search.
  EliteFilter filter;
  filter.min_fitness = o.min_fitness;
  filter.within = parse_within(o.within, s, o.archive);
  std::vector<std::vector<double>> targets;
  if (!o.target.empty()) {
    targets.push_back(parse_number_list(o.target, "--target"));
    if (targets.back().size() != d) {
      std::string names;
      for (const auto& n : s.descriptor_names) names += (names.empty() ? "" : ", ") + n;
      throw InputError(o.archive + ": --target has " + std::to_string(targets.back().size()) +
                       " values, but the archive's descriptor has " + std::to_string(d) + " (" +
                       names + ")");
    }
  } else {
    targets = read_targets_csv(o.targets_file, s.descriptor_names);
  }

  warn_outside_bounds(targets, s, o.target.empty() ? o.targets_file : "--target");

  const NearestElites index(s, filter);
  if (index.size() == 0)
    throw InputError(o.archive + ": no elite satisfies the constraints (" +
                     describe_filter(filter, s) + "); the archive holds " +
                     std::to_string(s.elite_count()) + " elites");

  Table table;
  table.list_key = "matches";
  table.columns = {{"target", s.descriptor_names, 8},
                   {"rank", {}},
                   {"cell", {}},
                   {"distance", {}},
                   {"fitness", {}},
                   {"descriptor", s.descriptor_names, 8},
                   {"genome", genome_parts(s.genome_size()), 4}};
  const std::size_t x = s.extra_size();
  if (x > 0) table.columns.push_back({"extras", s.extra_names, 4});
  const std::size_t g = s.genome_size();
  for (const auto& target : targets) {
    const auto found = index.nearest(target, o.k);
    for (std::size_t r = 0; r < found.size(); ++r) {
      const std::size_t e = found[r].elite;
      table.rows.push_back(
          {target, static_cast<std::int64_t>(r + 1), s.cell[e], found[r].distance, s.fitness[e],
           std::vector<double>(s.descriptor.begin() + e * d, s.descriptor.begin() + (e + 1) * d),
           std::vector<double>(s.genome.begin() + e * g, s.genome.begin() + (e + 1) * g)});
      if (x > 0)
        table.rows.back().emplace_back(
            std::vector<double>(s.extras.begin() + e * x, s.extras.begin() + (e + 1) * x));
    }
  }
  write_table(std::cout, table, o.format);
  if (o.format == "text" && index.size() < o.k)
    std::cerr << "tessera: only " << index.size() << " elites satisfy the constraints\n";
  return 0;
}

}  // namespace

void register_query(CLI::App& app) {
  auto o = std::make_shared<QueryOptions>();
  auto* cmd = app.add_subcommand(
      "query",
      "Find the elites nearest to a required descriptor, among those that satisfy the\n"
      "constraints. Distance: Euclidean on descriptors scaled to [0, 1] by the space bounds.\n"
      "Results come nearest first, one row per requirement and match.");
  cmd->add_option("ARCHIVE", o->archive, "archive file (.h5) written by tessera")->required();
  cmd->add_option("--target", o->target,
                  "required descriptor V1,V2,... in descriptor units (one value per descriptor; "
                  "write --target=-0.5,0.2 when the first value is negative)");
  cmd->add_option("--targets", o->targets_file,
                  "CSV file of required descriptors, one per line, optional header of descriptor "
                  "names");
  cmd->add_option("--k,-k", o->k, "number of elites per requirement (default 1)");
  cmd->add_option("--min-fitness", o->min_fitness, "only elites with at least this fitness");
  cmd->add_option("--within", o->within,
                  "only elites with LO <= NAME <= HI, NAME a descriptor or an extra figure the "
                  "elites keep; NAME=LO:HI, repeatable");
  cmd->add_option("--format", o->format, "text (default), json or csv")
      ->check(CLI::IsMember({"text", "json", "csv"}));
  cmd->callback([o] { throw CLI::RuntimeError(run_query(*o)); });
}

}  // namespace tessera::cli
