#include "core/stats/comparison.hpp"

#include <algorithm>
#include <cmath>
#include <map>
#include <stdexcept>

#include "core/stats/effect_size.hpp"
#include "core/stats/fisher_exact.hpp"
#include "core/stats/holm.hpp"
#include "core/stats/mann_whitney.hpp"
#include "core/stats/quartiles.hpp"

namespace tessera {
namespace {

const double kNaN = std::nan("");

void add_unique(std::vector<std::string>& list, const std::string& item) {
  if (std::find(list.begin(), list.end(), item) == list.end()) list.push_back(item);
}

bool contains(const std::vector<std::string>& list, const std::string& item) {
  return std::find(list.begin(), list.end(), item) != list.end();
}

// Up to `count` indices spread evenly over [0, size), always with the first and the last.
std::vector<std::size_t> spread_indices(std::size_t size, std::size_t count) {
  std::vector<std::size_t> out;
  if (size == 0 || count == 0) return out;
  if (size <= count) {
    for (std::size_t i = 0; i < size; ++i) out.push_back(i);
    return out;
  }
  if (count == 1) return {size - 1};
  for (std::size_t i = 0; i < count; ++i) {
    const double at =
        static_cast<double>(i) * static_cast<double>(size - 1) / static_cast<double>(count - 1);
    const auto index = static_cast<std::size_t>(std::llround(at));
    if (out.empty() || out.back() != index) out.push_back(index);
  }
  return out;
}

struct PairTest {
  double u = kNaN, p = kNaN, a12 = kNaN;
  std::string test;
};

PairTest test_pair(const std::vector<double>& a, const std::vector<double>& b) {
  PairTest t;
  if (a.empty() || b.empty()) return t;
  const MannWhitneyResult r = mann_whitney_u(a, b);
  t.u = r.u;
  t.p = r.p;
  t.a12 = vargha_delaney_a12(a, b);
  t.test = r.method == MannWhitneyMethod::exact ? "mann-whitney exact" : "mann-whitney asymptotic";
  return t;
}

MeasureComparison compare_measure(const ObservationTable& table, const std::string& measure,
                                  const std::vector<std::string>& groups) {
  MeasureComparison mc;
  mc.measure = measure;
  for (const std::string& g : groups) {
    GroupSummary s;
    s.group = g;
    for (const Observation& o : table.finals) {
      if (o.measure != measure || o.group != g) continue;
      if (!o.value || std::isnan(*o.value)) {
        ++s.n_missing;
        continue;
      }
      s.values.push_back(*o.value);
      s.censored.push_back(o.censored);
      if (o.censored) ++s.n_censored;
      if (*o.value == 1.0) ++s.successes;
    }
    s.n = s.values.size();
    const Quartiles q = quartiles(s.values);
    s.q1 = q.q1;
    s.median = q.median;
    s.q3 = q.q3;
    if (s.n_censored > 0) mc.censored = true;
    mc.groups.push_back(std::move(s));
  }
  mc.binary = is_success_measure(measure);
  for (const GroupSummary& s : mc.groups)
    for (double v : s.values)
      if (v != 0.0 && v != 1.0) mc.binary = false;

  std::vector<double> ps;
  for (std::size_t i = 0; i < mc.groups.size(); ++i) {
    for (std::size_t j = i + 1; j < mc.groups.size(); ++j) {
      const GroupSummary& a = mc.groups[i];
      const GroupSummary& b = mc.groups[j];
      PairComparison pc;
      pc.measure = measure;
      pc.a = a.group;
      pc.b = b.group;
      pc.n_a = a.n;
      pc.n_b = b.n;
      const PairTest t = test_pair(a.values, b.values);
      pc.u = t.u;
      pc.p = t.p;
      pc.a12 = t.a12;
      pc.test = t.test;
      if (mc.binary && a.n > 0 && b.n > 0) {
        pc.p = fisher_exact_p(a.successes, a.n - a.successes, b.successes, b.n - b.successes);
        pc.test = "fisher exact";
      }
      pc.magnitude = a12_magnitude(pc.a12);
      ps.push_back(pc.p);
      mc.pairs.push_back(std::move(pc));
    }
  }
  const std::vector<double> adjusted = holm_adjust(ps);
  for (std::size_t k = 0; k < mc.pairs.size(); ++k) mc.pairs[k].p_holm = adjusted[k];
  return mc;
}

CurveComparison compare_curve(const ObservationTable& table, const std::string& measure,
                              const std::vector<std::string>& groups,
                              const ComparisonOptions& options, const std::string& reference) {
  CurveComparison cc;
  cc.measure = measure;
  cc.reference = reference;
  // Runs of each group, points in rising evaluations.
  std::map<std::string, std::map<std::string, std::vector<const CurvePoint*>>> runs;
  std::vector<std::uint64_t> all;
  for (const CurvePoint& p : table.curves) {
    if (p.measure != measure) continue;
    runs[p.group][p.run].push_back(&p);
    all.push_back(p.evaluations);
  }
  for (auto& [g, by_run] : runs)
    for (auto& [r, points] : by_run)
      std::stable_sort(points.begin(), points.end(), [](const CurvePoint* a, const CurvePoint* b) {
        return a->evaluations < b->evaluations;
      });
  std::sort(all.begin(), all.end());
  all.erase(std::unique(all.begin(), all.end()), all.end());
  for (std::size_t i : spread_indices(all.size(), options.curve_points))
    cc.checkpoints.push_back(all[i]);

  // values[g][c] = the runs' values of group g at checkpoint c.
  std::vector<std::vector<std::vector<double>>> values(groups.size());
  for (std::size_t g = 0; g < groups.size(); ++g) {
    values[g].resize(cc.checkpoints.size());
    CurveGroup cg;
    cg.group = groups[g];
    const auto found = runs.find(groups[g]);
    for (std::size_t c = 0; c < cc.checkpoints.size(); ++c) {
      if (found != runs.end())
        for (const auto& [r, points] : found->second)
          if (const auto v = curve_value_at(points, cc.checkpoints[c])) values[g][c].push_back(*v);
      const Quartiles q = quartiles(values[g][c]);
      cg.n.push_back(values[g][c].size());
      cg.median.push_back(q.median);
      cg.q1.push_back(q.q1);
      cg.q3.push_back(q.q3);
    }
    cc.groups.push_back(std::move(cg));
  }

  const auto ref =
      static_cast<std::size_t>(std::find(groups.begin(), groups.end(), reference) - groups.begin());
  const std::vector<std::size_t> tested =
      spread_indices(cc.checkpoints.size(), options.tested_checkpoints);
  for (std::size_t g = 0; g < groups.size(); ++g) {
    if (g == ref) continue;
    std::vector<CurveTest> family;
    std::vector<double> ps;
    for (std::size_t c : tested) {
      CurveTest t;
      t.group = groups[g];
      t.checkpoint = c;
      t.n_group = values[g][c].size();
      t.n_reference = values[ref][c].size();
      const PairTest pt = test_pair(values[g][c], values[ref][c]);
      t.u = pt.u;
      t.p = pt.p;
      t.a12 = pt.a12;
      ps.push_back(t.p);
      family.push_back(t);
    }
    const std::vector<double> adjusted = holm_adjust(ps);
    for (std::size_t k = 0; k < family.size(); ++k) {
      family[k].p_holm = adjusted[k];
      if (adjusted[k] < options.alpha)
        cc.marks.push_back(
            {family[k].group, family[k].checkpoint, family[k].p, adjusted[k], family[k].a12});
      cc.tests.push_back(family[k]);
    }
  }
  return cc;
}

}  // namespace

bool is_success_measure(const std::string& measure) {
  return measure == "success" || measure.starts_with("success.") || measure.ends_with(".success");
}

std::optional<double> curve_value_at(const std::vector<const CurvePoint*>& run_points,
                                     std::uint64_t evaluations) {
  if (run_points.empty() || evaluations < run_points.front()->evaluations ||
      evaluations > run_points.back()->evaluations)
    return std::nullopt;
  const auto after =
      std::upper_bound(run_points.begin(), run_points.end(), evaluations,
                       [](std::uint64_t e, const CurvePoint* p) { return e < p->evaluations; });
  return (*(after - 1))->value;
}

ComparisonResult compare_groups(const ObservationTable& table, const ComparisonOptions& options) {
  ComparisonResult result;
  result.alpha = options.alpha;
  std::vector<std::string> present_groups, final_measures, curve_measures;
  for (const Observation& o : table.finals) {
    add_unique(present_groups, o.group);
    add_unique(final_measures, o.measure);
  }
  for (const CurvePoint& p : table.curves) {
    add_unique(present_groups, p.group);
    add_unique(curve_measures, p.measure);
  }
  result.groups = options.groups.empty() ? present_groups : options.groups;
  for (const std::string& g : options.groups)
    if (!contains(present_groups, g)) throw std::invalid_argument("group '" + g + "' has no runs");
  result.reference = options.reference.empty()
                         ? (result.groups.empty() ? std::string() : result.groups.front())
                         : options.reference;
  if (!options.reference.empty() && !contains(result.groups, options.reference))
    throw std::invalid_argument("reference group '" + options.reference + "' is not a group");
  for (const std::string& m : options.measures)
    if (!contains(final_measures, m) && !contains(curve_measures, m))
      throw std::invalid_argument("measure '" + m + "' is in no run");
  const auto wanted = [&](const std::string& m) {
    return options.measures.empty() || contains(options.measures, m);
  };
  // Measures in the order asked for, else in table order.
  const std::vector<std::string>& order =
      options.measures.empty() ? final_measures : options.measures;
  for (const std::string& m : order)
    if (contains(final_measures, m))
      result.measures.push_back(compare_measure(table, m, result.groups));
  const std::vector<std::string>& curve_order =
      options.measures.empty() ? curve_measures : options.measures;
  for (const std::string& m : curve_order)
    if (contains(curve_measures, m) && wanted(m))
      result.curves.push_back(compare_curve(table, m, result.groups, options, result.reference));
  return result;
}

}  // namespace tessera
