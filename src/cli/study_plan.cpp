#include "cli/study_plan.hpp"

#include <algorithm>
#include <cstdio>

#include "core/base/errors.hpp"
#include "io/archive_file.hpp"

namespace tessera::cli {

namespace fs = std::filesystem;

bool StudyJob::done() const {
  std::error_code ec;
  return fs::exists(done_marker(), ec) && fs::exists(archive(), ec);
}

fs::path run_dir(const fs::path& out, const std::string& label, std::uint64_t seed) {
  return out / "runs" / label / ("seed-" + std::to_string(seed));
}

std::string toml_string(const std::string& text) {
  std::string out = "\"";
  for (char c : text) {
    if (c == '"' || c == '\\') out += '\\';
    out += c;
  }
  return out + "\"";
}

namespace {

// Shortest text that reads back as the same double.
std::string exact(double v) {
  char text[32];
  std::snprintf(text, sizeof text, "%.17g", v);
  return text;
}

std::vector<std::string> set_args(const std::vector<std::string>& overrides) {
  std::vector<std::string> out;
  for (const auto& o : overrides) {
    out.push_back("--set");
    out.push_back(o);
  }
  return out;
}

}  // namespace

StudyPlan make_plan(const StudySpec& spec, const fs::path& out) {
  StudyPlan plan;
  const std::size_t seeds = spec.seeds.size();
  auto index_of = [&](const std::string& label, std::size_t s) {
    for (std::size_t t = 0; t < spec.treatments.size(); ++t)
      if (spec.treatments[t].label == label) return t * seeds + s;
    return std::size_t{0};
  };
  for (std::size_t t = 0; t < spec.treatments.size(); ++t) {
    const StudyTreatment& tr = spec.treatments[t];
    for (std::size_t s = 0; s < seeds; ++s) {
      StudyJob job;
      job.treatment = t;
      job.seed = spec.seeds[s];
      job.name = tr.label + " seed-" + std::to_string(job.seed);
      job.dir = run_dir(out, tr.label, job.seed);
      std::vector<std::string> args = {"illuminate",     tr.run_file, "--out",
                                       job.dir.string(), "--seed",    std::to_string(job.seed)};
      for (auto& a : set_args(tr.overrides)) args.push_back(a);
      plan.fingerprint += job.name + ":";
      for (const auto& a : args) plan.fingerprint += " " + a;
      if (!tr.matched.empty()) {
        // The matched random control draws every genome per parameter from the values of the
        // same seed's final elites of the matched treatment.
        const std::size_t source = index_of(tr.matched, s);
        job.needs.push_back(source);
        const fs::path source_archive = run_dir(out, tr.matched, job.seed) / "archive.h5";
        plan.fingerprint += " [matched " + tr.matched + "]";
        args.insert(args.end(), {"--set", "search.algorithm=\"random\"", "--set",
                                 "search.start_from=" + toml_string(source_archive.string()),
                                 "--set", "search.start_draw=\"resample\""});
      }
      plan.fingerprint += "\n";
      job.fresh_args = [args] { return args; };
      plan.jobs.push_back(std::move(job));
    }
  }
  plan.main_runs = plan.jobs.size();
  for (std::size_t m = 0; m < spec.measures.size(); ++m) {
    const StudyMeasure& measure = spec.measures[m];
    if (measure.kind != MeasureKind::readapt) continue;
    for (std::size_t p = 0; p < measure.place_runs.size(); ++p) {
      const auto& [place, place_run] = measure.place_runs[p];
      for (std::size_t source = 0; source < plan.main_runs; ++source) {
        const StudyJob& from = plan.jobs[source];
        const StudyTreatment& tr = spec.treatments[from.treatment];
        StudyJob job;
        job.treatment = from.treatment;
        job.seed = from.seed;
        job.readapt = true;
        job.measure = m;
        job.place = p;
        job.name = from.name + " readapt " + measure.name + "." + place;
        job.dir = from.dir / ("readapt-" + measure.name + "-" + place);
        job.needs.push_back(source);
        const fs::path start = from.archive();
        std::vector<std::string> args = {"illuminate",     place_run, "--out",
                                         job.dir.string(), "--seed",  std::to_string(job.seed)};
        for (auto& a : set_args(tr.overrides)) args.push_back(a);
        if (!tr.matched.empty())
          args.insert(args.end(), {"--set", "search.algorithm=\"random\"", "--set",
                                   "search.start_draw=\"resample\""});
        args.insert(args.end(), {"--set", "search.start_from=" + toml_string(start.string()),
                                 "--set", "search.stop_fitness=" + exact(measure.threshold),
                                 "--set", "search.evaluations=" + std::to_string(measure.budget)});
        plan.fingerprint += job.name + ":";
        for (const auto& a : args) plan.fingerprint += " " + a;
        plan.fingerprint += "\n";
        const std::uint64_t budget = measure.budget;
        // Every elite of the run is evaluated once in the new arena before variation starts.
        job.fresh_args = [args, start, budget] {
          auto full = args;
          const std::size_t elites = read_archive_file(start.string()).elite_count();
          const auto initial = std::min<std::uint64_t>(std::max<std::size_t>(elites, 1), budget);
          full.insert(full.end(), {"--set", "search.initial=" + std::to_string(initial)});
          return full;
        };
        plan.jobs.push_back(std::move(job));
      }
    }
  }
  return plan;
}

}  // namespace tessera::cli
