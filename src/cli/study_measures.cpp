#include "cli/study_measures.hpp"

#include <cstdio>
#include <map>
#include <memory>
#include <ostream>
#include <stdexcept>

#include "core/base/errors.hpp"
#include "eval/problem_factory.hpp"
#include "eval/study_probe.hpp"
#include "io/archive_file.hpp"
#include "io/run_file.hpp"

namespace tessera::cli {
namespace {

ProbeRequest request_of(const StudyMeasure& m) {
  return {m.figures, m.places, m.best};
}

std::shared_ptr<const Problem> probe_problem(const StudySpec& spec, const StudyMeasure& m) {
  RunConfig config = load_run_file(m.run_file, m.overrides);
  std::shared_ptr<const Problem> problem = open_problem(config.problem);
  try {
    check_probe(problem->info(), request_of(m));
  } catch (const std::invalid_argument& e) {
    throw InputError(spec.source + ": probe '" + m.name + "': " + e.what());
  }
  return problem;
}

// The evaluations at which the max fitness first reached `threshold`, from the history.
std::optional<std::uint64_t> first_reached(const ArchiveSnapshot& s, double threshold) {
  for (const auto& row : s.history)
    if (row.max_fitness >= threshold) return row.evaluations;
  return std::nullopt;
}

}  // namespace

void check_probes(const StudySpec& spec) {
  for (const auto& m : spec.measures)
    if (m.kind == MeasureKind::probe) (void)probe_problem(spec, m);
}

ObservationTable collect_measures(const StudySpec& spec, const StudyPlan& plan, std::size_t threads,
                                  std::vector<std::string>& notes) {
  ObservationTable table;
  std::map<std::size_t, std::shared_ptr<const Problem>> probes;
  // Re-adaptation jobs by (source run, measure, place).
  std::map<std::tuple<std::size_t, std::size_t, std::size_t>, const StudyJob*> readapts;
  for (const auto& job : plan.jobs)
    if (job.readapt)
      readapts[{
          job.treatment * spec.seeds.size() +
              static_cast<std::size_t>(std::find(spec.seeds.begin(), spec.seeds.end(), job.seed) -
                                       spec.seeds.begin()),
          job.measure, job.place}] = &job;

  for (std::size_t r = 0; r < plan.main_runs; ++r) {
    const StudyJob& job = plan.jobs[r];
    const std::string group = spec.treatments[job.treatment].label;
    const std::string run = "seed-" + std::to_string(job.seed);
    auto add = [&](const std::string& measure, std::optional<double> value, bool censored) {
      table.finals.push_back({group, run, measure, value, censored});
    };
    std::optional<ArchiveSnapshot> snapshot;
    if (job.done()) {
      try {
        snapshot = read_archive_file(job.archive().string());
        if (snapshot->history.empty()) throw InputError(job.archive().string() + ": no history");
      } catch (const std::exception& e) {
        notes.push_back(job.name + ": " + e.what());
        snapshot.reset();
      }
    }
    if (snapshot)
      for (const auto& row : snapshot->history)
        for (const auto& [name, value] :
             {std::pair{"coverage", row.coverage}, std::pair{"qd_score", row.qd_score},
              std::pair{"max_fitness", row.max_fitness}})
          table.curves.push_back({group, run, name, row.evaluations, value});

    for (std::size_t m = 0; m < spec.measures.size(); ++m) {
      const StudyMeasure& measure = spec.measures[m];
      const auto names = measure_names(measure);
      if (!snapshot) {
        for (const auto& n : names) add(n, std::nullopt, false);
        continue;
      }
      const HistoryRow& last = snapshot->history.back();
      switch (measure.kind) {
        case MeasureKind::final_figures:
          for (const auto& f : measure.figures)
            add(f,
                f == "coverage"   ? last.coverage
                : f == "qd_score" ? last.qd_score
                                  : last.max_fitness,
                false);
          break;
        case MeasureKind::success:
          add(names[0], last.max_fitness >= measure.threshold ? 1.0 : 0.0, false);
          break;
        case MeasureKind::probe: {
          auto& problem = probes[m];
          if (!problem) problem = probe_problem(spec, measure);
          ProbeResult p;
          try {
            p = probe_elites(problem, threads, snapshot->genome, snapshot->fitness,
                             request_of(measure));
          } catch (const std::exception& e) {
            notes.push_back(job.name + ": probe '" + measure.name + "': " + e.what());
            for (const auto& n : names) add(n, std::nullopt, false);
            break;
          }
          std::size_t k = 0;
          for (const auto& v : p.medians) add(names[k++], v, false);
          for (const auto& v : p.shares) add(names[k++], v, false);
          break;
        }
        case MeasureKind::readapt:
          for (std::size_t place = 0; place < measure.place_runs.size(); ++place) {
            const auto it = readapts.find({r, m, place});
            std::optional<double> value;
            bool censored = false;
            if (it != readapts.end() && it->second->done()) {
              try {
                const ArchiveSnapshot s = read_archive_file(it->second->archive().string());
                const auto reached = first_reached(s, measure.threshold);
                // Never reached within the budget: the budget, marked censored.
                value = static_cast<double>(reached ? *reached : s.evaluations);
                censored = !reached;
              } catch (const std::exception& e) {
                notes.push_back(it->second->name + ": " + e.what());
              }
            }
            add(names[place], value, censored);
          }
          break;
      }
    }
  }
  return table;
}

}  // namespace tessera::cli
