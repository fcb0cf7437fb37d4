// Building blocks of the report and the selection commands, each against a published rule:
// the colour map's lightness (CIE L*, CIE 15:2004, from sRGB per IEC 61966-2-1), the PNG file
// layout (PNG specification, ISO/IEC 15948, with CRC-32 of ISO 3309 written out here), CSV quoting
// (RFC 4180), the targets file rules of io/targets_csv.hpp and the printf rules of the figures in
// tables.
#include <unistd.h>
#include <zlib.h>
#include <catch2/catch.hpp>

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include "core/base/errors.hpp"
#include "core/stats/comparison.hpp"
#include "io/number_text.hpp"
#include "io/table_output.hpp"
#include "io/targets_csv.hpp"
#include "report/colormap.hpp"
#include "report/compare_charts.hpp"
#include "report/compare_report.hpp"
#include "report/heatmap.hpp"
#include "report/png_image.hpp"
#include "report/svg_chart.hpp"

namespace {

double lightness(tessera::Rgb c) {
  const auto linear = [](double v) {
    v /= 255.0;
    return v <= 0.04045 ? v / 12.92 : std::pow((v + 0.055) / 1.055, 2.4);
  };
  const double y = 0.2126 * linear(c.r) + 0.7152 * linear(c.g) + 0.0722 * linear(c.b);
  const double f = y > 216.0 / 24389.0 ? std::cbrt(y) : (24389.0 / 27.0 * y + 16.0) / 116.0;
  return 116.0 * f - 16.0;
}

// CRC-32 (ISO 3309 / ITU-T V.42, reflected polynomial 0xEDB88320), bit by bit.
std::uint32_t crc32_reference(const std::uint8_t* data, std::size_t n) {
  std::uint32_t crc = 0xFFFFFFFFu;
  for (std::size_t i = 0; i < n; ++i) {
    crc ^= data[i];
    for (int b = 0; b < 8; ++b) crc = (crc >> 1) ^ (0xEDB88320u & (0u - (crc & 1u)));
  }
  return crc ^ 0xFFFFFFFFu;
}

std::uint32_t be32(const std::uint8_t* p) {
  return (std::uint32_t{p[0]} << 24) | (std::uint32_t{p[1]} << 16) | (std::uint32_t{p[2]} << 8) |
         p[3];
}

std::string write_temp(const std::string& name, const std::string& text) {
  const auto path = std::filesystem::temp_directory_path() /
                    ("tessera-test-" + std::to_string(::getpid()) + "-" + name);
  std::ofstream(path) << text;
  return path.string();
}

}  // namespace

TEST_CASE("cividis: lightness rises steadily from dark blue to yellow") {
  // The ten-step table spans L* 13 to 92, an almost constant rise per step (Nunez et al. 2018
  // designed the map for linear lightness).
  double previous = -1.0;
  for (int i = 0; i <= 100; ++i) {
    const double l = lightness(tessera::cividis(i / 100.0));
    CHECK(l > previous);
    previous = l;
  }
  const auto anchors = tessera::cividis_anchors();
  REQUIRE(anchors.size() == 10);
  for (std::size_t i = 1; i < anchors.size(); ++i) {
    const double step = lightness(anchors[i]) - lightness(anchors[i - 1]);
    CHECK(step > 7.0);
    CHECK(step < 10.5);
  }
  // Blue end and yellow end.
  const auto first = tessera::cividis(0.0), last = tessera::cividis(1.0);
  CHECK(first.b > first.r);
  CHECK(last.r > last.b);
  CHECK(tessera::hex_colour(first) == "#00204d");
}

