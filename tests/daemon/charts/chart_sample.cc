// chart_sample: renders every chart kind of daemon/charts/charts.h with
// invented data from the courier demo (set courier_first_attempt; features
// distance_km, parcel_weight_kg, hour_of_day, building_type,
// prior_failed_attempts, rainfall_mm) plus the awkward cases (no data, one
// point, equal values, hostile feature names) into DIR/sample.html and one
// DIR/<id>.svg per chart. ctest parses them (check_charts.py) and takes a
// headless Chromium screenshot of the page (screenshot_check.py).
//
//   chart_sample DIR
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <functional>
#include <iostream>
#include <string>
#include <utility>
#include <vector>

#include "absl/status/statusor.h"
#include "absl/strings/str_cat.h"
#include "absl/time/civil_time.h"
#include "absl/time/time.h"
#include "daemon/charts/charts.h"
#include "daemon/charts/svg.h"

namespace charts = plumbline::charts;

namespace {

constexpr double kNaN = charts::kUndefined;

absl::Time Day(int day, int hour = 0) {
  return absl::FromCivil(absl::CivilHour(2024, 5, day, hour),
                         absl::UTCTimeZone());
}

charts::ChartText Text(std::string id, std::string title,
                       std::string subtitle) {
  charts::ChartText t;
  t.id = std::move(id);
  t.title = std::move(title);
  t.subtitle = std::move(subtitle);
  return t;
}

charts::ReliabilityDiagram Reliability() {
  charts::ReliabilityDiagram c;
  c.text = Text("holdout-reliability", "Reliability on the holdout",
                "courier_first_attempt \xC2\xB7 10 equal-width bins \xC2\xB7 "
                "3 812 holdout records");
  // active v3 under-predicts failures above 0.3 since the rain season.
  const double active_mean[] = {0.061, 0.148, 0.251, 0.347, 0.449,
                                0.548, 0.652, 0.741, 0.838, kNaN};
  const double active_rate[] = {0.072, 0.171, 0.302, 0.431, 0.548,
                                0.667, 0.752, 0.846, 0.9,   kNaN};
  const int64_t active_count[] = {1204, 902, 611, 402, 281,
                                  170,  119, 81,  42,  0};
  const double cand_mean[] = {0.058, 0.152, 0.248, 0.352, 0.447,
                              0.551, 0.649, 0.752, 0.846, 0.93};
  const double cand_rate[] = {0.061, 0.149, 0.262, 0.343, 0.461,
                              0.538, 0.671, 0.739, 0.857, 1.0};
  const int64_t cand_count[] = {1096, 874, 640, 441, 302, 191, 128, 77, 56, 7};
  charts::ReliabilitySeries active{"active v3", {}};
  charts::ReliabilitySeries candidate{"candidate v4", {}};
  for (int i = 0; i < 10; ++i) {
    const double lo = i * 0.1, hi = (i + 1) * 0.1;
    active.bins.push_back(
        {lo, hi, active_count[i], active_mean[i], active_rate[i]});
    candidate.bins.push_back(
        {lo, hi, cand_count[i], cand_mean[i], cand_rate[i]});
  }
  c.series = {active, candidate};
  return c;
}

charts::RocChart Roc() {
  charts::RocChart c;
  c.text = Text("holdout-roc", "ROC on the holdout",
                "courier_first_attempt \xC2\xB7 3 812 holdout records");
  charts::RocCurve active{"active v3", {}, 0.7712};
  charts::RocCurve candidate{"candidate v4", {}, 0.8046};
  // Smooth invented curves: tpr = 1 - (1 - fpr)^k.
  for (int i = 1; i < 60; ++i) {
    const double f = i / 60.0;
    active.points.push_back({f, 1 - std::pow(1 - f, 3.1)});
    candidate.points.push_back({f, 1 - std::pow(1 - f, 3.9)});
  }
  c.curves = {active, candidate};
  return c;
}

charts::BaselineHistogram ScoreHistogram() {
  charts::BaselineHistogram c;
  c.text = Text("score-histogram", "Scores against the baseline",
                "courier_first_attempt v3 \xC2\xB7 last 24 h \xC2\xB7 "
                "PSI 0.183 (watch)");
  c.value_label = "predicted probability of a failed first attempt";
  c.value_unit =
      "0\xE2\x80\x93"
      "1";
  c.edges = {0.05, 0.08, 0.11, 0.14, 0.18, 0.23, 0.29, 0.37, 0.5};
  c.baseline = {0.1, 0.1, 0.1, 0.1, 0.1, 0.1, 0.1, 0.1, 0.1, 0.1};
  c.window = {0.052, 0.061, 0.074, 0.088, 0.097,
              0.111, 0.124, 0.129, 0.135, 0.129};
  c.window_name = "last 24 h";
  c.baseline_name = "baseline (fit, 40 000 records)";
  return c;
}

charts::BaselineHistogram BuildingHistogram() {
  charts::BaselineHistogram c;
  c.text = Text("building-type-histogram", "building_type against the baseline",
                "courier_first_attempt v3 \xC2\xB7 last 24 h");
  c.value_label = "building_type";
  c.levels = {"house", "flat", "office", "shop", "unseen (e.g. locker_bank)"};
  c.baseline = {0.48, 0.30, 0.14, 0.08, 0};
  c.window = {0.44, 0.29, 0.13, 0.07, 0.07};
  c.window_name = "last 24 h";
  c.baseline_name = "baseline";
  return c;
}

charts::StabilityBars Stability() {
  charts::StabilityBars c;
  c.text = Text("feature-stability", "Feature stability",
                "courier_first_attempt v3 \xC2\xB7 last 24 h against the "
                "baseline \xC2\xB7 9 214 scored records");
  c.features = {
      {"distance_km", 0.021, std::nullopt},
      {"parcel_weight_kg", 0.043, std::nullopt},
      {"hour_of_day", 0.008, std::nullopt},
      {"building_type", 0.137, std::nullopt},
      {"prior_failed_attempts", 0.012, std::nullopt},
      {"rainfall_mm", 0.412, std::nullopt},
      {"depot_region", kNaN, std::nullopt},
  };
  return c;
}

charts::TimeSeriesChart LogLossHistory() {
  charts::TimeSeriesChart c;
  c.text = Text("log-loss-history", "Log-loss over 14 days",
                "courier_first_attempt v3 \xC2\xB7 daily evaluation of the "
                "last 24 h of labelled records");
  c.value_label = "log-loss";
  c.value_unit = "nats per record";
  charts::TimeSeries s{"log-loss, last 24 h", {}};
  const double values[] = {0.412, 0.405, 0.418, 0.409, 0.421, kNaN,  kNaN,
                           0.433, 0.446, 0.458, 0.471, 0.489, 0.502, 0.517};
  for (int d = 0; d < 14; ++d) s.points.push_back({Day(1 + d), values[d]});
  c.series = {s};
  // 1.10x and 1.25x the training log-loss 0.402.
  c.thresholds = {{"watch", 0.4422, charts::Level::kWatch},
                  {"drifting", 0.5025, charts::Level::kDrifting}};
  return c;
}

charts::TimeSeriesChart PsiHistory() {
  charts::TimeSeriesChart c;
  c.text = Text("psi-history", "Stability over 14 days",
                "courier_first_attempt v3 \xC2\xB7 hourly evaluations");
  c.value_label = "PSI";
  c.value_unit = "unitless";
  charts::TimeSeries score{"score PSI", {}};
  charts::TimeSeries rain{"rainfall_mm PSI", {}};
  for (int h = 0; h < 14 * 24; h += 3) {
    const double t = h / 24.0;
    score.points.push_back(
        {Day(1) + absl::Hours(h), 0.02 + 0.012 * t + 0.01 * std::sin(h / 5.0)});
    rain.points.push_back({Day(1) + absl::Hours(h),
                           (h > 100 && h < 130)
                               ? kNaN
                               : 0.03 + 0.028 * t + 0.02 * std::sin(h / 7.0)});
  }
  c.series = {score, rain};
  c.thresholds = {{"watch", 0.1, charts::Level::kWatch},
                  {"drifting", 0.25, charts::Level::kDrifting}};
  return c;
}

// The awkward cases.
charts::ReliabilityDiagram EmptyReliability() {
  charts::ReliabilityDiagram c;
  c.text = Text("empty-reliability", "Reliability, window without outcomes",
                "courier_first_attempt v4 \xC2\xB7 shadow, no outcomes yet");
  charts::ReliabilitySeries s{"shadow v4", {}};
  for (int i = 0; i < 10; ++i)
    s.bins.push_back({i * 0.1, (i + 1) * 0.1, 0, kNaN, kNaN});
  c.series = {s};
  return c;
}

charts::TimeSeriesChart SinglePoint() {
  charts::TimeSeriesChart c;
  c.text = Text("single-point-history", "Calibration in the large, first day",
                "one evaluation so far; all later values equal");
  c.value_label = "calibration in the large";
  c.value_unit = "log-odds";
  c.series = {{"first evaluation", {{Day(20, 6), 0.031}}},
              {"equal values",
               {{Day(20, 9), 0.05}, {Day(20, 12), 0.05}, {Day(20, 15), 0.05}}}};
  return c;
}

charts::StabilityBars HostileNames() {
  charts::StabilityBars c;
  c.text = Text("hostile-names", "Names from users: <script>&\"quotes\"'",
                "escaped, cut with an ellipsis, full text in the tooltip");
  c.features = {
      {"<b>bold</b> & \"quoted\" 'feature'", 0.3, std::nullopt},
      {"a_very_long_feature_name_from_an_upstream_system_that_never_ends_"
       "rainfall_mm_per_hour_at_the_depot",
       0.12, std::nullopt},
      {"bad utf-8 \xFF\xFE and control \x01 chars", 0.0, std::nullopt},
      {"caf\xC3\xA9 \xE2\x82\xAC parcel", 0.05, charts::Level::kWatch},
  };
  return c;
}

charts::RocChart EmptyRoc() {
  charts::RocChart c;
  c.text = Text("empty-roc", "ROC, no labelled records", "");
  c.curves = {{"active v3", {}, kNaN}};
  return c;
}

}  // namespace

