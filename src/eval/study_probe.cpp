#include "eval/study_probe.hpp"

#include <algorithm>
#include <numeric>
#include <stdexcept>

#include "core/stats/quartiles.hpp"
#include "eval/thread_evaluator.hpp"

namespace tessera {
namespace {

std::size_t extra_index(const ProblemInfo& info, const std::string& name) {
  const auto it = std::find(info.extra_names.begin(), info.extra_names.end(), name);
  if (it == info.extra_names.end()) {
    std::string list;
    for (const auto& n : info.extra_names)
      if (n.rfind("trace_", 0) != 0) list += (list.empty() ? "" : ", ") + n;
    throw std::invalid_argument("problem '" + info.name + "' reports no figure '" + name +
                                "' (it reports: " + (list.empty() ? "none" : list) + ")");
  }
  return static_cast<std::size_t>(it - info.extra_names.begin());
}

}  // namespace

void check_probe(const ProblemInfo& info, const ProbeRequest& request) {
  for (const auto& f : request.figures) (void)extra_index(info, f);
  for (const auto& p : request.places) (void)extra_index(info, p + "_time");
}

ProbeResult probe_elites(const std::shared_ptr<const Problem>& problem, std::size_t threads,
                         std::span<const double> genomes, std::span<const double> fitness,
                         const ProbeRequest& request) {
  const ProblemInfo& info = problem->info();
  const std::size_t g = info.genome_size();
  if (genomes.size() != fitness.size() * g)
    throw std::invalid_argument("the elites' genomes do not match the problem's genome size");
  // The best N by fitness; ties keep archive order, so the choice is reproducible.
  std::vector<std::size_t> rows(fitness.size());
  std::iota(rows.begin(), rows.end(), std::size_t{0});
  if (request.best > 0 && request.best < rows.size()) {
    std::stable_sort(rows.begin(), rows.end(),
                     [&](std::size_t a, std::size_t b) { return fitness[a] > fitness[b]; });
    rows.resize(request.best);
  }
  Batch batch;
  batch.resize(rows.size(), g, info.descriptor_size(), info.extra_names.size());
  for (std::size_t k = 0; k < rows.size(); ++k)
    std::copy_n(genomes.begin() + static_cast<std::ptrdiff_t>(rows[k] * g), g,
                batch.genome(k).begin());
  if (batch.count > 0) {
    ThreadEvaluator evaluator(problem, threads);
    evaluator.evaluate(batch);
  }
  ProbeResult out;
  out.evaluated = batch.count;
  for (std::size_t k = 0; k < batch.count; ++k) out.valid += batch.valid[k] ? 1 : 0;
  auto column = [&](std::size_t e) {
    std::vector<double> values;
    for (std::size_t k = 0; k < batch.count; ++k)
      if (batch.valid[k]) values.push_back(batch.extras[k * batch.extra_size + e]);
    return values;
  };
  for (const auto& f : request.figures) {
    const auto values = column(extra_index(info, f));
    out.medians.push_back(values.empty() ? std::nullopt
                                         : std::optional<double>(quantile(values, 0.5)));
  }
  for (const auto& p : request.places) {
    const auto values = column(extra_index(info, p + "_time"));
    if (values.empty()) {
      out.shares.push_back(std::nullopt);
      continue;
    }
    const auto reached =
        std::count_if(values.begin(), values.end(), [](double t) { return t >= 0.0; });
    out.shares.push_back(static_cast<double>(reached) / static_cast<double>(values.size()));
  }
  return out;
}

}  // namespace tessera