TEST_CASE("PNG: chunk layout, CRCs and pixel data follow the specification") {
  tessera::RgbImage img(7, 3, {255, 255, 255});
  for (std::size_t y = 0; y < 3; ++y)
    for (std::size_t x = 0; x < 7; ++x)
      img.set(x, y, {static_cast<std::uint8_t>(x * 30), static_cast<std::uint8_t>(y * 80), 7});
  const auto png = tessera::encode_png(img);
  const std::uint8_t signature[8] = {0x89, 'P', 'N', 'G', '\r', '\n', 0x1a, '\n'};
  REQUIRE(png.size() > 8);
  CHECK(std::equal(signature, signature + 8, png.begin()));
  std::size_t at = 8;
  std::vector<std::string> types;
  std::vector<std::uint8_t> idat;
  while (at + 12 <= png.size()) {
    const std::uint32_t length = be32(&png[at]);
    const std::string type(png.begin() + at + 4, png.begin() + at + 8);
    types.push_back(type);
    REQUIRE(at + 12 + length <= png.size());
    CHECK(be32(&png[at + 8 + length]) == crc32_reference(&png[at + 4], length + 4));
    if (type == "IHDR") {
      REQUIRE(length == 13);
      CHECK(be32(&png[at + 8]) == 7);
      CHECK(be32(&png[at + 12]) == 3);
      CHECK(png[at + 16] == 8);  // bit depth
      CHECK(png[at + 17] == 2);  // truecolour
    }
    if (type == "IDAT")
      idat.insert(idat.end(), png.begin() + at + 8, png.begin() + at + 8 + length);
    at += 12 + length;
  }
  CHECK(at == png.size());
  CHECK(types == std::vector<std::string>{"IHDR", "IDAT", "IEND"});
  std::vector<std::uint8_t> raw(3 * (1 + 7 * 3));
  uLongf size = raw.size();
  REQUIRE(uncompress(raw.data(), &size, idat.data(), idat.size()) == Z_OK);
  REQUIRE(size == raw.size());
  for (std::size_t y = 0; y < 3; ++y) {
    CHECK(raw[y * 22] == 0);  // filter type None
    for (std::size_t x = 0; x < 7; ++x) {
      CHECK(raw[y * 22 + 1 + 3 * x] == x * 30);
      CHECK(raw[y * 22 + 2 + 3 * x] == y * 80);
      CHECK(raw[y * 22 + 3 + 3 * x] == 7);
    }
  }
}

TEST_CASE("CSV output quotes fields per RFC 4180 and expands vectors") {
  tessera::Table t;
  t.list_key = "rows";
  t.columns = {{"name", {}}, {"v", {"a", "b,c"}}};
  t.rows = {{std::string("plain"), std::vector<double>{0.1, -2.0}},
            {std::string("say \"hi\", then"), std::vector<double>{1e-300, 3.0}}};
  std::ostringstream out;
  tessera::write_table_csv(out, t);
  CHECK(out.str() ==
        "name,v.a,\"v.b,c\"\n"
        "plain,0.1,-2\n"
        "\"say \"\"hi\"\", then\",1e-300,3\n");
}

TEST_CASE("targets file: optional header in any order, comments, faults by line") {
  const std::vector<std::string> names = {"x", "y"};
  const auto plain = write_temp("plain.csv", "# comment\n0.5, -0.25\n\n1,2\n");
  CHECK(tessera::read_targets_csv(plain, names) ==
        std::vector<std::vector<double>>{{0.5, -0.25}, {1.0, 2.0}});
  const auto header = write_temp("header.csv", "y,\"x\"\n1,2\n");
  CHECK(tessera::read_targets_csv(header, names) == std::vector<std::vector<double>>{{2.0, 1.0}});
  const auto wrong_count = write_temp("count.csv", "1,2\n3\n");
  CHECK_THROWS_WITH(tessera::read_targets_csv(wrong_count, names),
                    wrong_count + ": line 2: expected 2 values, found 1");
  const auto not_number = write_temp("nan.csv", "1,2\n3,nan\n");
  CHECK_THROWS_AS(tessera::read_targets_csv(not_number, names), tessera::InputError);
  const auto unknown = write_temp("unknown.csv", "x,z\n1,2\n");
  CHECK_THROWS_AS(tessera::read_targets_csv(unknown, names), tessera::InputError);
  const auto empty = write_temp("empty.csv", "x,y\n");
  CHECK_THROWS_WITH(tessera::read_targets_csv(empty, names), empty + ": no targets in the file");
  CHECK_THROWS_AS(tessera::read_targets_csv("/nonexistent/targets.csv", names),
                  tessera::InputError);
  for (const auto& p : {plain, header, wrong_count, not_number, unknown, empty})
    std::filesystem::remove(p);
}

