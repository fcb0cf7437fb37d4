// A cantilever beam design toy, written as an out-of-tree Tessera plugin.
//
// A steel beam of rectangular section (width b, height h) and length L is clamped at one end and
// carries a point load P at the other. Tessera looks for the lightest beam for every combination
// of reach and tip deflection, so a designer can browse stiff-and-short against long-and-springy
// beams instead of reading off a single optimum.
//
//   genome      b in [0.01, 0.2] m, h in [0.01, 0.3] m, L in [0.5, 3] m
//   descriptor  reach L in [0.5, 3] m; log10 of the tip deflection in metres, in [-7, 2]
//   fitness     minus the mass in kg (lighter is better); lowest: the heaviest beam in the box
//   validity    a beam whose bending stress at the clamp exceeds the allowed stress is infeasible
//
// Euler-Bernoulli beam formulas (standard handbook values, e.g. Roark's Formulas for Stress and
// Strain): tip deflection P L^3 / (3 E I) with I = b h^3 / 12; bending stress at the clamp
// 6 P L / (b h^2).
//
// Options ([problem.options] in a run file): load (N, default 1000), allowed_stress (Pa, default
// 250e6, mild steel yield, from memory).
#include <tessera/plugin.h>

#include <toml++/toml.h>
#include <cmath>
#include <cstdio>
#include <exception>
#include <memory>
#include <string>

namespace {

constexpr double kYoung = 200e9;   // steel, Pa (from memory)
constexpr double kDensity = 7850;  // steel, kg/m^3 (from memory)
const double kLower[3] = {0.01, 0.01, 0.5};
const double kUpper[3] = {0.2, 0.3, 3.0};
const double kDescriptorLower[2] = {0.5, -7.0};
const double kDescriptorUpper[2] = {3.0, 2.0};
const char* const kDescriptorNames[2] = {"reach_m", "log10_deflection_m"};

void write_error(char* error, size_t size, const std::string& text) {
  if (error != nullptr && size > 0) std::snprintf(error, size, "%s", text.c_str());
}

double number_option(const toml::table& options, const char* key, double fallback) {
  const toml::node* node = options.get(key);
  if (node == nullptr) return fallback;
  const auto value = node->value<double>();  // integers are accepted too
  if (!value || !(*value > 0) || !std::isfinite(*value))
    throw std::runtime_error(std::string("option '") + key + "' must be a positive number");
  return *value;
}

}  // namespace

struct tsr_instance {
  double load = 1000.0;
  double allowed_stress = 250e6;
};

extern "C" {

TSR_EXPORT uint32_t tsr_abi_version(void) {
  return TSR_ABI_VERSION;
}

TSR_EXPORT const char* tsr_problem_name(void) {
  return "cantilever";
}

TSR_EXPORT tsr_instance* tsr_create(const char* options_toml, char* error, size_t error_size) {
  try {
    auto instance = std::make_unique<tsr_instance>();
    const toml::table options = toml::parse(options_toml == nullptr ? "" : options_toml);
    for (const auto& [key, value] : options)
      if (key.str() != "load" && key.str() != "allowed_stress")
        throw std::runtime_error("unknown option '" + std::string(key.str()) +
                                 "' (accepted: load, allowed_stress)");
    instance->load = number_option(options, "load", instance->load);
    instance->allowed_stress = number_option(options, "allowed_stress", instance->allowed_stress);
    return instance.release();
  } catch (const std::exception& e) {
    write_error(error, error_size, e.what());  // no exception may cross the C ABI
  }
  return nullptr;
}

TSR_EXPORT void tsr_describe(const tsr_instance* /*instance*/, tsr_metadata* out) {
  out->name = "cantilever";
  out->summary = "cantilever beam: lightest section for each reach and tip deflection";
  out->genome_size = 3;
  out->genome_lower = kLower;
  out->genome_upper = kUpper;
  out->descriptor_size = 2;
  out->descriptor_lower = kDescriptorLower;
  out->descriptor_upper = kDescriptorUpper;
  out->descriptor_names = kDescriptorNames;
  out->fitness_lower = -kDensity * kUpper[0] * kUpper[1] * kUpper[2];
  out->fitness_upper = 0.0;
  out->extra_size = 0;
  out->extra_names = nullptr;
}

TSR_EXPORT int tsr_evaluate(tsr_instance* instance, size_t count, const double* genomes,
                            double* fitness, double* descriptors, unsigned char* valid,
                            double* /*extras*/, char* /*error*/, size_t /*error_size*/) {
  for (size_t k = 0; k < count; ++k) {
    const double b = genomes[3 * k], h = genomes[3 * k + 1], length = genomes[3 * k + 2];
    const double inertia = b * h * h * h / 12.0;
    const double deflection = instance->load * length * length * length / (3.0 * kYoung * inertia);
    const double stress = 6.0 * instance->load * length / (b * h * h);
    fitness[k] = -kDensity * b * h * length;
    descriptors[2 * k] = length;
    descriptors[2 * k + 1] = std::log10(deflection);
    valid[k] = std::isfinite(descriptors[2 * k + 1]) && b > 0 && h > 0 &&
               stress <= instance->allowed_stress;
  }
  return TSR_OK;
}

TSR_EXPORT void tsr_destroy(tsr_instance* instance) {
  delete instance;
}

}  // extern "C"
