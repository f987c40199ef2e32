// File: daemon/charts/charts.h
//
// The charts of the model-health page and the refit dossier, drawn
// server-side as SVG by one small module so both look the same and need no
// script, font or file from anywhere else. Each function takes a plain
// struct and returns one self-contained <svg> element (UTF-8 text) to inline
// in an HTML page:
//  - RenderReliabilityDiagram: mean predicted probability against observed
//    rate per bin, with the records per bin and the diagonal; one series per
//    version (active and candidate in the dossier);
//  - RenderBaselineHistogram: the window's share of records per bin against
//    the baseline's, bins labelled by their edges or levels;
//  - RenderStabilityBars: PSI per feature, largest first, with the watch and
//    drifting thresholds and each feature's state in words;
//  - RenderTimeSeries: a figure over days with threshold lines, and gaps
//    where its value is undefined;
//  - RenderRocCurves: one or more ROC curves with their AUC in the legend.
//
// Every chart has the caller's id on the <svg> element (ids inside it are
// that id plus a suffix), role="img", a <title> and a <desc> that sums up
// the data in words, axis labels with units, a legend in words, and every
// plotted number twice: at a readable precision in visible text or a
// tooltip (<title> child), and exactly (shortest round-trip decimal, RFC 3339
// for times) in data- attributes that scripts and tests read back. Drawing
// uses presentation attributes only, so several charts can share a page.
//
// NaN means "undefined" in every input (a history also takes +-inf so):
// such values are drawn as gaps or "n/a" and never written as numbers; a
// chart without any defined value draws a "no data" panel. Input that
// cannot be right (a probability outside [0, 1] or infinite, a negative
// count, bins and shares of different lengths, times out of order, a bad
// id) is INVALID_ARGUMENT naming the chart and the field.
//
//   charts::StabilityBars bars;
//   bars.text.id = "psi-courier";
//   bars.text.title = "Feature stability";
//   bars.features.push_back({"rainfall_mm", 0.31, std::nullopt});
//   bars.features.push_back({"parcel_weight_kg", 0.04, std::nullopt});
//   absl::StatusOr<std::string> svg = charts::RenderStabilityBars(bars);
//   if (!svg.ok()) return svg.status();
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_CHARTS_CHARTS_H_
#define PLUMBLINE_DAEMON_CHARTS_CHARTS_H_

#include <cstdint>
#include <limits>
#include <optional>
#include <string>
#include <vector>

#include "absl/status/statusor.h"
#include "absl/time/time.h"
#include "daemon/charts/palette.h"

namespace plumbline::charts {

inline constexpr double kUndefined = std::numeric_limits<double>::quiet_NaN();

// Words every chart carries.
struct ChartText {
  // The <svg> element's id: a letter, then letters, digits, '-' or '_', at
  // most 64 characters. Unique within the page the chart goes into.
  std::string id;
  std::string title;        // heading and <title>; may be empty
  std::string subtitle;     // optional second line: set, version, window
  std::string description;  // optional; <desc> starts with it
};

// ---- Reliability diagram ----

struct ReliabilityBin {
  double lower = 0;  // range of predicted probability, 0 <= lower <= upper <= 1
  double upper = 0;
  int64_t count = 0;  // records in the bin, >= 0
  // In [0, 1]; ignored (the bin is drawn empty) when count == 0 or either
  // is NaN.
  double mean_predicted = kUndefined;
  double observed_rate = kUndefined;
};

struct ReliabilitySeries {
  std::string name;  // legend text, e.g. "active v3"
  std::vector<ReliabilityBin> bins;
};

struct ReliabilityDiagram {
  ChartText text;
  std::vector<ReliabilitySeries> series;  // 1 to kMaxSeries
};

absl::StatusOr<std::string> RenderReliabilityDiagram(
    const ReliabilityDiagram& chart);

// ---- Histogram against the baseline ----

struct BaselineHistogram {
  ChartText text;
  std::string value_label;  // x axis: "predicted probability", "rainfall"
  std::string value_unit;   // "mm", "kg"; empty for a unitless value
  // Numeric bins, the convention of monitor/stability.h: cut points
  // e[0] < ... < e[k-1] make k+1 bins (-inf, e[0]), [e[0], e[1]), ...,
  // [e[k-1], +inf). Or categorical: `levels` names each bin (e.g. "house",
  // "flat", "unseen") and `edges` is empty.
  std::vector<double> edges;
  std::vector<std::string> levels;
  // Share of records per bin, in [0, 1], one per bin. A NaN window share
  // is drawn as "n/a". `baseline` may be empty (no baseline recorded).
  std::vector<double> window;
  std::vector<double> baseline;
  std::string window_name = "window";
  std::string baseline_name = "baseline";
};

absl::StatusOr<std::string> RenderBaselineHistogram(
    const BaselineHistogram& chart);

// ---- Stability bars per feature ----

struct FeatureStability {
  std::string feature;      // as the coefficient set names it; any text
  double psi = kUndefined;  // >= 0, or NaN when not computed
  // The state the drift policy gave the feature. When absent it follows
  // from the chart's thresholds as daemon/drift_policy.h judges ABOVE:
  // psi > drifting is drifting, psi > watch is watch, else steady.
  std::optional<Level> state;
};

struct StabilityBars {
  ChartText text;
  std::vector<FeatureStability> features;  // drawn largest PSI first
  double watch = 0.10;  // REQUIRES: 0 <= watch <= drifting, finite
  double drifting = 0.25;
};

absl::StatusOr<std::string> RenderStabilityBars(const StabilityBars& chart);

// ---- History of a figure ----

struct TimePoint {
  absl::Time at;
  double value = kUndefined;  // NaN or +-inf: undefined, drawn as a gap
};

struct TimeSeries {
  std::string name;               // legend text, e.g. "log-loss, last 24 h"
  std::vector<TimePoint> points;  // strictly increasing times
};

struct ThresholdLine {
  std::string name;             // e.g. "watch", "drifting"
  double value = 0;             // finite
  Level level = Level::kWatch;  // colour and dash of the line
};

struct TimeSeriesChart {
  ChartText text;
  std::string value_label;         // y axis: "log-loss"
  std::string value_unit;          // "nats per record"; empty for unitless
  std::vector<TimeSeries> series;  // 1 to kMaxSeries
  std::vector<ThresholdLine> thresholds;
};

absl::StatusOr<std::string> RenderTimeSeries(const TimeSeriesChart& chart);

// ---- ROC curves ----

struct RocPoint {
  double false_positive_rate = 0;  // in [0, 1]
  double true_positive_rate = 0;   // in [0, 1]
};

struct RocCurve {
  std::string name;              // legend text, e.g. "candidate v4"
  std::vector<RocPoint> points;  // in threshold order (non-decreasing rates)
  double auc = kUndefined;       // in [0, 1]; NaN prints "AUC n/a"
};

struct RocChart {
  ChartText text;
  std::vector<RocCurve> curves;  // 1 to kMaxSeries
};

absl::StatusOr<std::string> RenderRocCurves(const RocChart& chart);

}  // namespace plumbline::charts

#endif  // PLUMBLINE_DAEMON_CHARTS_CHARTS_H_