TEST_CASE("ticks are round numbers inside the range") {
  const auto unit = tessera::nice_ticks(0.0, 1.0, 5);
  REQUIRE(unit.size() == 6);
  for (std::size_t i = 0; i < unit.size(); ++i) CHECK(unit[i] == Approx(0.2 * i).margin(1e-12));
  const auto t = tessera::nice_ticks(-9.8696, -0.03, 6);
  REQUIRE(!t.empty());
  CHECK(t.front() >= -9.8696);
  CHECK(t.back() <= -0.03);
  CHECK(tessera::tick_label(20000.0) == "20000");
  CHECK(tessera::xml_escape("a<b & \"c\"") == "a&lt;b &amp; &quot;c&quot;");
}

TEST_CASE("colour bar: labelled with the lowest and highest fitness at its ends") {
  tessera::Heatmap m;
  m.x_name = "x", m.y_name = "y";
  m.nx = 2, m.ny = 1;
  m.lattice = {-9.6513, -0.000483};
  m.value_min = -9.6513, m.value_max = -0.000483;
  m.shown = 2;
  const std::string svg = tessera::heatmap_svg(m, "map");
  // The bar spans y = 40 (top, highest) to 440 (bottom, lowest); labels sit 4 px below each end.
  CHECK(svg.find("y=\"44.0\" font-weight=\"bold\">-0.000483</text>") != std::string::npos);
  CHECK(svg.find("y=\"444.0\" font-weight=\"bold\">-9.651</text>") != std::string::npos);
}

TEST_CASE("line charts: shares and counts from 0, other axes say they do not start at 0") {
  const std::vector<double> xs = {0, 1000, 2000};
  const std::vector<double> share = {0.5, 0.6, 0.7};
  // From 0: the y of 0 is the bottom of the frame (top 40 + height 200), ticked and labelled.
  const std::string coverage =
      tessera::line_chart_svg("Coverage", "evaluations", "coverage", xs, share, true);
  CHECK(coverage.find("y=\"244.0\" text-anchor=\"end\">0</text>") != std::string::npos);
  CHECK(coverage.find("does not start at 0") == std::string::npos);
  // Fitness far from 0: the axis spans the data and says so.
  const std::vector<double> fitness = {-3.0, -2.5, -2.0};
  const std::string best =
      tessera::line_chart_svg("Max fitness", "evaluations", "max fitness", xs, fitness);
  CHECK(best.find("y axis does not start at 0") != std::string::npos);
  // A range that holds 0 needs no note.
  const std::string across =
      tessera::line_chart_svg("Max fitness", "evaluations", "max fitness", xs, {-1.0, 0.5, 1.0});
  CHECK(across.find("does not start at 0") == std::string::npos);
}

TEST_CASE("figures and p-values in tables: printf rules, missing values as the caller's marker") {
  // Expected texts printed by /usr/bin/python3 with C printf semantics: '%.4g' % x for figures;
  // '%.4f' % p from 0.001 up and '%.2e' % p below for p-values.
  CHECK(tessera::figure_text(0.123456, "-") == "0.1235");
  CHECK(tessera::figure_text(12345.6, "-") == "1.235e+04");
  CHECK(tessera::figure_text(3.0, "-") == "3");
  CHECK(tessera::figure_text(-0.000123456, "-") == "-0.0001235");
  CHECK(tessera::p_value_text(0.05, "-") == "0.0500");
  CHECK(tessera::p_value_text(0.001, "-") == "0.0010");
  CHECK(tessera::p_value_text(0.000999, "-") == "9.99e-04");
  CHECK(tessera::p_value_text(1e-12, "-") == "1.00e-12");
  CHECK(tessera::p_value_text(1.0, "-") == "1.0000");
  // Missing is never printed as a number: each layer passes its own marker.
  CHECK(tessera::figure_text(std::nan(""), "missing") == "missing");
  CHECK(tessera::p_value_text(std::nan(""), "-") == "-");
}

