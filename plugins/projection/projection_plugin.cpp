// The `sphere-proj` and `rastrigin-proj` problems as plugins: the C ABI of
// include/tessera/plugin.h around projection_model.hpp. One source, built twice; the compile
// definition TESSERA_PROJECTION_RASTRIGIN selects the objective.
// Options ([problem.options]): dimensions (integer >= 2, default 100); genome_bound (number in
// [5.12, 1e6], default 5.12): the genome box is [-genome_bound, genome_bound]^n. At the default
// the clip of the projection never acts; wider, parameters past 5.12 fold back to 5.12 / x as in
// the published benchmark over an unbounded genome (model::genome_box).
#include <tessera/plugin.h>

#include <cmath>
#include <exception>
#include <memory>
#include <string>

#include "common/plugin_glue.hpp"
#include "projection/projection_model.hpp"

namespace glue = tessera::plugin_glue;
namespace model = tessera::projection;

namespace {

#if TESSERA_PROJECTION_RASTRIGIN
constexpr model::Kind kKind = model::Kind::kRastrigin;
constexpr const char* kName = "rastrigin-proj";
constexpr const char* kFunction = "shifted Rastrigin";
#else
constexpr model::Kind kKind = model::Kind::kSphere;
constexpr const char* kName = "sphere-proj";
constexpr const char* kFunction = "shifted sphere";
#endif

struct ProjectionOptions {
  std::size_t dimensions = 100;
  double genome_bound = model::kBound;
};

ProjectionOptions read_options(const char* text) {
  const toml::table table = glue::parse_options(text);
  glue::check_keys(table, {"dimensions", "genome_bound"});
  ProjectionOptions options;
  options.dimensions =
      static_cast<std::size_t>(glue::integer_option(table, "dimensions", 100, 2, 1000000));
  options.genome_bound =
      glue::number_option(table, "genome_bound", model::kBound, model::kBound, model::kWidestBox);
  return options;
}

}  // namespace

struct tsr_instance {
  ProjectionOptions options;
  double f_max = 1.0;
  glue::MetadataStore metadata;
};

TESSERA_GLUE_STANDARD_EXPORTS(kName)

extern "C" {

TSR_EXPORT tsr_instance* tsr_create(const char* options_toml, char* error, size_t error_size) {
  return glue::create_instance(error, error_size, [&] {
    auto instance = std::make_unique<tsr_instance>();
    instance->options = read_options(options_toml);
    const std::size_t n = instance->options.dimensions;
    instance->f_max = model::objective_max(kKind, n);
    auto& m = instance->metadata;
    m.name = kName;
    m.summary = std::string(kFunction) + ", " + std::to_string(n) +
                " parameters projected onto the sums of their two halves";
    m.genome_lower.assign(n, -instance->options.genome_bound);
    m.genome_upper.assign(n, instance->options.genome_bound);
    m.descriptor_lower = {-model::descriptor_bound(n, 0), -model::descriptor_bound(n, 1)};
    m.descriptor_upper = {model::descriptor_bound(n, 0), model::descriptor_bound(n, 1)};
    m.descriptor_names = {"sum_first_half", "sum_second_half"};
    m.fitness_lower = model::kFitnessLower;
    m.fitness_upper = model::kFitnessUpper;
    m.finish();
    return instance.release();
  });
}

TSR_EXPORT int tsr_evaluate(tsr_instance* instance, size_t count, const double* genomes,
                            double* fitness, double* descriptors, unsigned char* valid,
                            double* /*extras*/, char* /*error*/, size_t /*error_size*/) {
  model::evaluate_batch(kKind, genomes, count, instance->options.dimensions, instance->f_max,
                        fitness, descriptors);
  for (std::size_t k = 0; k < count; ++k)
    valid[k] = std::isfinite(fitness[k]) && std::isfinite(descriptors[2 * k]) &&
               std::isfinite(descriptors[2 * k + 1]);
  return TSR_OK;
}

}  // extern "C"
