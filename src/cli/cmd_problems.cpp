// `tessera problems`: lists the problems the plugin search path offers (name, sizes, bounds,
// fitness range, plugin file and ABI version) and the plugin files it refused, with reasons.
#include <cmath>
#include <cstdio>
#include <iostream>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "cli/commands.hpp"
#include "core/base/errors.hpp"
#include "problems/plugin_problem.hpp"
#include "problems/registry.hpp"

namespace tessera::cli {
namespace {

struct ProblemsOptions {
  std::string format = "text";
  std::string name;  // show only this problem
};

// A usable plugin, described with its default options, or a refused file with its reason.
struct Listing {
  std::vector<ProblemInfo> problems;
  std::vector<PluginEntry> refused;
};

Listing collect() {
  Listing listing;
  for (auto& entry : discover_plugins()) {
    if (entry.error.empty()) {
      try {
        listing.problems.push_back(load_plugin_problem(entry.path, "")->info());
        continue;
      } catch (const InputError& e) {
        entry.error = e.what();
        const std::string prefix = entry.path + ": ";
        if (entry.error.rfind(prefix, 0) == 0) entry.error.erase(0, prefix.size());
      }
    }
    listing.refused.push_back(std::move(entry));
  }
  return listing;
}

std::string number(double value) {
  if (std::isinf(value)) return value > 0 ? "+inf" : "-inf";
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.6g", value);
  return buffer;
}

std::string interval(double lower, double upper) {
  return "[" + number(lower) + ", " + number(upper) + "]";
}

std::string genome_text(const Bounds& genome) {
  bool uniform = true;
  for (std::size_t i = 1; i < genome.size(); ++i)
    uniform = uniform && genome.lower[i] == genome.lower[0] && genome.upper[i] == genome.upper[0];
  std::string text = std::to_string(genome.size()) + " parameter" + (genome.size() == 1 ? "" : "s");
  if (uniform) return text + " in " + interval(genome.lower[0], genome.upper[0]);
  return text + ", bounds per parameter (see --format json)";
}

// What `report` and `trace` can show of the problem's elites beyond the map and curves.
std::string figures_text(const ProblemInfo& p) {
  if (p.draws_scene && p.gives_traces) return "draws its scene and traces elites";
  if (p.draws_scene) return "draws its scene, no traces";
  if (p.gives_traces) return "traces elites, no scene";
  return "none (report shows the map and curves only)";
}

void print_text(const Listing& listing, std::ostream& out) {
  for (const auto& p : listing.problems) {
    out << p.name << "\n";
    if (!p.summary.empty()) out << "  " << p.summary << "\n";
    out << "  genome      " << genome_text(p.genome) << "\n";
    out << "  descriptor  ";
    for (std::size_t i = 0; i < p.descriptor_size(); ++i)
      out << (i ? ", " : "") << p.descriptor_names[i] << " in "
          << interval(p.descriptor.lower[i], p.descriptor.upper[i]);
    out << "\n  fitness     " << interval(p.fitness_lower, p.fitness_upper) << " (QD-score offset "
        << number(p.fitness_lower) << ")\n";
    if (!p.extra_names.empty()) {
      out << "  extras      ";
      for (std::size_t i = 0; i < p.extra_names.size(); ++i)
        out << (i ? ", " : "") << p.extra_names[i];
      out << "\n";
    }
    out << "  figures     " << figures_text(p) << "\n";
    out << "  plugin      " << p.origin << " (ABI " << p.abi_version << ")\n\n";
  }
  if (listing.problems.empty()) out << "No problems found.\n\n";
  if (!listing.refused.empty()) {
    out << "Refused plugin files:\n";
    for (const auto& r : listing.refused) out << "  " << r.path << ": " << r.error << "\n";
    out << "\n";
  }
  out << "Search path (first match wins):";
  for (const auto& dir : plugin_search_path()) out << "\n  " << dir;
  out << "\n";
}

// Infinite fitness bounds have no JSON number: they are written as null.
nlohmann::json finite_or_null(double value) {
  return std::isfinite(value) ? nlohmann::json(value) : nlohmann::json(nullptr);
}

void print_json(const Listing& listing, std::ostream& out) {
  nlohmann::json problems = nlohmann::json::array();
  for (const auto& p : listing.problems) {
    problems.push_back({{"name", p.name},
                        {"summary", p.summary},
                        {"genome_size", p.genome_size()},
                        {"genome_lower", p.genome.lower},
                        {"genome_upper", p.genome.upper},
                        {"descriptor_names", p.descriptor_names},
                        {"descriptor_lower", p.descriptor.lower},
                        {"descriptor_upper", p.descriptor.upper},
                        {"fitness_lower", finite_or_null(p.fitness_lower)},
                        {"fitness_upper", finite_or_null(p.fitness_upper)},
                        {"extra_names", p.extra_names},
                        {"draws_scene", p.draws_scene},
                        {"gives_traces", p.gives_traces},
                        {"plugin", p.origin},
                        {"abi_version", p.abi_version}});
  }
  nlohmann::json refused = nlohmann::json::array();
  for (const auto& r : listing.refused)
    refused.push_back({{"path", r.path}, {"name", r.name}, {"reason", r.error}});
  const nlohmann::json document = {
      {"problems", problems}, {"refused", refused}, {"search_path", plugin_search_path()}};
  out << document.dump(2) << "\n";
}

void run_problems(const ProblemsOptions& o) {
  Listing listing = collect();
  if (!o.name.empty()) {
    std::erase_if(listing.problems, [&](const ProblemInfo& p) { return p.name != o.name; });
    std::erase_if(listing.refused, [&](const PluginEntry& r) { return r.name != o.name; });
    // Unknown: the registry's message lists what is available.
    if (listing.problems.empty() && listing.refused.empty()) open_plugin_problem(o.name, "");
  }
  if (o.format == "json")
    print_json(listing, std::cout);
  else
    print_text(listing, std::cout);
}

}  // namespace

void register_problems(CLI::App& app) {
  auto o = std::make_shared<ProblemsOptions>();
  auto* cmd = app.add_subcommand(
      "problems",
      "List the problems the installed plugins and TESSERA_PLUGIN_PATH offer: genome size,\n"
      "descriptor names and bounds, fitness range (default options), plugin file and ABI\n"
      "version; plugin files that were refused are listed with the reason.");
  cmd->add_option("NAME", o->name, "show only this problem");
  cmd->add_option("--format", o->format, "output format")->check(CLI::IsMember({"text", "json"}));
  cmd->callback([o] { run_problems(*o); });
}

}  // namespace tessera::cli
