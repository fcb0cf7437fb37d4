// The `linkage` problem as a plugin: the C ABI of include/tessera/plugin.h around
// linkage_model.hpp (kinematics) and linkage_options.hpp (run-file options, documented there).
//
// Fitness: worst transmission angle over the crank cycle, 90 - max |mu - 90| degrees, in [0, 90].
// Descriptor: width and height of the coupler path in the ground frame, plus the straightness of
// its flattest part when `straightness = true`.
// Extras: infeasible_reason (0 feasible, 1 not Grashof, 2 crank not the shortest link, 3 loop
// open at a sample, 4 transmission angle outside the rule, 5 bad length: see linkage::Reason),
// mu_min and mu_max (degrees; 0 when infeasible), and with straightness on, the flattest part's
// band width and length (length units).
#include <tessera/plugin.h>

#include <exception>
#include <limits>
#include <memory>
#include <stdexcept>
#include <string>
#include <vector>

#include "common/plugin_glue.hpp"
#include "linkage/linkage_model.hpp"
#include "linkage/linkage_options.hpp"

namespace glue = tessera::plugin_glue;
namespace model = tessera::linkage;

namespace {

constexpr const char* kName = "linkage";

}  // namespace

struct tsr_instance {
  model::Options options;
  std::unique_ptr<model::Evaluator> evaluator;
  glue::MetadataStore metadata;
};

TESSERA_GLUE_STANDARD_EXPORTS(kName)

extern "C" {

TSR_EXPORT tsr_instance* tsr_create(const char* options_toml, char* error, size_t error_size) {
  return glue::create_instance(error, error_size, [&] {
    auto instance = std::make_unique<tsr_instance>();
    instance->options = model::read_options(options_toml);
    const model::Options& o = instance->options;
    instance->evaluator = std::make_unique<model::Evaluator>(o.settings);
    auto& m = instance->metadata;
    m.name = kName;
    m.summary = "four-bar crank-rocker (" + std::string(model::to_string(o.settings.branch)) +
                " branch, lengths in " + o.units + "): coupler-path size" +
                (o.settings.straightness ? " and straightness" : "") +
                ", fitness = worst transmission angle";
    m.genome_lower = {o.ground.lower, o.crank.lower,          o.coupler.lower,
                      o.rocker.lower, o.point_distance.lower, o.point_angle.lower};
    m.genome_upper = {o.ground.upper, o.crank.upper,          o.coupler.upper,
                      o.rocker.upper, o.point_distance.upper, o.point_angle.upper};
    m.descriptor_lower = {o.path_width.lower, o.path_height.lower};
    m.descriptor_upper = {o.path_width.upper, o.path_height.upper};
    m.descriptor_names = {"path_width", "path_height"};
    m.extra_names = {"infeasible_reason", "mu_min", "mu_max"};
    if (o.settings.straightness) {
      m.descriptor_lower.push_back(0.0);
      m.descriptor_upper.push_back(o.straightness_max);
      m.descriptor_names.push_back("straightness");
      m.extra_names.push_back("straight_band");
      m.extra_names.push_back("straight_length");
    }
    m.fitness_lower = 0.0;
    m.fitness_upper = 90.0;
    m.finish();
    return instance.release();
  });
}

TSR_EXPORT int tsr_evaluate(tsr_instance* instance, size_t count, const double* genomes,
                            double* fitness, double* descriptors, unsigned char* valid,
                            double* extras, char* /*error*/, size_t /*error_size*/) {
  const bool straight = instance->options.settings.straightness;
  const std::size_t d = straight ? 3 : 2;
  const std::size_t e = straight ? 5 : 3;
  constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
  for (std::size_t k = 0; k < count; ++k) {
    const model::Evaluation r = instance->evaluator->evaluate(genomes + k * model::kGenomeSize);
    const bool ok = r.reason == model::kFeasible;
    valid[k] = ok ? 1 : 0;
    // Infeasible rows carry NaN so that nothing can mistake them for measurements.
    fitness[k] = ok ? r.fitness : kNaN;
    double* desc = descriptors + k * d;
    desc[0] = ok ? r.width : kNaN;
    desc[1] = ok ? r.height : kNaN;
    if (straight) desc[2] = ok ? r.flattest.ratio : kNaN;
    if (extras != nullptr) {
      double* x = extras + k * e;
      x[0] = static_cast<double>(r.reason);
      // The transmission figures are known for a closed loop even when the rule rejects it.
      const bool measured = ok || r.reason == model::kTransmission;
      x[1] = measured ? r.mu_min_deg : 0.0;
      x[2] = measured ? r.mu_max_deg : 0.0;
      if (straight) {
        x[3] = measured ? r.flattest.band : 0.0;
        x[4] = measured ? r.flattest.length : 0.0;
      }
    }
  }
  return TSR_OK;
}

}  // extern "C"

