// Options of the `linkage` problem ([problem.options] of a run file), read with toml++ by the
// plugin; its traces (`tessera trace`, the report) use the same branch, sampling and units.
//
//   units              "mm" (default) | "cm" | "m" | "in": the unit of every length (a label; the
//                      kinematics are scale-free)
//   ground, crank, coupler, rocker   [lower, upper] link-length bounds of the genome
//   point_distance     [lower, upper] distance of the coupler point from the crank pin A
//   point_angle        [lower, upper] its angle off the coupler line A->B, degrees
//   branch             "open" (default) | "crossed": assembly of the loop
//   samples            crank angles per revolution (default 360, i.e. every degree)
//   transmission_limit degrees; 0 (default) = no rule, L > 0 = infeasible unless every
//                      transmission angle lies in [L, 180 - L] (common practice: 40)
//   path_width, path_height  [lower, upper] descriptor bounds, length units
//   straightness       true | false (default): add the flattest part's straightness descriptor
//   straight_share     share of the crank cycle the flattest part spans (default 0.25)
//   straightness_max   upper descriptor bound of the straightness (band / length, default 0.05)
#pragma once

#include <toml++/toml.h>
#include <cmath>
#include <cstddef>
#include <initializer_list>
#include <string>
#include <string_view>

#include "../common/plugin_glue.hpp"
#include "linkage_model.hpp"