namespace {

// Attribute `name` of the first SVG element in `element`, as a number.
double svg_attribute(const std::string& element, const std::string& name) {
  const auto at = element.find(" " + name + "=\"");
  REQUIRE(at != std::string::npos);
  return std::stod(element.substr(at + name.size() + 3));
}

// Every element of kind `tag` ("line", "text", ...) of an SVG text, whole.
std::vector<std::string> svg_elements(const std::string& svg, const std::string& tag) {
  std::vector<std::string> out;
  for (auto at = svg.find("<" + tag + " "); at != std::string::npos;
       at = svg.find("<" + tag + " ", at + 1)) {
    const auto end = tag == "text" ? svg.find("</text>", at) : svg.find('>', at);
    out.push_back(svg.substr(at, end - at));
  }
  return out;
}

}  // namespace

TEST_CASE("comparison charts: brackets clear the success labels, the budget label fits") {
  // A text's glyphs reach up to its font size above the baseline (SVG 1.1, 10.9: the em box).
  tessera::ObservationTable t;
  for (int i = 0; i < 10; ++i) {
    const std::string run = "s" + std::to_string(i);
    t.finals.push_back({"always", run, "success", 1.0, false});
    t.finals.push_back({"never", run, "success", 0.0, false});
    t.finals.push_back({"always", run, "readapt.maze.middle", 100.0 * (i + 1), false});
    t.finals.push_back({"never", run, "readapt.maze.middle", 3000.0, true});
  }
  const tessera::ComparisonResult r = tessera::compare_groups(t, {});
  const tessera::MeasureComparison* success = nullptr;
  for (const auto& m : r.measures)
    if (m.measure == "success") success = &m;
  REQUIRE(success != nullptr);
  REQUIRE(success->pairs.front().p_holm < 0.05);  // 10/10 against 0/10: a bracket is drawn
  const std::string svg = tessera::box_plot_chart(*success, 0.05).svg("success");
  double label_top = 1e9;
  for (const std::string& text : svg_elements(svg, "text"))
    if (text.ends_with(">10/10"))
      label_top = svg_attribute(text, "y") - svg_attribute(text, "font-size");
  REQUIRE(label_top < 1e9);
  std::size_t brackets = 0;
  for (const std::string& line : svg_elements(svg, "line")) {
    if (line.find("stroke=\"#222222\"") == std::string::npos) continue;  // brackets are in ink
    ++brackets;
    CHECK(std::max(svg_attribute(line, "y1"), svg_attribute(line, "y2")) < label_top);
  }
  CHECK(brackets == 3);

  const auto families = tessera::goal_families(r);
  REQUIRE(families.size() == 1);
  const std::string goals =
      tessera::goal_chart(families[0].first, families[0].second).svg("readapt.maze");
  double frame_top = -1, label_top_budget = -1;
  for (const std::string& rect : svg_elements(goals, "rect"))
    if (rect.find("fill=\"none\"") != std::string::npos) frame_top = svg_attribute(rect, "y");
  for (const std::string& text : svg_elements(goals, "text"))
    if (text.ends_with(">budget (censored)"))
      label_top_budget = svg_attribute(text, "y") - svg_attribute(text, "font-size");
  REQUIRE(frame_top > 0);
  REQUIRE(label_top_budget > 0);
  CHECK(label_top_budget > frame_top);
}

