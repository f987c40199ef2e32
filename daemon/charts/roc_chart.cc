// The ROC chart of charts.h: true positive rate against false positive rate
// on a square plot, one curve per version with its AUC in the legend, and
// the diagonal of a score that ranks at random.
#include <cmath>
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
constexpr size_t kMaxMarkers = 30;  // more points: the line alone

bool Defined(const RocPoint& p) {
  return !std::isnan(p.false_positive_rate) &&
         !std::isnan(p.true_positive_rate);
}

absl::Status Check(const RocChart& chart) {
  if (chart.curves.size() > kMaxSeries) {
    return ChartError(chart.text,
                      absl::StrCat("at most ", kMaxSeries, " curves, got ",
                                   chart.curves.size()));
  }
  for (size_t c = 0; c < chart.curves.size(); ++c) {
    const RocCurve& curve = chart.curves[c];
    if (!std::isnan(curve.auc) && !(curve.auc >= 0 && curve.auc <= 1)) {
      return ChartError(chart.text,
                        absl::StrCat("curves[", c, "].auc is not in [0, 1]"));
    }
    const RocPoint* previous = nullptr;
    for (size_t i = 0; i < curve.points.size(); ++i) {
      const RocPoint& p = curve.points[i];
      if (!Defined(p)) continue;
      const std::string field = absl::StrCat("curves[", c, "].points[", i, "]");
      if (!(p.false_positive_rate >= 0 && p.false_positive_rate <= 1 &&
            p.true_positive_rate >= 0 && p.true_positive_rate <= 1)) {
        return ChartError(chart.text,
                          absl::StrCat(field, ": rates must be in [0, 1]"));
      }
      if (previous != nullptr &&
          (p.false_positive_rate < previous->false_positive_rate ||
           p.true_positive_rate < previous->true_positive_rate)) {
        return ChartError(chart.text,
                          absl::StrCat(field,
                                       ": rates must not decrease along the "
                                       "curve"));
      }
      previous = &p;
    }
  }
  return absl::OkStatus();
}

std::string AucText(double auc) {
  return std::isnan(auc) ? "AUC n/a"
                         : absl::StrCat("AUC ", ShortNumber(auc, 3));
}

}  // namespace

absl::StatusOr<std::string> RenderRocCurves(const RocChart& chart) {
  if (absl::Status s = internal::CheckChartText(chart.text); !s.ok()) return s;
  if (absl::Status s = Check(chart); !s.ok()) return s;

  bool any_defined = false;
  std::string summary =
      "ROC curves: true positive rate against false positive rate as the "
      "decision threshold falls; the higher and further left, the better "
      "the score ranks positives above negatives.";
  for (const RocCurve& curve : chart.curves) {
    size_t n = 0;
    for (const RocPoint& p : curve.points) n += Defined(p) ? 1 : 0;
    any_defined = any_defined || n > 0;
    absl::StrAppend(&summary, " ", SanitizeUtf8(curve.name), ": ",
                    AucText(curve.auc), ", ", n, " points.");
  }
  if (!any_defined) summary = "ROC curves: no points to draw.";

  SvgWriter w;
  const double top = ChartFrame::ContentTop(chart.text) + 8;
  const Rect plot{72, top, kPlotSide, kPlotSide};
  const double height = plot.bottom() + 52;
  ChartFrame frame(&w, chart.text, "roc", kWidth, height);
  frame.Begin(summary, !any_defined);

  const LinearScale x{0, 1, plot.x, plot.right()};
  const LinearScale y{0, 1, plot.bottom(), plot.y};
  const Ticks ticks = NiceTicks(0, 1, 5);
  internal::DrawYAxis(&w, plot, y, ticks,
                      "true positive rate (0\xE2\x80\x93"
                      "1)");
  internal::DrawXAxis(&w, plot, x, ticks,
                      "false positive rate (0\xE2\x80\x93"
                      "1)");

  std::vector<LegendEntry> legend;
  if (!any_defined) {
    internal::DrawNoData(&w, plot, "no curve has points");
  } else {
    w.Leaf("line", {{"class", "diagonal"},
                    {"x1", Coord(x(0))},
                    {"y1", Coord(y(0))},
                    {"x2", Coord(x(1))},
                    {"y2", Coord(y(1))},
                    {"stroke", kReference},
                    {"stroke-width", "1.2"},
                    {"stroke-dasharray", "4 4"}});
    for (size_t c = 0; c < chart.curves.size(); ++c) {
      const RocCurve& curve = chart.curves[c];
      const SeriesStyle& style = SeriesStyleAt(c);
      std::string fpr, tpr;
      std::vector<std::optional<Point>> line;
      // The curve starts at (0, 0) and ends at (1, 1) whatever thresholds
      // the caller sampled; the data attributes keep the caller's points.
      line.push_back(Point{x(0), y(0)});
      size_t n = 0;
      for (const RocPoint& p : curve.points) {
        if (!Defined(p)) continue;
        absl::StrAppend(&fpr, n > 0 ? " " : "",
                        ExactNumber(p.false_positive_rate));
        absl::StrAppend(&tpr, n > 0 ? " " : "",
                        ExactNumber(p.true_positive_rate));
        line.push_back(
            Point{x(p.false_positive_rate), y(p.true_positive_rate)});
        ++n;
      }
      line.push_back(Point{x(1), y(1)});
      const std::string index = absl::StrCat(c);
      const std::string auc = ExactNumber(curve.auc);
      std::vector<SvgAttribute> attributes = {{"class", "series"},
                                              {"data-series", curve.name},
                                              {"data-series-index", index},
                                              {"data-fpr", fpr},
                                              {"data-tpr", tpr}};
      if (!std::isnan(curve.auc)) attributes.push_back({"data-auc", auc});
      w.Open("g", attributes);
      w.TextElement(
          "title", {},
          absl::StrCat(SanitizeUtf8(curve.name), ": ", AucText(curve.auc)));
      if (n > 0) {
        w.Leaf("path", {{"d", internal::PathWithGaps(line)},
                        {"fill", "none"},
                        {"stroke", style.colour},
                        {"stroke-width", "2.2"},
                        {"stroke-dasharray", style.dash},
                        {"stroke-linejoin", "round"}});
      }
      if (n <= kMaxMarkers) {
        for (size_t i = 1; i + 1 < line.size(); ++i) {
          internal::OpenMarker(&w, style, line[i]->x, line[i]->y, 3.2, {});
          w.Close();
        }
      }
      w.Close();
      legend.push_back(internal::SeriesEntry(
          absl::StrCat(curve.name, " \xE2\x80\x94 ", AucText(curve.auc)),
          style));
    }
    legend.push_back(
        internal::LineEntry("random ranking (AUC 0.5)", kReference, "4 4"));
  }
  internal::DrawAxisLines(&w, plot);
  if (!legend.empty()) {
    const double legend_x = plot.right() + 28;
    internal::DrawLegend(&w, legend_x, plot.y, kWidth - legend_x - 12, legend);
  }
  frame.End();
  return std::move(w).Release();
}

}  // namespace plumbline::charts