// Figures: the fixed pivot O2 (O4 depends on the genome's ground length, so it is in the trace);
// a trace is every joint over one crank revolution at the run's sampling, the links at a crank
// angle of 60 degrees and the transmission angle, with the kinematics-only caution.
extern "C" {

TSR_EXPORT int tsr_scene(tsr_instance* instance, tsr_figure* figure, char* error,
                         size_t error_size) {
  return glue::write_figure(figure, error, error_size, [&](glue::FigureBuilder& f) {
    f.note("units", instance->options.units);
    f.add(TSR_POINTS, TSR_STYLE_ANCHOR, "O2", "x,y", {0.0, 0.0});
  });
}

TSR_EXPORT int tsr_trace(tsr_instance* instance, const double* genome, tsr_figure* figure,
                         char* error, size_t error_size) {
  return glue::write_figure(figure, error, error_size, [&](glue::FigureBuilder& f) {
    const model::Options& o = instance->options;
    const model::Dimensions m = model::Dimensions::from_genome(genome);
    const auto poses = model::trace(m, o.settings.branch, o.settings.samples);
    if (poses.empty())
      throw std::runtime_error("the linkage does not assemble over a full crank revolution");
    std::vector<double> a, b, p, mu;
    for (const auto& pose : poses) {
      const double deg = pose.crank_angle / model::kRadPerDeg;
      a.insert(a.end(), {deg, pose.ax, pose.ay});
      b.insert(b.end(), {deg, pose.bx, pose.by});
      p.insert(p.end(), {deg, pose.px, pose.py});
      mu.insert(mu.end(), {deg, pose.transmission_angle_deg()});
    }
    const model::Pose& s = poses[poses.size() / 6];
    f.note("units", o.units + ", degrees");
    f.note("branch", model::to_string(o.settings.branch));
    f.note("frame", "O2 = (0, 0), O4 = (ground, 0); crank angle from +x, counter-clockwise");
    f.note("caution",
           "the transmission-angle and Grashof checks are kinematic only; loads, stresses, "
           "tolerances and the machine-safety standards that apply where the mechanism is used "
           "are the designer's to check");
    f.add(TSR_POINTS, TSR_STYLE_ANCHOR, "ground pivots", "x,y", {0.0, 0.0, m.ground, 0.0});
    f.add(TSR_POLYLINE, TSR_STYLE_LINE, "coupler point", "crank_deg,x,y", p, TSR_FLAG_CLOSED);
    f.add(TSR_POLYLINE, TSR_STYLE_GUIDE, "crank pin", "crank_deg,x,y", a, TSR_FLAG_CLOSED);
    f.add(TSR_POLYLINE, TSR_STYLE_GUIDE, "rocker pin", "crank_deg,x,y", b);
    // O2-A-B-P-A-B-O4: crank, the coupler plate A-B-P, rocker.
    f.add(TSR_POLYLINE, TSR_STYLE_BODY, "links", "x,y",
          {0.0, 0.0, s.ax, s.ay, s.bx, s.by, s.px, s.py, s.ax, s.ay, s.bx, s.by, m.ground, 0.0});
    f.add(TSR_SERIES, TSR_STYLE_LINE, "transmission angle", "crank_deg,mu_deg", mu);
  });
}

}  // extern "C"
