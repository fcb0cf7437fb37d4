#include "cli/compare_output.hpp"

#include <cmath>
#include <stdexcept>

#include <nlohmann/json.hpp>

#include "core/base/errors.hpp"
#include "io/number_text.hpp"
#include "io/table_output.hpp"
#include "report/compare_charts.hpp"
#include "report/compare_report.hpp"

namespace tessera::cli {
namespace {

using Json = nlohmann::ordered_json;

std::vector<TableColumn> columns(std::initializer_list<const char*> names) {
  std::vector<TableColumn> out;
  for (const char* n : names) out.push_back(TableColumn{n, {}});
  return out;
}

Json number(double v) {
  return std::isfinite(v) ? Json(v) : Json(nullptr);
}

// What the text tables show for a missing figure.
constexpr std::string_view kMissing = "-";

std::string text_number(double v) {
  return figure_text(v, kMissing);
}

std::string text_p(double v) {
  return p_value_text(v, kMissing);
}

void write_text(std::ostream& out, const ComparisonResult& r) {
  bool first = true;
  for (const MeasureComparison& m : r.measures) {
    if (!first) out << "\n";
    first = false;
    out << m.measure << ": " << (m.binary ? "Fisher's exact test" : "Mann-Whitney U (two-sided)")
        << ", Holm over " << m.pairs.size() << (m.pairs.size() == 1 ? " pair" : " pairs")
        << (m.censored ? "; censored values ranked at their budget" : "") << "\n";
    Table groups;
    groups.columns = columns({"  group", "n", "missing"});
    if (m.censored) groups.columns.push_back(TableColumn{"censored", {}});
    if (m.binary) groups.columns.push_back(TableColumn{"successes", {}});
    for (const char* c : {"median", "q1", "q3"}) groups.columns.push_back(TableColumn{c, {}});
    for (const GroupSummary& g : m.groups) {
      std::vector<TableValue> row = {"  " + g.group, static_cast<std::int64_t>(g.n),
                                     static_cast<std::int64_t>(g.n_missing)};
      if (m.censored) row.push_back(static_cast<std::int64_t>(g.n_censored));
      if (m.binary) row.push_back(static_cast<std::int64_t>(g.successes));
      for (double v : {g.median, g.q1, g.q3}) row.push_back(text_number(v));
      groups.rows.push_back(std::move(row));
    }

    write_table_text(out, groups);
    if (m.pairs.empty()) continue;
    Table pairs;
    pairs.columns = columns({"  a", "b", "n_a", "n_b", "U", "p", "p_holm", "", "A12", "effect"});
    for (const PairComparison& p : m.pairs)
      pairs.rows.push_back({"  " + p.a, p.b, static_cast<std::int64_t>(p.n_a),
                            static_cast<std::int64_t>(p.n_b), text_number(p.u), text_p(p.p),
                            text_p(p.p_holm), significance_stars(p.p_holm, r.alpha),
                            text_number(p.a12), p.magnitude});
    write_table_text(out, pairs);
  }
  for (const CurveComparison& c : r.curves) {
    if (!first) out << "\n";
    first = false;
    std::size_t tested = 0;
    for (const CurveTest& t : c.tests)
      if (t.group == c.tests.front().group) ++tested;
    out << c.measure << " over evaluations: " << c.checkpoints.size() << " checkpoints; against "
        << c.reference << " at " << tested
        << " of them (Holm over the checkpoints of each group)\n";
    if (c.checkpoints.empty()) continue;
    const std::size_t last = c.checkpoints.size() - 1;
    Table t;
    t.columns = columns({"  group", "evaluations", "n", "median", "q1", "q3", "differs at"});
    for (const CurveGroup& g : c.groups) {
      std::string at;
      for (const CurveMark& mark : c.marks)
        if (mark.group == g.group)
          at += (at.empty() ? "" : " ") + std::to_string(c.checkpoints[mark.checkpoint]);
      if (g.group == c.reference) at = "(reference)";
      t.rows.push_back({"  " + g.group, static_cast<std::int64_t>(c.checkpoints[last]),
                        static_cast<std::int64_t>(g.n[last]), text_number(g.median[last]),
                        text_number(g.q1[last]), text_number(g.q3[last]),
                        at.empty() ? std::string("-") : at});
    }
    write_table_text(out, t);
  }
}

Json to_json(const ComparisonResult& r) {
  Json doc = Json::object();
  doc["groups"] = r.groups;
  doc["reference"] = r.reference;
  doc["alpha"] = r.alpha;
  Json measures = Json::array();
  Json comparisons = Json::array();
  for (const MeasureComparison& m : r.measures) {
    Json jm = Json::object();
    jm["measure"] = m.measure;
    jm["test"] = m.binary ? "fisher exact" : "mann-whitney";
    jm["binary"] = m.binary;
    jm["censored"] = m.censored;
    Json groups = Json::array();
    for (const GroupSummary& g : m.groups) {
      Json jg = Json::object();
      jg["group"] = g.group;
      jg["n"] = g.n;
      jg["n_missing"] = g.n_missing;
      jg["n_censored"] = g.n_censored;
      if (m.binary) jg["successes"] = g.successes;
      jg["median"] = number(g.median);
      jg["q1"] = number(g.q1);
      jg["q3"] = number(g.q3);
      groups.push_back(std::move(jg));
    }
    jm["groups"] = std::move(groups);
    measures.push_back(std::move(jm));
    for (const PairComparison& p : m.pairs) {
      Json jp = Json::object();
      jp["measure"] = p.measure;
      jp["a"] = p.a;
      jp["b"] = p.b;
      jp["n_a"] = p.n_a;
      jp["n_b"] = p.n_b;
      jp["u"] = number(p.u);
      jp["p"] = number(p.p);
      jp["p_holm"] = number(p.p_holm);
      jp["a12"] = number(p.a12);
      jp["magnitude"] = p.magnitude;
      jp["test"] = p.test;
      comparisons.push_back(std::move(jp));
    }
  }
  doc["measures"] = std::move(measures);
  doc["comparisons"] = std::move(comparisons);
  Json curves = Json::array();
  for (const CurveComparison& c : r.curves) {
    Json jc = Json::object();
    jc["measure"] = c.measure;
    jc["reference"] = c.reference;
    jc["evaluations"] = c.checkpoints;
    Json groups = Json::array();
    for (const CurveGroup& g : c.groups) {
      Json jg = Json::object();
      jg["group"] = g.group;
      jg["n"] = g.n;
      Json med = Json::array(), q1 = Json::array(), q3 = Json::array();
      for (std::size_t i = 0; i < g.median.size(); ++i) {
        med.push_back(number(g.median[i]));
        q1.push_back(number(g.q1[i]));
        q3.push_back(number(g.q3[i]));
      }
      jg["median"] = std::move(med);
      jg["q1"] = std::move(q1);
      jg["q3"] = std::move(q3);
      groups.push_back(std::move(jg));
    }
    jc["groups"] = std::move(groups);
    Json tests = Json::array();
    for (const CurveTest& t : c.tests) {
      Json jt = Json::object();
      jt["group"] = t.group;
      jt["evaluations"] = c.checkpoints[t.checkpoint];
      jt["n_group"] = t.n_group;
      jt["n_reference"] = t.n_reference;
      jt["u"] = number(t.u);
      jt["p"] = number(t.p);
      jt["p_holm"] = number(t.p_holm);
      jt["a12"] = number(t.a12);
      jt["significant"] = !std::isnan(t.p_holm) && t.p_holm < r.alpha;
      tests.push_back(std::move(jt));
    }
    jc["tests"] = std::move(tests);
    curves.push_back(std::move(jc));
  }
  doc["curves"] = std::move(curves);
  return doc;
}

// Long ("tidy") CSV: one statistic per row, keyed by measure, group a, group b (pairs and curve
// tests) and evaluations (curves); missing statistics are empty fields.
void write_csv(std::ostream& out, const ComparisonResult& r) {
  Table t;
  t.columns = columns({"measure", "a", "b", "evaluations", "statistic", "value"});
  const auto add = [&](const std::string& measure, const std::string& a, const std::string& b,
                       const std::string& evaluations, const std::string& statistic, double v) {
    t.rows.push_back({measure, a, b, evaluations, statistic,
                      std::isfinite(v) ? exact_number(v) : std::string()});
  };
  for (const MeasureComparison& m : r.measures) {
    for (const GroupSummary& g : m.groups) {
      add(m.measure, g.group, "", "", "n", static_cast<double>(g.n));
      add(m.measure, g.group, "", "", "n_missing", static_cast<double>(g.n_missing));
      add(m.measure, g.group, "", "", "n_censored", static_cast<double>(g.n_censored));
      if (m.binary) add(m.measure, g.group, "", "", "successes", static_cast<double>(g.successes));
      add(m.measure, g.group, "", "", "median", g.median);
      add(m.measure, g.group, "", "", "q1", g.q1);
      add(m.measure, g.group, "", "", "q3", g.q3);
    }
    for (const PairComparison& p : m.pairs) {
      add(m.measure, p.a, p.b, "", "n_a", static_cast<double>(p.n_a));
      add(m.measure, p.a, p.b, "", "n_b", static_cast<double>(p.n_b));
      add(m.measure, p.a, p.b, "", "u", p.u);
      add(m.measure, p.a, p.b, "", "p", p.p);
      add(m.measure, p.a, p.b, "", "p_holm", p.p_holm);
      add(m.measure, p.a, p.b, "", "a12", p.a12);
    }
  }
  for (const CurveComparison& c : r.curves) {
    for (const CurveGroup& g : c.groups)
      for (std::size_t i = 0; i < c.checkpoints.size(); ++i) {
        const std::string e = std::to_string(c.checkpoints[i]);
        add(c.measure, g.group, "", e, "n", static_cast<double>(g.n[i]));
        add(c.measure, g.group, "", e, "median", g.median[i]);
        add(c.measure, g.group, "", e, "q1", g.q1[i]);
        add(c.measure, g.group, "", e, "q3", g.q3[i]);
      }
    for (const CurveTest& test : c.tests) {
      const std::string e = std::to_string(c.checkpoints[test.checkpoint]);
      add(c.measure, test.group, c.reference, e, "u", test.u);
      add(c.measure, test.group, c.reference, e, "p", test.p);
      add(c.measure, test.group, c.reference, e, "p_holm", test.p_holm);
      add(c.measure, test.group, c.reference, e, "a12", test.a12);
    }
  }
  write_table_csv(out, t);
}

}  // namespace

ComparisonResult write_comparison(std::ostream& out, const ObservationTable& table,
                                  const CompareOutputOptions& options) {
  if (options.format != "text" && options.format != "json" && options.format != "csv")
    throw InputError("--format must be text, json or csv, not '" + options.format + "'");
  ComparisonOptions stats;
  stats.groups = options.groups;
  stats.measures = options.measures;
  stats.reference = options.reference;
  ComparisonResult result;
  try {
    result = compare_groups(table, stats);
  } catch (const std::invalid_argument& e) {
    throw InputError(std::string("compare: ") + e.what());
  }
  if (result.measures.empty() && result.curves.empty())
    throw InputError("compare: no measure to compare");
  // The report is built in memory before anything is printed, so a refusal prints nothing.
  if (!options.report_dir.empty()) {
    CompareReportSettings settings;
    settings.title = options.title;
    write_report_files(options.report_dir, build_compare_report(result, settings));
  }
  if (options.format == "json")
    out << to_json(result).dump(2) << "\n";
  else if (options.format == "csv")
    write_csv(out, result);
  else
    write_text(out, result);
  return result;
}

}  // namespace tessera::cli
