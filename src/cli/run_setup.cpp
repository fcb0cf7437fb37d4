#include "cli/run_setup.hpp"

#include <filesystem>
#include <stdexcept>

#include "cli/resource_checks.hpp"
#include "core/base/errors.hpp"
#include "core/search/emitter_mixture.hpp"
#include "core/search/map_elites.hpp"
#include "core/search/population_search.hpp"
#include "core/search/variation_emitter.hpp"
#include "eval/problem_factory.hpp"
#include "io/archive_file.hpp"
#include "io/cvt_cache.hpp"

namespace tessera::cli {
namespace {

std::shared_ptr<const DescriptorSpace> build_space(const RunConfig& config, const ProblemInfo& info,
                                                   std::string& note) {
  const Bounds& bounds = info.descriptor;
  if (config.space.kind == "grid") {
    auto resolution = config.space.resolution;
    if (resolution.size() == 1 && bounds.size() > 1)
      resolution.assign(bounds.size(), resolution[0]);
    if (resolution.size() != bounds.size())
      throw InputError(config.source +
                       ": key 'space.resolution': " + std::to_string(resolution.size()) +
                       " values for the " + std::to_string(bounds.size()) +
                       " descriptor dimensions of '" + info.name + "'");
    try {
      return std::make_shared<GridSpace>(bounds, info.descriptor_names, resolution);
    } catch (const std::invalid_argument& e) {
      throw InputError(config.source + ": key 'space.resolution': " + e.what());
    }
  }
  std::error_code ec;
  const bool cached = std::filesystem::exists(cvt_cache_path(bounds, config.space.cvt), ec);
  check_cvt_build(config.space.cvt, bounds.size(), cached, config.source);
  auto centroids = load_or_compute_cvt(bounds, config.space.cvt, &note);
  return std::make_shared<CvtSpace>(bounds, info.descriptor_names, std::move(centroids));
}

// The elites of the archive named by search.start_from, as the genomes the search starts from.
std::shared_ptr<const StartGenomes> start_genomes(const RunConfig& config,
                                                  const ProblemInfo& info) {
  const std::string key = config.source + ": key 'search.start_from': ";
  ArchiveSnapshot source;
  try {
    source = read_archive_file(config.start_from);
  } catch (const InputError& e) {
    throw InputError(key + e.what());
  }
  if (source.elite_count() == 0) throw InputError(key + config.start_from + " holds no elites");
  if (source.genome_size() != info.genome_size())
    throw InputError(key + config.start_from + ": its elites have " +
                     std::to_string(source.genome_size()) + " parameters, problem '" + info.name +
                     "' takes " + std::to_string(info.genome_size()));
  auto start = std::make_shared<StartGenomes>();
  start->genomes = std::move(source.genome);
  start->count = source.elite_count();
  start->resample = config.start_resample;
  return start;
}

}  // namespace

PreparedRun prepare_run(RunConfig config, std::size_t threads, const std::string& log_path,
                        const ArchiveSnapshot* saved) {
  check_threads(threads);
  PreparedRun run;
  config.problem.log_path = log_path;
  run.problem = open_problem(config.problem);  // its errors name the run file already
  const ProblemInfo& info = run.problem->info();
  std::shared_ptr<const DescriptorSpace> space;
  if (saved && saved->resume)
    for (const auto& [key, count] : saved->resume->counters)
      if (key.rfind("failed:", 0) == 0) run.earlier_failures[key] = count;
  // Archives store the space their elites live in (population searches: the reference map);
  // format 1 population archives stored an unstructured one, and their reference space (the
  // [space] of the stored run file) is rebuilt, deterministically, from the configuration.
  if (saved && saved->space_kind != "unstructured") {
    try {
      space = space_from_snapshot(*saved);
    } catch (const std::invalid_argument& e) {
      throw InputError(config.source + ": " + e.what());
    }
  } else {
    space = build_space(config, info, run.space_note);
  }
  if (!config.start_from.empty()) config.search.start = start_genomes(config, info);
  EvaluateFn evaluate;
  if (cluster::active()) {
    evaluate =
        cluster::distributed_evaluator({config.resolved_toml, config.base_dir, log_path, threads});
  } else {
    run.evaluator = std::make_shared<ThreadEvaluator>(run.problem, threads);
    auto evaluator = run.evaluator;
    evaluate = [evaluator](Batch& batch) { evaluator->evaluate(batch); };
  }
  if (config.algorithm == "map-elites") {
    std::unique_ptr<Emitter> emitter;
    try {
      if (config.emitters.empty())
        emitter = std::make_unique<VariationEmitter>(config.variation);
      else
        emitter = make_emitter_mixture(config.emitters, info.genome.size());
    } catch (const std::invalid_argument& e) {
      throw InputError(config.source + ": key 'search.emitters': " + e.what());
    }
    auto search =
        std::make_unique<MapElitesSearch>(config.search, space, info.genome, info.fitness_lower,
                                          std::move(emitter), evaluate, info.extra_names.size());
    // In-process plugins are evaluated where their candidates are made; external workers keep
    // whole batches, which they spread over their processes.
    if (run.evaluator && config.problem.kind == "plugin") {
      auto evaluator = run.evaluator;
      search->set_range_evaluator([evaluator](Batch& batch, std::size_t first, std::size_t count) {
        evaluator->evaluate_range(batch, first, count);
      });
    }
    run.search = std::move(search);
  } else if (is_population_algorithm(config.algorithm)) {
    try {
      run.search = std::make_unique<PopulationSearch>(
          parse_population_algorithm(config.algorithm), config.search, config.population,
          config.variation, space, info.genome, info.fitness_lower, evaluate,
          info.extra_names.size());
    } catch (const std::invalid_argument& e) {
      throw InputError(config.source + ": " + e.what());
    }
  } else {
    throw InputError(config.source + ": key 'search.algorithm': '" + config.algorithm +
                     "' is not available in this build");
  }
  run.config = std::move(config);
  return run;
}

std::shared_ptr<const Problem> open_worker_problem(const cluster::WorkerSetup& setup) {
  const std::string source = "rank " + std::to_string(cluster::rank()) + " [stored run file]";
  RunConfig config = parse_run_text(setup.config_text, source, setup.base_dir);
  config.problem.log_path = setup.log_path;
  return open_problem(config.problem);
}

ArchiveSnapshot snapshot_of(const PreparedRun& run) {
  ArchiveSnapshot out;
  run.search->save(out);
  out.problem = run.problem->info().name;
  out.extra_names = run.problem->info().extra_names;
  out.config = run.config.resolved_toml;
  out.seed = run.config.search.seed;
  out.evaluations = run.search->counters().evaluations;
  out.tool_version = TESSERA_VERSION;
  for (const auto& [key, count] : run.earlier_failures) out.resume->counters[key] = count;
  for (const auto& [reason, count] : run.problem->failure_counts())
    out.resume->counters["failed:" + reason] += count;
  return out;
}

}  // namespace tessera::cli