namespace tessera::linkage {

struct Range {
  double lower = 0.0;
  double upper = 0.0;
};

struct Options {
  std::string units = "mm";
  // Genome bounds, defaults sized for a desk-top mechanism in millimetres.
  Range ground{20.0, 200.0};
  Range crank{5.0, 100.0};
  Range coupler{20.0, 200.0};
  Range rocker{20.0, 200.0};
  Range point_distance{0.0, 200.0};
  Range point_angle{-180.0, 180.0};
  // Descriptor bounds.
  Range path_width{0.0, 400.0};
  Range path_height{0.0, 400.0};
  double straightness_max = 0.05;
  Settings settings;
};

inline const char* to_string(Branch branch) {
  return branch == Branch::open ? "open" : "crossed";
}

namespace detail {

using plugin_glue::OptionError;

inline double number_of(const toml::node& node, std::string_view key) {
  if (const auto v = node.value_exact<double>()) return *v;
  if (const auto v = node.value_exact<std::int64_t>()) return static_cast<double>(*v);
  throw OptionError("option '" + std::string(key) + "' must be a number");
}

inline std::string number_text(double v) {
  std::string s = std::to_string(v);
  while (s.size() > 1 && s.back() == '0') s.pop_back();
  if (!s.empty() && s.back() == '.') s.pop_back();
  return s;
}

// A [lower, upper] pair with min_value <= lower < upper <= max_value.
inline Range range_option(const toml::table& t, std::string_view key, Range fallback,
                          double min_value, double max_value, bool open_min = false) {
  const toml::node* node = t.get(key);
  if (node == nullptr) return fallback;
  const toml::array* array = node->as_array();
  if (array == nullptr || array->size() != 2)
    throw OptionError("option '" + std::string(key) + "' must be an array [lower, upper]");
  const Range r{number_of(*array->get(0), key), number_of(*array->get(1), key)};
  const bool low_ok = open_min ? r.lower > min_value : r.lower >= min_value;
  if (!std::isfinite(r.lower) || !std::isfinite(r.upper) || !low_ok || r.upper > max_value ||
      !(r.lower < r.upper))
    throw OptionError("option '" + std::string(key) + "' = [" + number_text(r.lower) + ", " +
                      number_text(r.upper) + "] needs " + number_text(min_value) +
                      (open_min ? " < " : " <= ") + "lower < upper <= " + number_text(max_value));
  return r;
}

inline double number_option(const toml::table& t, std::string_view key, double fallback,
                            double min_value, double max_value) {
  const toml::node* node = t.get(key);
  if (node == nullptr) return fallback;
  const double v = number_of(*node, key);
  if (!std::isfinite(v) || v < min_value || v > max_value)
    throw OptionError("option '" + std::string(key) + "' = " + number_text(v) +
                      " is out of range [" + number_text(min_value) + ", " +
                      number_text(max_value) + "]");
  return v;
}

inline std::string choice_option(const toml::table& t, std::string_view key, std::string fallback,
                                 std::initializer_list<std::string_view> allowed) {
  const toml::node* node = t.get(key);
  if (node == nullptr) return fallback;
  const auto v = node->value_exact<std::string>();
  std::string list;
  for (auto a : allowed) list += (list.empty() ? "" : ", ") + std::string(a);
  if (v)
    for (auto a : allowed)
      if (*v == a) return *v;
  throw OptionError("option '" + std::string(key) + "' must be one of: " + list);
}

inline bool bool_option(const toml::table& t, std::string_view key, bool fallback) {
  const toml::node* node = t.get(key);
  if (node == nullptr) return fallback;
  const auto v = node->value_exact<bool>();
  if (!v) throw OptionError("option '" + std::string(key) + "' must be true or false");
  return *v;
}

}  // namespace detail

// Reads and checks the options; throws plugin_glue::OptionError with a one-line reason.
inline Options read_options(const toml::table& t) {
  using namespace detail;
  plugin_glue::check_keys(
      t, {"units", "ground", "crank", "coupler", "rocker", "point_distance", "point_angle",
          "branch", "samples", "transmission_limit", "path_width", "path_height", "straightness",
          "straight_share", "straightness_max"});
  Options o;
  constexpr double kHuge = 1e9;  // any length a run file could mean
  o.units = choice_option(t, "units", o.units, {"mm", "cm", "m", "in"});
  o.ground = range_option(t, "ground", o.ground, 0.0, kHuge, true);
  o.crank = range_option(t, "crank", o.crank, 0.0, kHuge, true);
  o.coupler = range_option(t, "coupler", o.coupler, 0.0, kHuge, true);
  o.rocker = range_option(t, "rocker", o.rocker, 0.0, kHuge, true);
  o.point_distance = range_option(t, "point_distance", o.point_distance, 0.0, kHuge);
  o.point_angle = range_option(t, "point_angle", o.point_angle, -360.0, 360.0);
  o.path_width = range_option(t, "path_width", o.path_width, 0.0, kHuge);
  o.path_height = range_option(t, "path_height", o.path_height, 0.0, kHuge);
  o.settings.branch = choice_option(t, "branch", "open", {"open", "crossed"}) == "open"
                          ? Branch::open
                          : Branch::crossed;
  o.settings.samples =
      static_cast<std::size_t>(plugin_glue::integer_option(t, "samples", 360, 36, 100000));
  // Below 90: at 90 no linkage could pass; the rule is meant as 40 (common practice).
  o.settings.transmission_limit_deg = number_option(t, "transmission_limit", 0.0, 0.0, 89.0);
  o.settings.straightness = bool_option(t, "straightness", false);
  o.settings.straight_share = number_option(t, "straight_share", 0.25, 0.01, 1.0);
  o.straightness_max = number_option(t, "straightness_max", 0.05, 1e-6, 10.0);
  for (const char* key : {"straight_share", "straightness_max"})
    if (t.contains(key) && !o.settings.straightness)
      throw OptionError(std::string("option '") + key + "' needs straightness = true");
  if (o.settings.straightness &&
      std::lround(o.settings.straight_share * static_cast<double>(o.settings.samples)) < 3)
    throw OptionError("option 'straight_share' spans fewer than 3 of the " +
                      std::to_string(o.settings.samples) + " samples");
  return o;
}

inline Options read_options(const char* text) {
  return read_options(plugin_glue::parse_options(text));
}

}  // namespace tessera::linkage
