// Tests of daemon/charts/charts.h. Every chart is parsed with expat
// (xml_dom.h): well-formed, its id, role, <title> and <desc> present, ids
// unique and its own, nothing loaded from elsewhere, no "nan" or "inf", and
// the numbers in its data- attributes equal to the inputs exactly.
#include "daemon/charts/charts.h"

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <limits>
#include <memory>
#include <optional>
#include <regex>
#include <set>
#include <string>
#include <vector>

#include "absl/status/status.h"
#include "absl/strings/str_split.h"
#include "absl/time/civil_time.h"
#include "absl/time/time.h"
#include "daemon/charts/format.h"
#include "daemon/charts/svg.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "tests/daemon/charts/xml_dom.h"

namespace plumbline::charts {
namespace {

using ::testing::HasSubstr;
using testing::ParseXml;
using testing::XmlElement;

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kInf = std::numeric_limits<double>::infinity();

// The double an attribute holds; fails the test unless all of it parses.
double Number(const XmlElement& e, const std::string& key) {
  const std::optional<std::string> v = e.Attribute(key);
  if (!v.has_value()) {
    ADD_FAILURE() << "no attribute " << key << " on <" << e.name << ">";
    return kNaN;
  }
  char* end = nullptr;
  const double d = std::strtod(v->c_str(), &end);
  EXPECT_EQ(*end, '\0') << key << "=\"" << *v << "\"";
  return d;
}

ChartText Text(const std::string& id) {
  ChartText t;
  t.id = id;
  t.title = "Title of " + id;
  t.subtitle = "courier_first_attempt v3";
  return t;
}

// Checks what every chart must have and returns its parsed tree.
std::unique_ptr<XmlElement> CheckChart(const absl::StatusOr<std::string>& svg,
                                       const std::string& id) {
  EXPECT_TRUE(svg.ok()) << svg.status();
  if (!svg.ok()) return nullptr;
  // Never a NaN or an infinity, in any spelling, as a word of its own.
  static const std::regex kNonFinite(
      R"((^|[^A-Za-z])-?(nan|inf|infinity)([^A-Za-z]|$))", std::regex::icase);
  EXPECT_FALSE(std::regex_search(*svg, kNonFinite)) << *svg;
  absl::StatusOr<std::unique_ptr<XmlElement>> root = ParseXml(*svg);
  EXPECT_TRUE(root.ok()) << root.status() << "\n" << *svg;
  if (!root.ok()) return nullptr;
  const XmlElement& r = **root;
  EXPECT_EQ(r.name, "svg");
  EXPECT_EQ(r.Attribute("xmlns"), "http://www.w3.org/2000/svg");
  EXPECT_EQ(r.Attribute("id"), id);
  EXPECT_EQ(r.Attribute("role"), "img");
  EXPECT_EQ(r.Attribute("aria-labelledby"), id + "-title " + id + "-desc");
  const XmlElement* title = r.Child("title");
  const XmlElement* desc = r.Child("desc");
  EXPECT_TRUE(title != nullptr && title->Attribute("id") == id + "-title");
  EXPECT_TRUE(desc != nullptr && desc->Attribute("id") == id + "-desc");
  if (desc != nullptr) {
    EXPECT_FALSE(desc->text.empty());
  }
  // Ids: unique, all the chart's own; fills point only at them.
  std::set<std::string> ids;
  for (const XmlElement* e : r.FindAll("")) {
    if (auto v = e->Attribute("id")) {
      EXPECT_TRUE(ids.insert(*v).second) << "duplicate id " << *v;
      EXPECT_EQ(v->rfind(id, 0), 0u) << *v;
    }
  }
  for (const XmlElement* e : r.FindAll("")) {
    for (const auto& [key, value] : e->attributes) {
      EXPECT_NE(key, "href");
      EXPECT_NE(key, "xlink:href");
      EXPECT_EQ(key.rfind("on", 0), std::string::npos) << key;  // handlers
      if (key != "xmlns") {
        EXPECT_EQ(value.find("http"), std::string::npos) << key << "=" << value;
      }
      if (value.rfind("url(#", 0) == 0) {
        EXPECT_TRUE(ids.count(value.substr(5, value.size() - 6)) == 1) << value;
      }
    }
    for (const char* banned :
         {"script", "image", "foreignObject", "use", "style", "a", "iframe"}) {
      EXPECT_NE(e->name, banned);
    }
  }
  // Axis titles with units: every chart says what its axes measure.
  return std::move(*root);
}

// ---- Reliability diagram ----

ReliabilityDiagram TwoSeriesReliability() {
  ReliabilityDiagram c;
  c.text = Text("rel");
  ReliabilitySeries active{"active v3", {}};
  ReliabilitySeries candidate{"candidate v4", {}};
  for (int i = 0; i < 10; ++i) {
    const double lo = i * 0.1, hi = (i + 1) * 0.1;
    // Odd values on purpose: they only round-trip if written exactly.
    active.bins.push_back({lo, hi, 100 + i, lo + 0.0312345678901234,
                           std::min(1.0, lo + 0.07 / 3)});
    candidate.bins.push_back({lo, hi, 90 + i, lo + 0.05, lo + 1.0 / 30});
  }
  active.bins[9] = {0.9, 1.0, 0, kNaN, kNaN};  // an empty bin
  c.series = {active, candidate};
  return c;
}

TEST(ReliabilityDiagramTest, DataAttributesEqualTheInputsExactly) {
  const ReliabilityDiagram chart = TwoSeriesReliability();
  auto root = CheckChart(RenderReliabilityDiagram(chart), "rel");
  ASSERT_NE(root, nullptr);
  EXPECT_EQ(root->Attribute("data-chart"), "reliability");
  EXPECT_EQ(root->Attribute("data-empty"), "false");
  const auto series = root->FindAll("g", "class", "series");
  ASSERT_EQ(series.size(), 2u);
  for (size_t s = 0; s < 2; ++s) {
    EXPECT_EQ(series[s]->Attribute("data-series"), chart.series[s].name);
    const auto bins = series[s]->FindAll("g", "class", "bin");
    ASSERT_EQ(bins.size(), 10u);
    for (size_t i = 0; i < 10; ++i) {
      const ReliabilityBin& in = chart.series[s].bins[i];
      EXPECT_EQ(Number(*bins[i], "data-lower"), in.lower);
      EXPECT_EQ(Number(*bins[i], "data-upper"), in.upper);
      EXPECT_EQ(Number(*bins[i], "data-count"), static_cast<double>(in.count));
      if (in.count == 0) {
        EXPECT_FALSE(bins[i]->Attribute("data-mean-predicted").has_value());
        continue;
      }
      EXPECT_EQ(Number(*bins[i], "data-mean-predicted"), in.mean_predicted);
      EXPECT_EQ(Number(*bins[i], "data-observed-rate"), in.observed_rate);
      // The tooltip says the same at a readable precision.
      EXPECT_THAT(bins[i]->Child("title")->text,
                  HasSubstr(ShortNumber(in.mean_predicted, 4)));
    }
  }
  // Legend in words, the diagonal and both axis titles with their unit.
  const std::string text = root->AllText();
  EXPECT_THAT(text, HasSubstr("active v3, n = 936"));
  EXPECT_THAT(text, HasSubstr("perfect calibration"));
  EXPECT_THAT(text, HasSubstr("mean predicted probability (0\xE2\x80\x93"
                              "1)"));
  EXPECT_THAT(text, HasSubstr("observed rate of positives (0\xE2\x80\x93"
                              "1)"));
  EXPECT_EQ(root->FindAll("line", "class", "diagonal").size(), 1u);
}

TEST(ReliabilityDiagramTest, NoRecordsDrawsNoData) {
  ReliabilityDiagram c;
  c.text = Text("rel-empty");
  auto root = CheckChart(RenderReliabilityDiagram(c), "rel-empty");
  ASSERT_NE(root, nullptr);
  EXPECT_EQ(root->Attribute("data-empty"), "true");
  EXPECT_THAT(root->AllText(), HasSubstr("No data"));
  // Bins that exist but hold nothing, NaN everywhere: the same.
  c.series = {
      {"shadow v4", {{0, 0.5, 0, kNaN, kNaN}, {0.5, 1, 0, kNaN, kNaN}}}};
  root = CheckChart(RenderReliabilityDiagram(c), "rel-empty");
  ASSERT_NE(root, nullptr);
  EXPECT_EQ(root->Attribute("data-empty"), "true");
  // Counts but undefined means (a caller's NaN) are drawn as empty bins.
  c.series = {{"shadow v4", {{0, 0.5, 3, kNaN, 0.5}, {0.5, 1, 4, 0.7, 0.5}}}};
  root = CheckChart(RenderReliabilityDiagram(c), "rel-empty");
  ASSERT_NE(root, nullptr);
  EXPECT_EQ(root->Attribute("data-empty"), "false");
  EXPECT_EQ(root->FindAll("circle").size(), 1u + 1u);  // the point + legend
}

TEST(ReliabilityDiagramTest, RejectsValuesThatCannotBeRight) {
  ReliabilityDiagram c = TwoSeriesReliability();
  c.series[1].bins[3].mean_predicted = 1.2;
  absl::StatusOr<std::string> svg = RenderReliabilityDiagram(c);
  EXPECT_EQ(svg.status().code(), absl::StatusCode::kInvalidArgument);
  EXPECT_THAT(svg.status().message(),
              HasSubstr("chart \"rel\": series[1].bins[3].mean_predicted"));
  c = TwoSeriesReliability();
  c.series[0].bins[0].count = -1;
  EXPECT_THAT(RenderReliabilityDiagram(c).status().message(),
              HasSubstr("series[0].bins[0].count"));
  c = TwoSeriesReliability();
  c.series[0].bins[0].observed_rate = kInf;
  EXPECT_FALSE(RenderReliabilityDiagram(c).ok());
  c = TwoSeriesReliability();
  c.series[0].bins[0].lower = 0.5;  // above its upper edge 0.1
  EXPECT_FALSE(RenderReliabilityDiagram(c).ok());
  c = TwoSeriesReliability();
  c.series.resize(kMaxSeries + 1, c.series[0]);
  EXPECT_FALSE(RenderReliabilityDiagram(c).ok());
}

// ---- Histogram against the baseline ----

TEST(BaselineHistogramTest, NumericBinsCarryEdgesAndSharesExactly) {
  BaselineHistogram c;
  c.text = Text("hist");
  c.value_label = "rainfall";
  c.value_unit = "mm";
  c.edges = {0.5, 2.0 / 3, 4.25, 10.1};
  c.window = {0.1, 0.2 / 3, 0.3, 0.4, 0.1 + 0.2 / 3 - 0.1};
  c.baseline = {0.2, 0.2, 0.2, 0.2, 0.2};
  auto root = CheckChart(RenderBaselineHistogram(c), "hist");
  ASSERT_NE(root, nullptr);
  const auto bins = root->FindAll("g", "class", "bin");
  ASSERT_EQ(bins.size(), 5u);
  EXPECT_FALSE(bins[0]->Attribute("data-lower").has_value());  // (-inf, e0)
  EXPECT_FALSE(bins[4]->Attribute("data-upper").has_value());  // [e3, inf)
  for (size_t i = 0; i < 5; ++i) {
    if (i > 0) {
      EXPECT_EQ(Number(*bins[i], "data-lower"), c.edges[i - 1]);
    }
    if (i < 4) {
      EXPECT_EQ(Number(*bins[i], "data-upper"), c.edges[i]);
    }
    EXPECT_EQ(Number(*bins[i], "data-window"), c.window[i]);
    EXPECT_EQ(Number(*bins[i], "data-baseline"), c.baseline[i]);
  }
  const std::string text = root->AllText();
  EXPECT_THAT(text, HasSubstr("rainfall (mm)"));
  EXPECT_THAT(text, HasSubstr("share of records (%)"));
  EXPECT_THAT(text, HasSubstr("below 0.5"));  // first bin in words
  EXPECT_THAT(text, HasSubstr("10.1 and above"));
  EXPECT_THAT(text, HasSubstr("30%"));  // a share over its bar
}

TEST(BaselineHistogramTest, CategoricalLevelsAreEscapedAndKeptWhole) {
  BaselineHistogram c;
  c.text = Text("hist-cat");
  c.value_label = "building_type";
  const std::string long_level(200, 'x');
  c.levels = {"house", "<flat & \"more\">", long_level};
  c.window = {0.5, 0.25, 0.25};
  c.baseline = {0.5, 0.5, 0};
  auto root = CheckChart(RenderBaselineHistogram(c), "hist-cat");
  ASSERT_NE(root, nullptr);
  const auto bins = root->FindAll("g", "class", "bin");
  ASSERT_EQ(bins.size(), 3u);
  EXPECT_EQ(bins[1]->Attribute("data-level"), "<flat & \"more\">");
  EXPECT_EQ(bins[2]->Attribute("data-level"), long_level);
  // The label under the slot is cut; its tooltip holds the whole level.
  bool cut_with_tooltip = false;
  for (const XmlElement* t : root->FindAll("text")) {
    const XmlElement* tip = t->Child("title");
    if (tip != nullptr && tip->text == long_level) {
      cut_with_tooltip = t->text.size() < long_level.size() &&
                         t->text.find("\xE2\x80\xA6") != std::string::npos;
    }
  }
  EXPECT_TRUE(cut_with_tooltip);
}

TEST(BaselineHistogramTest, DegenerateInputs) {
  BaselineHistogram c;
  c.text = Text("hist-empty");
  auto root = CheckChart(RenderBaselineHistogram(c), "hist-empty");
  ASSERT_NE(root, nullptr);
  EXPECT_EQ(root->Attribute("data-empty"), "true");
  // One bin, no baseline, a NaN share (no records) drawn as n/a.
  c.window = {kNaN};
  root = CheckChart(RenderBaselineHistogram(c), "hist-empty");
  ASSERT_NE(root, nullptr);
  EXPECT_EQ(root->Attribute("data-empty"), "true");
  c.edges = {1};
  c.window = {0, 1};
  root = CheckChart(RenderBaselineHistogram(c), "hist-empty");
  ASSERT_NE(root, nullptr);
  EXPECT_EQ(root->Attribute("data-empty"), "false");
  // All shares zero.
  c.window = {0, 0};
  EXPECT_NE(CheckChart(RenderBaselineHistogram(c), "hist-empty"), nullptr);
}

TEST(BaselineHistogramTest, RejectsMismatchedOrBadInput) {
  BaselineHistogram c;
  c.text = Text("hist-bad");
  c.edges = {1, 2};
  c.window = {0.5, 0.5};  // 3 bins
  EXPECT_THAT(RenderBaselineHistogram(c).status().message(),
              HasSubstr("window has 2 shares for 3 bins"));
  c.window = {0.5, 0.5, 0};
  c.baseline = {0.5, 0.5};
  EXPECT_THAT(RenderBaselineHistogram(c).status().message(),
              HasSubstr("baseline has 2 shares for 3 bins"));
  c.baseline = {0.5, 0.5, -0.1};
  EXPECT_THAT(RenderBaselineHistogram(c).status().message(),
              HasSubstr("baseline[2]"));
  c.baseline.clear();
  c.edges = {2, 1};
  EXPECT_THAT(RenderBaselineHistogram(c).status().message(),
              HasSubstr("edges[1]"));
  c.edges = {1, kNaN};
  EXPECT_FALSE(RenderBaselineHistogram(c).ok());
  c.edges = {1, 2};
  c.levels = {"a", "b", "c"};
  EXPECT_FALSE(RenderBaselineHistogram(c).ok());
}

// ---- Stability bars ----

StabilityBars Courier() {
  StabilityBars c;
  c.text = Text("psi");
  c.features = {{"distance_km", 0.021, std::nullopt},
                {"rainfall_mm", 0.412, std::nullopt},
                {"depot_region", kNaN, std::nullopt},
                {"building_type", 0.1, std::nullopt},  // on the line: steady
                {"parcel_weight_kg", 0.25000000000000006, std::nullopt},
                {"hour_of_day", 0.008, Level::kWatch}};  // the policy said so
  return c;
}

TEST(StabilityBarsTest, SortedLargestFirstWithStateInWords) {
  const StabilityBars c = Courier();
  auto root = CheckChart(RenderStabilityBars(c), "psi");
  ASSERT_NE(root, nullptr);
  const auto rows = root->FindAll("g", "class", "feature");
  ASSERT_EQ(rows.size(), 6u);
  const std::vector<std::string> order = {"rainfall_mm",   "parcel_weight_kg",
                                          "building_type", "distance_km",
                                          "hour_of_day",   "depot_region"};
  const std::vector<std::string> states = {"drifting", "drifting", "steady",
                                           "steady",   "watch",    ""};
  for (size_t i = 0; i < rows.size(); ++i) {
    EXPECT_EQ(rows[i]->Attribute("data-feature"), order[i]);
    EXPECT_EQ(Number(*rows[i], "data-rank"), static_cast<double>(i));
    EXPECT_EQ(rows[i]->Attribute("data-state").value_or(""), states[i]);
    if (!states[i].empty()) {
      EXPECT_THAT(rows[i]->AllText(), HasSubstr(states[i]));
    }
  }
  EXPECT_EQ(Number(*rows[0], "data-psi"), 0.412);
  EXPECT_EQ(Number(*rows[1], "data-psi"), 0.25000000000000006);
  EXPECT_FALSE(rows[5]->Attribute("data-psi").has_value());
  EXPECT_THAT(rows[5]->AllText(), HasSubstr("not computed"));
  // Threshold lines carry their value; the legend explains the states.
  const auto thresholds = root->FindAll("g", "class", "threshold");
  ASSERT_EQ(thresholds.size(), 2u);
  EXPECT_EQ(Number(*thresholds[0], "data-value"), 0.1);
  EXPECT_EQ(Number(*thresholds[1], "data-value"), 0.25);
  const std::string text = root->AllText();
  EXPECT_THAT(text, HasSubstr("drifting: PSI > 0.25"));
  EXPECT_THAT(text, HasSubstr("population stability index (PSI, unitless)"));
  EXPECT_THAT(root->Child("desc")->text,
              HasSubstr("drifting (2): rainfall_mm 0.412"));
}

TEST(StabilityBarsTest, HostileFeatureNamesAreEscapedAndCut) {
  StabilityBars c;
  c.text = Text("psi-names");
  c.text.title = "</title><script>alert(1)</script>";
  const std::string long_name =
      "a_very_long_feature_name_from_an_upstream_system_rainfall_mm_per_hour";
  c.features = {{"<b>x</b> & \"q\" 'r'", 0.3, std::nullopt},
                {long_name, 0.2, std::nullopt},
                {"bad \xFF utf-8 \x01", 0.1, std::nullopt}};
  absl::StatusOr<std::string> svg = RenderStabilityBars(c);
  auto root = CheckChart(svg, "psi-names");
  ASSERT_NE(root, nullptr);
  EXPECT_EQ(svg->find("<script"), std::string::npos);
  EXPECT_EQ(svg->find("<b>"), std::string::npos);
  EXPECT_EQ(root->Child("title")->text, c.text.title);
  const auto rows = root->FindAll("g", "class", "feature");
  ASSERT_EQ(rows.size(), 3u);
  EXPECT_EQ(rows[0]->Attribute("data-feature"), "<b>x</b> & \"q\" 'r'");
  EXPECT_EQ(rows[1]->Attribute("data-feature"), long_name);
  EXPECT_EQ(rows[2]->Attribute("data-feature"),
            SanitizeUtf8("bad \xFF utf-8 \x01"));
  // The long name shows cut with an ellipsis; its tooltip has all of it.
  bool found = false;
  for (const XmlElement* t : rows[1]->FindAll("text")) {
    if (const XmlElement* tip = t->Child("title")) {
      found = tip->text == long_name &&
              t->text.find("\xE2\x80\xA6") != std::string::npos &&
              t->text.size() < long_name.size();
    }
  }
  EXPECT_TRUE(found);
}

TEST(StabilityBarsTest, DegenerateInputs) {
  StabilityBars c;
  c.text = Text("psi-empty");
  auto root = CheckChart(RenderStabilityBars(c), "psi-empty");
  ASSERT_NE(root, nullptr);
  EXPECT_EQ(root->Attribute("data-empty"), "true");
  EXPECT_THAT(root->AllText(), HasSubstr("No data"));
  // All equal, all zero, and one enormous value that is cut at the edge.
  c.features = {{"a", 0, std::nullopt}, {"b", 0, std::nullopt}};
  EXPECT_NE(CheckChart(RenderStabilityBars(c), "psi-empty"), nullptr);
  c.features = {{"a", 0.05, std::nullopt}, {"b", 38.5, std::nullopt}};
  root = CheckChart(RenderStabilityBars(c), "psi-empty");
  ASSERT_NE(root, nullptr);
  EXPECT_EQ(Number(*root->FindAll("g", "class", "feature")[0], "data-psi"),
            38.5);
  EXPECT_THAT(root->AllText(), HasSubstr("38.5"));
  c.watch = 0;
  c.drifting = 0;
  EXPECT_NE(CheckChart(RenderStabilityBars(c), "psi-empty"), nullptr);
}

TEST(StabilityBarsTest, RejectsBadValues) {
  StabilityBars c = Courier();
  c.features[1].psi = -0.1;
  EXPECT_THAT(RenderStabilityBars(c).status().message(),
              HasSubstr("features[1] (\"rainfall_mm\")"));
  c = Courier();
  c.features[0].psi = kInf;
  EXPECT_FALSE(RenderStabilityBars(c).ok());
  c = Courier();
  c.watch = 0.3;  // above drifting
  EXPECT_FALSE(RenderStabilityBars(c).ok());
  c = Courier();
  c.drifting = kNaN;
  EXPECT_FALSE(RenderStabilityBars(c).ok());
}

// ---- Time series ----

absl::Time Day(int day, int hour = 0) {
  return absl::FromCivil(absl::CivilHour(2024, 5, day, hour),
                         absl::UTCTimeZone());
}

TEST(TimeSeriesTest, PointsRoundTripAndUndefinedValuesBreakTheLine) {
  TimeSeriesChart c;
  c.text = Text("ll");
  c.value_label = "log-loss";
  c.value_unit = "nats per record";
  TimeSeries s{"log-loss", {}};
  const double values[] = {0.41234567890123, 0.405, kNaN, kInf, 0.433, 0.446,
                           1.0 / 3};
  for (int d = 0; d < 7; ++d) {
    s.points.push_back({Day(1 + d) + absl::Nanoseconds(d), values[d]});
  }
  c.series = {s};
  c.thresholds = {{"watch", 0.4422, Level::kWatch},
                  {"drifting", 0.5025, Level::kDrifting}};
  auto root = CheckChart(RenderTimeSeries(c), "ll");
  ASSERT_NE(root, nullptr);
  EXPECT_EQ(root->Attribute("data-chart"), "timeseries");
  const auto points = root->FindAll("", "class", "point");
  ASSERT_EQ(points.size(), 5u);  // the two undefined values are not points
  size_t p = 0;
  for (int d = 0; d < 7; ++d) {
    if (!std::isfinite(values[d])) continue;
    absl::Time at;
    std::string error;
    ASSERT_TRUE(absl::ParseTime(absl::RFC3339_full,
                                *points[p]->Attribute("data-t"), &at, &error))
        << error;
    EXPECT_EQ(at, s.points[d].at);
    EXPECT_EQ(Number(*points[p], "data-value"), values[d]);
    ++p;
  }
  // One gap band over the two undefined days; the path has two pieces.
  const auto gaps = root->FindAll("rect", "class", "gap");
  ASSERT_EQ(gaps.size(), 1u);
  absl::Time from, to;
  std::string error;
  ASSERT_TRUE(absl::ParseTime(absl::RFC3339_full,
                              *gaps[0]->Attribute("data-from"), &from, &error));
  ASSERT_TRUE(absl::ParseTime(absl::RFC3339_full,
                              *gaps[0]->Attribute("data-to"), &to, &error));
  EXPECT_EQ(from, s.points[2].at);
  EXPECT_EQ(to, s.points[3].at);
  const auto series = root->FindAll("g", "class", "series");
  ASSERT_EQ(series.size(), 1u);
  const std::string d = *series[0]->Child("path")->Attribute("d");
  EXPECT_EQ(std::count(d.begin(), d.end(), 'M'), 2);
  const auto thresholds = root->FindAll("g", "class", "threshold");
  ASSERT_EQ(thresholds.size(), 2u);
  EXPECT_EQ(Number(*thresholds[0], "data-value"), 0.4422);
  EXPECT_EQ(thresholds[1]->Attribute("data-level"), "drifting");
  const std::string text = root->AllText();
  EXPECT_THAT(text, HasSubstr("log-loss (nats per record)"));
  EXPECT_THAT(text, HasSubstr("date and time (UTC)"));
  EXPECT_THAT(text, HasSubstr("drifting 0.5025"));
  EXPECT_THAT(text, HasSubstr("no value (gap)"));
}

TEST(TimeSeriesTest, DegenerateInputs) {
  TimeSeriesChart c;
  c.text = Text("ts-empty");
  auto root = CheckChart(RenderTimeSeries(c), "ts-empty");
  ASSERT_NE(root, nullptr);
  EXPECT_EQ(root->Attribute("data-empty"), "true");
  // Only undefined values, with a threshold: still no data.
  c.series = {{"psi", {{Day(1), kNaN}, {Day(2), kNaN}}}};
  c.thresholds = {{"watch", 0.1, Level::kWatch}};
  root = CheckChart(RenderTimeSeries(c), "ts-empty");
  ASSERT_NE(root, nullptr);
  EXPECT_EQ(root->Attribute("data-empty"), "true");
  // One point; then equal values; then zero everywhere.
  c.thresholds.clear();
  c.series = {{"psi", {{Day(1), 0.25}}}};
  root = CheckChart(RenderTimeSeries(c), "ts-empty");
  ASSERT_NE(root, nullptr);
  EXPECT_EQ(root->FindAll("", "class", "point").size(), 1u);
  c.series = {{"psi", {{Day(1), 0.25}, {Day(2), 0.25}, {Day(3), 0.25}}}};
  EXPECT_NE(CheckChart(RenderTimeSeries(c), "ts-empty"), nullptr);
  c.series = {{"psi", {{Day(1), 0}, {Day(2), 0}}}};
  EXPECT_NE(CheckChart(RenderTimeSeries(c), "ts-empty"), nullptr);
  c.series = {{"big", {{Day(1), -1e300}, {Day(2), 1e300}}}};
  EXPECT_NE(CheckChart(RenderTimeSeries(c), "ts-empty"), nullptr);
  // Many points: markers stay as hover targets with their numbers.
  TimeSeries many{"hourly", {}};
  for (int h = 0; h < 200; ++h)
    many.points.push_back({Day(1, 0) + absl::Hours(h), h * 0.001});
  c.series = {many};
  root = CheckChart(RenderTimeSeries(c), "ts-empty");
  ASSERT_NE(root, nullptr);
  EXPECT_EQ(root->FindAll("", "class", "point").size(), 200u);
}

TEST(TimeSeriesTest, RejectsTimesOutOfOrder) {
  TimeSeriesChart c;
  c.text = Text("ts-bad");
  c.series = {{"psi", {{Day(2), 0.1}, {Day(1), 0.2}}}};
  EXPECT_THAT(RenderTimeSeries(c).status().message(),
              HasSubstr("series[0].points[1].at"));
  c.series = {{"psi", {{absl::InfiniteFuture(), 0.1}}}};
  EXPECT_FALSE(RenderTimeSeries(c).ok());
  c.series = {{"psi", {{Day(1), 0.1}}}};
  c.thresholds = {{"watch", kNaN, Level::kWatch}};
  EXPECT_THAT(RenderTimeSeries(c).status().message(),
              HasSubstr("thresholds[0].value"));
}

// ---- ROC ----

TEST(RocCurvesTest, PointsAndAucRoundTrip) {
  RocChart c;
  c.text = Text("roc");
  RocCurve active{"active v3", {}, 0.77123456789};
  RocCurve candidate{"candidate v4", {}, 0.8046};
  for (int i = 1; i < 50; ++i) {
    const double f = i / 50.0;
    active.points.push_back({f, 1 - std::pow(1 - f, 3.1)});
    candidate.points.push_back({f, 1 - std::pow(1 - f, 3.9)});
  }
  c.curves = {active, candidate};
  auto root = CheckChart(RenderRocCurves(c), "roc");
  ASSERT_NE(root, nullptr);
  const auto series = root->FindAll("g", "class", "series");
  ASSERT_EQ(series.size(), 2u);
  for (size_t k = 0; k < 2; ++k) {
    const RocCurve& in = c.curves[k];
    EXPECT_EQ(Number(*series[k], "data-auc"), in.auc);
    const std::vector<std::string> fpr =
        absl::StrSplit(*series[k]->Attribute("data-fpr"), ' ');
    const std::vector<std::string> tpr =
        absl::StrSplit(*series[k]->Attribute("data-tpr"), ' ');
    ASSERT_EQ(fpr.size(), in.points.size());
    ASSERT_EQ(tpr.size(), in.points.size());
    for (size_t i = 0; i < in.points.size(); ++i) {
      EXPECT_EQ(std::strtod(fpr[i].c_str(), nullptr),
                in.points[i].false_positive_rate);
      EXPECT_EQ(std::strtod(tpr[i].c_str(), nullptr),
                in.points[i].true_positive_rate);
    }
  }
  const std::string text = root->AllText();
  EXPECT_THAT(text, HasSubstr("active v3 \xE2\x80\x94 AUC 0.771"));
  EXPECT_THAT(text, HasSubstr("candidate v4 \xE2\x80\x94 AUC 0.805"));
  EXPECT_THAT(text, HasSubstr("false positive rate (0\xE2\x80\x93"
                              "1)"));
  EXPECT_THAT(text, HasSubstr("true positive rate (0\xE2\x80\x93"
                              "1)"));
}

TEST(RocCurvesTest, DegenerateInputs) {
  RocChart c;
  c.text = Text("roc-empty");
  auto root = CheckChart(RenderRocCurves(c), "roc-empty");
  ASSERT_NE(root, nullptr);
  EXPECT_EQ(root->Attribute("data-empty"), "true");
  c.curves = {{"active v3", {}, kNaN}};
  root = CheckChart(RenderRocCurves(c), "roc-empty");
  ASSERT_NE(root, nullptr);
  EXPECT_EQ(root->Attribute("data-empty"), "true");
  // One point, an undefined AUC, a NaN point skipped.
  c.curves = {{"active v3", {{0.5, 0.5}, {kNaN, 0.7}}, kNaN}};
  root = CheckChart(RenderRocCurves(c), "roc-empty");
  ASSERT_NE(root, nullptr);
  EXPECT_EQ(root->Attribute("data-empty"), "false");
  EXPECT_THAT(root->AllText(), HasSubstr("AUC n/a"));
  EXPECT_FALSE(root->FindAll("g", "class", "series")[0]
                   ->Attribute("data-auc")
                   .has_value());
}

TEST(RocCurvesTest, RejectsBadCurves) {
  RocChart c;
  c.text = Text("roc-bad");
  c.curves = {{"a", {{0.2, 0.5}, {0.1, 0.6}}, 0.7}};
  EXPECT_THAT(RenderRocCurves(c).status().message(),
              HasSubstr("curves[0].points[1]: rates must not decrease"));
  c.curves = {{"a", {{0.2, 1.5}}, 0.7}};
  EXPECT_FALSE(RenderRocCurves(c).ok());
  c.curves = {{"a", {{0.2, 0.5}}, 1.7}};
  EXPECT_THAT(RenderRocCurves(c).status().message(),
              HasSubstr("curves[0].auc"));
}

// ---- What every chart shares ----

TEST(ChartTextTest, RejectsIdsThatCannotNameAnElement) {
  for (const std::string& id :
       std::vector<std::string>{"", "1abc", "has space", "quote\"d", "a<b",
                                std::string(65, 'a'), "caf\xC3\xA9"}) {
    StabilityBars c;
    c.text.id = id;
    absl::StatusOr<std::string> svg = RenderStabilityBars(c);
    EXPECT_EQ(svg.status().code(), absl::StatusCode::kInvalidArgument) << id;
  }
  StabilityBars c;
  c.text.id = "a-Z_9";
  EXPECT_TRUE(RenderStabilityBars(c).ok());
}

TEST(ChartTextTest, TwoChartsOnOnePageShareNoId) {
  StabilityBars a = Courier();
  StabilityBars b = Courier();
  a.text.id = "psi-a";
  b.text.id = "psi-b";
  const std::string page =
      "<div>" + *RenderStabilityBars(a) + *RenderStabilityBars(b) + "</div>";
  auto root = ParseXml(page);
  ASSERT_TRUE(root.ok()) << root.status();
  std::set<std::string> ids;
  for (const XmlElement* e : (*root)->FindAll("")) {
    if (auto v = e->Attribute("id")) {
      EXPECT_TRUE(ids.insert(*v).second) << *v;
    }
  }
  EXPECT_GT(ids.size(), 4u);
}

}  // namespace
}  // namespace plumbline::charts
