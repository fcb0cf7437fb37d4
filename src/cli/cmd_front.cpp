// `tessera front ARCHIVE.h5 --objective fitness:max --objective NAME:min|max ... [--within ...]
// [--format text|json|csv]`: the non-dominated elites among those within the constraints, sorted
// by the first objective, best first.
#include <cmath>
#include <iostream>
#include <memory>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "cli/selection_args.hpp"
#include "core/base/errors.hpp"
#include "core/select/front.hpp"
#include "core/select/query.hpp"
#include "io/archive_file.hpp"
#include "io/table_output.hpp"

namespace tessera::cli {
namespace {

struct FrontOptions {
  std::string archive;
  std::vector<std::string> objectives;
  std::vector<std::string> within;
  std::string format = "text";
};

int run_front(const FrontOptions& o) {
  if (o.objectives.size() < 2)
    throw InputError(
        "front: give two or more --objective NAME:min|max (NAME is fitness or a "
        "descriptor name)");
  const ArchiveSnapshot s = read_archive_file(o.archive);
  if (s.elite_count() == 0) throw InputError(o.archive + ": the archive holds no elites");
  const auto named = parse_objectives(o.objectives, s, o.archive);
  EliteFilter filter;
  filter.within = parse_within(o.within, s, o.archive);
  std::vector<std::size_t> rows;
  std::size_t not_recorded = 0;  // elites lacking a stored figure an objective names
  for (std::size_t e : filter_elites(s, filter)) {
    bool known = true;
    for (const auto& n : named) known = known && std::isfinite(objective_value(s, e, n.objective));
    if (known)
      rows.push_back(e);
    else
      ++not_recorded;
  }
  if (rows.empty() && not_recorded > 0)
    throw InputError(o.archive +
                     ": no elite within the constraints has every objective recorded (" +
                     std::to_string(not_recorded) + " lack one)");
  if (rows.empty())
    throw InputError(o.archive + ": no elite satisfies the constraints (" +
                     describe_filter(filter, s) + "); the archive holds " +
                     std::to_string(s.elite_count()) + " elites");
  std::vector<Objective> objectives;
  for (const auto& n : named) objectives.push_back(n.objective);
  const auto front = elite_front(s, rows, objectives);

  Table table;
  table.list_key = "front";
  nlohmann::ordered_json header = nlohmann::ordered_json::array();
  std::vector<std::string> objective_names;
  for (const auto& n : named) {
    header.push_back(
        {{"name", n.name}, {"goal", n.objective.goal == Goal::minimize ? "min" : "max"}});
    objective_names.push_back(n.name);
  }
  table.header["objectives"] = header;
  table.header["candidates"] = rows.size();
  if (not_recorded > 0) table.header["without_objective_figures"] = not_recorded;
  std::vector<std::string> genome_parts;
  for (std::size_t i = 0; i < s.genome_size(); ++i) genome_parts.push_back(std::to_string(i));
  table.columns = {{"rank", {}},
                   {"cell", {}},
                   {"objectives", objective_names, 8},
                   {"fitness", {}},
                   {"descriptor", s.descriptor_names, 8},
                   {"at_bound", {}},
                   {"genome", genome_parts, 4}};
  const std::size_t x = s.extra_size();
  if (x > 0) table.columns.push_back({"extras", s.extra_names, 4});
  const std::size_t d = s.descriptor_size(), g = s.genome_size();
  // Descriptors sitting exactly at a bound: a value beyond the bounds is stored clamped there,
  // so the true value may lie further out ("straightness=max" for a path worse than the range).
  const auto at_bound = [&](std::size_t e) {
    std::string out;
    for (std::size_t i = 0; i < d; ++i) {
      const double v = s.descriptor[e * d + i];
      const char* side = v == s.descriptor_bounds.lower[i]   ? "min"
                         : v == s.descriptor_bounds.upper[i] ? "max"
                                                             : nullptr;
      if (side) out += (out.empty() ? "" : ",") + s.descriptor_names[i] + "=" + side;
    }
    return out;
  };
  for (std::size_t r = 0; r < front.size(); ++r) {
    const std::size_t e = front[r];
    std::vector<double> values;
    for (const auto& objective : objectives) values.push_back(objective_value(s, e, objective));
    table.rows.push_back(
        {static_cast<std::int64_t>(r + 1), s.cell[e], values, s.fitness[e],
         std::vector<double>(s.descriptor.begin() + e * d, s.descriptor.begin() + (e + 1) * d),
         at_bound(e),
         std::vector<double>(s.genome.begin() + e * g, s.genome.begin() + (e + 1) * g)});
    if (x > 0)
      table.rows.back().emplace_back(
          std::vector<double>(s.extras.begin() + e * x, s.extras.begin() + (e + 1) * x));
  }
  table.header["at_bound"] =
      "descriptors whose stored value sits at a bound of the space (NAME=min|max): values "
      "beyond the bounds are stored clamped, so the measured value may lie further out";
  write_table(std::cout, table, o.format);
  return 0;
}

}  // namespace

void register_front(CLI::App& app) {
  auto o = std::make_shared<FrontOptions>();
  auto* cmd = app.add_subcommand(
      "front",
      "Print the trade-off front: the elites no other elite beats on every objective at once\n"
      "(each objective is the fitness, a descriptor or a stored extra figure, minimised or\n"
      "maximised), among those within the constraints; sorted by the first objective, best\n"
      "first.");
  cmd->add_option("ARCHIVE", o->archive, "archive file (.h5) written by tessera")->required();
  cmd->add_option("--objective", o->objectives,
                  "NAME:min or NAME:max, NAME = fitness, a descriptor or an extra figure the "
                  "elites keep; two or more")
      ->required();
  cmd->add_option("--within", o->within,
                  "only elites with LO <= NAME <= HI, NAME a descriptor or an extra figure; "
                  "NAME=LO:HI, repeatable");
  cmd->add_option("--format", o->format, "text (default), json or csv")
      ->check(CLI::IsMember({"text", "json", "csv"}));
  cmd->callback([o] { throw CLI::RuntimeError(run_front(*o)); });
}

}  // namespace tessera::cli
