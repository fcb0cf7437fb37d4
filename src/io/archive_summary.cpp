#include "io/archive_summary.hpp"

#include <cmath>

namespace tessera {

ArchiveSummary summarize_archive(const ArchiveSnapshot& s, const std::string& file) {
  ArchiveSummary out;
  out.file = file;
  out.archive_format = s.format_version;
  out.problem = s.problem;
  out.tool_version = s.tool_version;
  out.seed = s.seed;
  out.random_streams = s.random_streams;
  out.evaluations = s.evaluations;
  out.space_kind = s.space_kind;
  out.cells = s.cell_count();
  out.descriptor_bounds = s.descriptor_bounds;
  out.descriptor_names = s.descriptor_names;
  if (s.space_kind == "grid") out.resolution = s.resolution;
  out.genome_size = s.genome_size();
  out.extra_names = s.extra_names;
  if (s.novelty_archive) out.novelty_archive = s.novelty_archive->size();

  const std::size_t n = s.elite_count();
  out.elites = n;
  out.coverage = out.cells > 0 ? static_cast<double>(n) / static_cast<double>(out.cells) : 0.0;
  out.fitness_floor = s.fitness_floor;
  // Same order and formula as EliteArchive::qd_score, so the figure matches /history exactly.
  for (double f : s.fitness) out.qd_score += f - s.fitness_floor;
  if (n > 0) {
    std::size_t best = 0;
    for (std::size_t i = 1; i < n; ++i)
      if (s.fitness[i] > s.fitness[best]) best = i;
    const std::size_t g = s.genome_size();
    const std::size_t d = s.descriptor_size();
    const std::size_t e = s.extra_size();
    out.max_fitness = s.fitness[best];
    out.best = BestElite{best,
                         s.cell[best],
                         s.fitness[best],
                         s.birth[best],
                         {s.descriptor.begin() + best * d, s.descriptor.begin() + (best + 1) * d},
                         {s.genome.begin() + best * g, s.genome.begin() + (best + 1) * g},
                         {s.extras.begin() + best * e, s.extras.begin() + (best + 1) * e}};
  }
  if (s.resume) {
    const auto& counters = s.resume->counters;
    const auto count = [&](const char* name) -> std::uint64_t {
      const auto it = counters.find(name);
      return it == counters.end() ? 0 : it->second;
    };
    out.invalid = count("invalid");
    out.out_of_bounds = count("out_of_bounds");
    const std::string prefix = "failed:";
    for (const auto& [name, value] : counters)
      if (name.starts_with(prefix)) out.failures[name.substr(prefix.size())] = value;
    out.algorithm = s.resume->algorithm;
    out.next_batch = s.resume->next_batch;
  }
  out.history_rows = s.history.size();
  return out;
}

namespace {

using Json = nlohmann::ordered_json;

template <class T>
Json or_null(const std::optional<T>& v) {
  return v ? Json(*v) : Json(nullptr);
}

// JSON has no NaN: figures not recorded are null.
Json numbers_or_null(const std::vector<double>& values) {
  Json out = Json::array();
  for (double v : values) out.push_back(std::isfinite(v) ? Json(v) : Json(nullptr));
  return out;
}

}  // namespace

void to_json(nlohmann::ordered_json& out, const ArchiveSummary& s) {
  Json space = {{"kind", s.space_kind},
                {"cells", s.cells},
                {"dimensions", s.descriptor_bounds.size()},
                {"lower", s.descriptor_bounds.lower},
                {"upper", s.descriptor_bounds.upper},
                {"names", s.descriptor_names},
                {"resolution", nullptr}};
  if (s.space_kind == "grid") space["resolution"] = s.resolution;
  Json best = nullptr;
  if (s.best)
    best = {{"index", s.best->index},
            {"cell", s.best->cell},
            {"fitness", s.best->fitness},
            {"birth", s.best->birth},
            {"descriptor", s.best->descriptor},
            {"genome", s.best->genome},
            {"extras", numbers_or_null(s.best->extras)}};
  Json resume = nullptr;
  if (s.algorithm) resume = {{"algorithm", *s.algorithm}, {"next_batch", or_null(s.next_batch)}};
  out = {{"format", "tessera-inspect"},
         {"version", 2},
         {"file", s.file},
         {"archive_format", s.archive_format},
         {"problem", s.problem},
         {"tool_version", s.tool_version},
         {"seed", s.seed},
         {"random_streams", s.random_streams},
         {"evaluations", s.evaluations},
         {"space", space},
         {"genome_size", s.genome_size},
         {"extra_names", s.extra_names},
         {"elites", s.elites},
         {"coverage", s.coverage},
         {"qd_score", s.qd_score},
         {"fitness_floor", s.fitness_floor},
         {"max_fitness", or_null(s.max_fitness)},
         {"best", best},
         {"novelty_archive", or_null(s.novelty_archive)},
         {"counts",
          {{"invalid", or_null(s.invalid)},
           {"out_of_bounds", or_null(s.out_of_bounds)},
           {"failures", s.failures}}},
         {"history_rows", s.history_rows},
         {"resume", resume}};
}

}  // namespace tessera