int main(int argc, char** argv) {
  if (argc != 2) {
    std::cerr << "usage: chart_sample DIR\n";
    return 2;
  }
  const std::string dir = argv[1];
  std::error_code error;
  std::filesystem::create_directories(dir, error);
  if (error) {
    std::cerr << dir << ": " << error.message() << "\n";
    return 1;
  }
  std::vector<std::pair<std::string, absl::StatusOr<std::string>>> charts = {
      {"holdout-reliability", charts::RenderReliabilityDiagram(Reliability())},
      {"holdout-roc", charts::RenderRocCurves(Roc())},
      {"score-histogram", charts::RenderBaselineHistogram(ScoreHistogram())},
      {"building-type-histogram",
       charts::RenderBaselineHistogram(BuildingHistogram())},
      {"feature-stability", charts::RenderStabilityBars(Stability())},
      {"log-loss-history", charts::RenderTimeSeries(LogLossHistory())},
      {"psi-history", charts::RenderTimeSeries(PsiHistory())},
      {"empty-reliability",
       charts::RenderReliabilityDiagram(EmptyReliability())},
      {"single-point-history", charts::RenderTimeSeries(SinglePoint())},
      {"hostile-names", charts::RenderStabilityBars(HostileNames())},
      {"empty-roc", charts::RenderRocCurves(EmptyRoc())},
  };
  std::string page =
      "<!DOCTYPE html>\n<html xmlns=\"http://www.w3.org/1999/xhtml\" "
      "lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n"
      "<title>Plumbline charts: sample</title>\n</head>\n"
      "<body style=\"margin:16px;background:#ECEFF1;font-family:DejaVu Sans,"
      "sans-serif;color:#1A1A1A\">\n"
      "<h1 style=\"font-size:20px;margin:0 0 12px\">Plumbline charts: "
      "sample of every kind (invented courier data)</h1>\n"
      "<div style=\"display:flex;flex-wrap:wrap;gap:16px;"
      "align-items:flex-start\">\n";
  for (auto& [id, svg] : charts) {
    if (!svg.ok()) {
      std::cerr << id << ": " << svg.status() << "\n";
      return 1;
    }
    std::ofstream(dir + "/" + id + ".svg") << *svg;
    absl::StrAppend(&page,
                    "<figure style=\"margin:0;background:#FFFFFF;"
                    "border:1px solid #C8CDD0;width:640px\">\n",
                    *svg, "</figure>\n");
  }
  page += "</div>\n</body>\n</html>\n";
  std::ofstream(dir + "/sample.html") << page;
  std::cout << dir << "/sample.html\n";
  return 0;
}