TEST_CASE("box plots: group labels at one size, none running into the next") {
  tessera::ObservationTable t;
  const std::vector<std::string> groups = {"novelty",    "novelty-lc", "objective",
                                           "map-elites", "random",     "matched-random"};
  for (std::size_t g = 0; g < groups.size(); ++g)
    for (int i = 0; i < 5; ++i)
      t.finals.push_back({groups[g], "s" + std::to_string(i), "coverage",
                          0.1 * static_cast<double>(g) + 0.01 * i, false});
  const tessera::ComparisonResult r = tessera::compare_groups(t, {});
  const std::string svg = tessera::box_plot_chart(r.measures.at(0), 0.05).svg("coverage");
  std::vector<std::pair<double, double>> extents;  // left and right end of each label
  for (const std::string& text : svg_elements(svg, "text")) {
    const auto close = text.rfind('>');
    const std::string label = text.substr(close + 1);
    if (std::find(groups.begin(), groups.end(), label) == groups.end()) continue;
    CHECK(svg_attribute(text, "font-size") == 12.0);
    const double x = svg_attribute(text, "x");
    const double half = tessera::canvas_text_width(label, 12) / 2;  // centred labels
    extents.push_back({x - half, x + half});
  }
  REQUIRE(extents.size() == groups.size());
  for (std::size_t i = 1; i < extents.size(); ++i)
    CHECK(extents[i - 1].second + 8 <= extents[i].first);
}

TEST_CASE("box plots: a measure without negative values gets no negative ticks") {
  // Shares of elites reaching a place are in [0, 1]; all runs at 0 is common (nobody got there).
  tessera::ObservationTable t;
  for (const char* g : {"a", "b"})
    for (int i = 0; i < 5; ++i)
      t.finals.push_back({g, "s" + std::to_string(i), "probe.maze.reached.goal", 0.0, false});
  const tessera::ComparisonResult r = tessera::compare_groups(t, {});
  const std::string svg = tessera::box_plot_chart(r.measures.at(0), 0.05).svg("shares");
  std::size_t ticks = 0;
  for (const std::string& text : svg_elements(svg, "text")) {
    if (text.find("text-anchor=\"end\"") == std::string::npos) continue;  // y tick labels
    ++ticks;
    CHECK(text.substr(text.rfind('>') + 1).front() != '-');
  }
  CHECK(ticks >= 2);
}

TEST_CASE("box plots: brackets of pairs whose columns do not meet share a level") {
  // Six groups 0..5 at well-separated values: all 15 pairs differ (Mann-Whitney U, 8 runs each,
  // Holm-adjusted p well below 0.05 as scipy.stats.mannwhitneyu gives for full separation).
  tessera::ObservationTable t;
  const std::vector<std::string> groups = {"g0", "g1", "g2", "g3", "g4", "g5"};
  for (std::size_t g = 0; g < groups.size(); ++g)
    for (int i = 0; i < 8; ++i)
      t.finals.push_back({groups[g], "s" + std::to_string(i), "area",
                          10.0 * static_cast<double>(g) + 0.1 * i, false});
  const tessera::ComparisonResult r = tessera::compare_groups(t, {});
  const auto& m = r.measures.at(0);
  const auto brackets = tessera::stack_brackets(m, 0.05);
  REQUIRE(brackets.size() == 15);
  std::size_t levels = 0;
  for (std::size_t i = 0; i < brackets.size(); ++i) {
    levels = std::max(levels, brackets[i].level + 1);
    for (std::size_t j = 0; j < i; ++j)  // no two on one level meet or overlap
      if (brackets[i].level == brackets[j].level)
        CHECK((brackets[i].right < brackets[j].left || brackets[j].right < brackets[i].left));
  }
  // The fewest possible: the 11 pairs whose columns include column 2 (left 0..2, right 2..5)
  // all meet there, so they need 11 levels; every other pair fits beside them (one level per
  // pair would be 15).
  CHECK(levels == 11);
  // The chart draws each bracket at its level: distinct bracket heights = levels.
  const std::string svg = tessera::box_plot_chart(m, 0.05).svg("area");
  std::set<double> heights;
  for (const std::string& line : svg_elements(svg, "line"))
    if (line.find("stroke=\"#222222\"") != std::string::npos &&
        svg_attribute(line, "y1") == svg_attribute(line, "y2") &&
        svg_attribute(line, "x1") != svg_attribute(line, "x2"))
      heights.insert(svg_attribute(line, "y1"));
  CHECK(heights.size() == levels);
}
