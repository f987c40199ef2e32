// The reliability diagram of charts.h: a square plot of observed rate
// against mean predicted probability with the diagonal of perfect
// calibration, and under it a strip with the records per bin, sharing the
// x axis.
#include <algorithm>
#include <cmath>
#include <cstdint>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "absl/strings/str_cat.h"
#include "daemon/charts/chart_frame.h"
#include "daemon/charts/charts.h"

namespace plumbline::charts {
namespace {

using internal::ChartError;
using internal::ChartFrame;
using internal::LegendEntry;
using internal::LinearScale;
using internal::Point;
using internal::Rect;

constexpr double kWidth = 640;
constexpr double kPlotSide = 300;
constexpr double kStripHeight = 56;
constexpr double kStripGap = 14;

bool InUnit(double v) { return v >= 0 && v <= 1; }

bool Defined(const ReliabilityBin& b) {
  return b.count > 0 && !std::isnan(b.mean_predicted) &&
         !std::isnan(b.observed_rate);
}

absl::Status Check(const ReliabilityDiagram& chart) {
  if (chart.series.size() > kMaxSeries) {
    return ChartError(chart.text,
                      absl::StrCat("at most ", kMaxSeries, " series, got ",
                                   chart.series.size()));
  }
  for (size_t s = 0; s < chart.series.size(); ++s) {
    const auto& bins = chart.series[s].bins;
    for (size_t i = 0; i < bins.size(); ++i) {
      const ReliabilityBin& b = bins[i];
      const std::string field = absl::StrCat("series[", s, "].bins[", i, "]");
      if (!InUnit(b.lower) || !InUnit(b.upper) || b.lower > b.upper) {
        return ChartError(chart.text,
                          absl::StrCat(field,
                                       ": lower and upper must satisfy "
                                       "0 <= lower <= upper <= 1"));
      }
      if (b.count < 0) {
        return ChartError(chart.text,
                          absl::StrCat(field, ".count is negative"));
      }
      if (!std::isnan(b.mean_predicted) && !InUnit(b.mean_predicted)) {
        return ChartError(chart.text, absl::StrCat(field,
                                                   ".mean_predicted is not a "
                                                   "probability in [0, 1]"));
      }
      if (!std::isnan(b.observed_rate) && !InUnit(b.observed_rate)) {
        return ChartError(chart.text, absl::StrCat(field,
                                                   ".observed_rate is not a "
                                                   "rate in [0, 1]"));
      }
    }
  }
  return absl::OkStatus();
}

std::string BinRange(const ReliabilityBin& b) {
  return absl::StrCat(ShortNumber(b.lower, 3), "\xE2\x80\x93",  // en dash
                      ShortNumber(b.upper, 3));
}

}  // namespace

absl::StatusOr<std::string> RenderReliabilityDiagram(
    const ReliabilityDiagram& chart) {
  if (absl::Status s = internal::CheckChartText(chart.text); !s.ok()) return s;
  if (absl::Status s = Check(chart); !s.ok()) return s;

  int64_t max_count = 0;
  bool any_defined = false;
  std::string summary =
      "Reliability diagram: observed rate of positives against mean "
      "predicted probability per bin; points on the diagonal are perfectly "
      "calibrated.";
  std::vector<int64_t> totals;
  for (const ReliabilitySeries& series : chart.series) {
    int64_t total = 0;
    size_t empty = 0;
    for (const ReliabilityBin& b : series.bins) {
      total += b.count;
      max_count = std::max(max_count, b.count);
      if (Defined(b)) {
        any_defined = true;
      } else {
        ++empty;
      }
    }
    totals.push_back(total);
    absl::StrAppend(
        &summary, " ", SanitizeUtf8(series.name), ": ", CountText(total),
        " records in ", series.bins.size(), " bins",
        empty > 0 ? absl::StrCat(", ", empty, " empty") : std::string(), ".");
  }
  if (!any_defined) summary = "Reliability diagram: no labelled records.";

  SvgWriter w;
  const double top = ChartFrame::ContentTop(chart.text) + 8;
  const Rect plot{72, top, kPlotSide, kPlotSide};
  const Rect strip{72, plot.bottom() + kStripGap, kPlotSide, kStripHeight};
  const double height = strip.bottom() + 50;
  ChartFrame frame(&w, chart.text, "reliability", kWidth, height);
  frame.Begin(summary, !any_defined);

  const LinearScale x{0, 1, plot.x, plot.right()};
  const LinearScale y{0, 1, plot.bottom(), plot.y};
  const Ticks ticks = NiceTicks(0, 1, 5);
  internal::DrawYAxis(&w, plot, y, ticks,
                      "observed rate of positives (0\xE2\x80\x93"
                      "1)");
  const Rect x_axis_area{plot.x, plot.y, plot.width, strip.bottom() - plot.y};
  internal::DrawXAxis(&w, x_axis_area, x, ticks,
                      "mean predicted probability (0\xE2\x80\x93"
                      "1)");

  std::vector<LegendEntry> legend;
  if (!any_defined) {
    internal::DrawNoData(&w, x_axis_area, "no labelled records in this window");
  } else {
    // The diagonal of perfect calibration.
    w.Leaf("line", {{"class", "diagonal"},
                    {"x1", Coord(x(0))},
                    {"y1", Coord(y(0))},
                    {"x2", Coord(x(1))},
                    {"y2", Coord(y(1))},
                    {"stroke", kReference},
                    {"stroke-width", "1.2"},
                    {"stroke-dasharray", "4 4"}});
    // Strip: its own frame and scale of counts.
    w.Leaf("rect", {{"x", Coord(strip.x)},
                    {"y", Coord(strip.y)},
                    {"width", Coord(strip.width)},
                    {"height", Coord(strip.height)},
                    {"fill", "none"},
                    {"stroke", kGrid}});
    w.TextElement("text",
                  {{"x", Coord(strip.x - 6)},
                   {"y", Coord(strip.y + 10)},
                   {"text-anchor", "end"},
                   {"font-size", Coord(internal::kSmallSize)},
                   {"fill", kMutedInk}},
                  CountText(max_count));
    w.TextElement("text",
                  {{"x", Coord(strip.x - 6)},
                   {"y", Coord(strip.bottom())},
                   {"text-anchor", "end"},
                   {"font-size", Coord(internal::kSmallSize)},
                   {"fill", kMutedInk}},
                  "0");
    const double sx = strip.x - 46, sy = strip.y + strip.height / 2;
    w.TextElement("text",
                  {{"x", Coord(sx)},
                   {"y", Coord(sy)},
                   {"text-anchor", "middle"},
                   {"transform", absl::StrCat("rotate(-90 ", Coord(sx), " ",
                                              Coord(sy), ")")},
                   {"font-size", Coord(internal::kSmallSize)},
                   {"fill", kInk}},
                  "records");
    const LinearScale count_y{
        0, static_cast<double>(std::max<int64_t>(max_count, 1)), strip.bottom(),
        strip.y + 2};
    const size_t n_series = chart.series.size();
    for (size_t s = 0; s < n_series; ++s) {
      const ReliabilitySeries& series = chart.series[s];
      const SeriesStyle& style = SeriesStyleAt(s);
      w.Open("g", {{"class", "series"},
                   {"data-series", series.name},
                   {"data-series-index", absl::StrCat(s)}});
      std::vector<std::optional<Point>> points;
      for (const ReliabilityBin& b : series.bins) {
        if (Defined(b)) {
          points.push_back(Point{x(b.mean_predicted), y(b.observed_rate)});
        }
      }
      const std::string d = internal::PathWithGaps(points);
      if (!d.empty()) {
        w.Leaf("path", {{"d", d},
                        {"fill", "none"},
                        {"stroke", style.colour},
                        {"stroke-width", "2"},
                        {"stroke-dasharray", style.dash},
                        {"stroke-linejoin", "round"}});
      }
      for (const ReliabilityBin& b : series.bins) {
        const bool defined = Defined(b);
        std::vector<SvgAttribute> attributes = {{"class", "bin"}};
        const std::string lower = ExactNumber(b.lower);
        const std::string upper = ExactNumber(b.upper);
        const std::string count = absl::StrCat(b.count);
        const std::string mean = ExactNumber(b.mean_predicted);
        const std::string rate = ExactNumber(b.observed_rate);
        attributes.push_back({"data-lower", lower});
        attributes.push_back({"data-upper", upper});
        attributes.push_back({"data-count", count});
        if (defined) {
          attributes.push_back({"data-mean-predicted", mean});
          attributes.push_back({"data-observed-rate", rate});
        }
        w.Open("g", attributes);
        std::string tip =
            absl::StrCat(SanitizeUtf8(series.name), ", bin ", BinRange(b), ": ",
                         CountText(b.count), " records");
        if (defined) {
          absl::StrAppend(&tip, ", mean predicted ",
                          ShortNumber(b.mean_predicted, 4), ", observed ",
                          ShortNumber(b.observed_rate, 4));
        }
        w.TextElement("title", {}, tip);
        // Count bar: the bin's share of the strip's width for this series.
        const double bx0 = x(b.lower), bx1 = x(b.upper);
        const double slot = (bx1 - bx0) / static_cast<double>(n_series);
        const double pad = std::min(1.5, slot * 0.15);
        const double bar_top = count_y(static_cast<double>(b.count));
        w.Leaf("rect", {{"x", Coord(bx0 + slot * static_cast<double>(s) + pad)},
                        {"y", Coord(bar_top)},
                        {"width", Coord(std::max(slot - 2 * pad, 0.5))},
                        {"height", Coord(strip.bottom() - bar_top)},
                        {"fill", style.hollow_marker ? kPaper : style.colour},
                        {"fill-opacity", style.hollow_marker ? "1" : "0.55"},
                        {"stroke", style.colour},
                        {"stroke-width", "1"}});
        if (defined) {
          internal::OpenMarker(&w, style, x(b.mean_predicted),
                               y(b.observed_rate), 4.5, {});
          w.Close();
        }
        w.Close();
      }
      w.Close();
      legend.push_back(internal::SeriesEntry(
          absl::StrCat(series.name, ", n = ", CountText(totals[s])), style));
    }
    legend.push_back(
        internal::LineEntry("perfect calibration", kReference, "4 4"));
  }
  internal::DrawAxisLines(&w, plot);
  if (!legend.empty()) {
    const double legend_x = plot.right() + 28;
    const double used = internal::DrawLegend(&w, legend_x, plot.y,
                                             kWidth - legend_x - 12, legend);
    // How to read it, in words, under the legend.
    const std::vector<std::string> notes = {
        "Above the diagonal: more positives",
        "than predicted (under-prediction).",
        "Bars below: records per bin (n).",
    };
    double ny = plot.y + used + 18;
    for (const std::string& note : notes) {
      w.TextElement("text",
                    {{"x", Coord(legend_x)},
                     {"y", Coord(ny)},
                     {"font-size", Coord(internal::kSmallSize)},
                     {"fill", kMutedInk}},
                    note);
      ny += 15;
    }
  }
  frame.End();
  return std::move(w).Release();
}

}  // namespace plumbline::charts
