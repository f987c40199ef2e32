// File: daemon/charts/chart_frame.h
//
// What the chart kinds of charts.h share: checking the caller's words, the
// <svg> root with its <title>, <desc>, heading and fill patterns, linear
// scales, axes with grid lines, legends, series markers and the "no data"
// panel. Internal to daemon/charts; callers use charts.h.
//
//   SvgWriter w;
//   ChartFrame frame(&w, chart.text, "roc", 640, 400);
//   frame.Begin(summary, /*empty=*/false);
//   const Rect plot{72, ChartFrame::ContentTop(chart.text), 300, 300};
//   LinearScale x{0, 1, plot.x, plot.right()};
//   DrawXAxis(&w, plot, x, NiceTicks(0, 1, 5), "false positive rate (0–1)");
//   frame.End();
//   std::string svg = std::move(w).Release();
//
// Thread-compatible: a frame writes into one SvgWriter.
#ifndef PLUMBLINE_DAEMON_CHARTS_CHART_FRAME_H_
#define PLUMBLINE_DAEMON_CHARTS_CHART_FRAME_H_

#include <optional>
#include <string>
#include <vector>

#include "absl/status/status.h"
#include "absl/strings/string_view.h"
#include "daemon/charts/charts.h"
#include "daemon/charts/format.h"
#include "daemon/charts/palette.h"
#include "daemon/charts/svg.h"

namespace plumbline::charts::internal {

// Font sizes (px) and the average glyph width of the sans-serif fonts we
// name, as a share of the size; used to fit text into a width.
inline constexpr double kTitleSize = 15;
inline constexpr double kTextSize = 12;
inline constexpr double kSmallSize = 11;
inline constexpr double kGlyphWidth = 0.6;

// How many characters of `size` px text fit into `width` px (at least 1).
size_t CharsThatFit(double width, double size);

struct Rect {
  double x = 0;
  double y = 0;
  double width = 0;
  double height = 0;
  double right() const { return x + width; }
  double bottom() const { return y + height; }
};

// Maps [lo, hi] of the data onto [from, to] pixels (to < from for y axes).
struct LinearScale {
  double lo = 0;
  double hi = 1;
  double from = 0;
  double to = 1;
  double operator()(double v) const {
    return from + (v - lo) / (hi - lo) * (to - from);
  }
};

struct Point {
  double x = 0;
  double y = 0;
};

// SVG path data through the points in order, starting a new subpath after
// each gap (nullopt) so undefined values break the line.
std::string PathWithGaps(const std::vector<std::optional<Point>>& points);

// "label (unit)", or the label alone when the unit is empty.
std::string AxisTitle(absl::string_view label, absl::string_view unit);

// OK, or INVALID_ARGUMENT when text.id is not a valid chart id.
absl::Status CheckChartText(const ChartText& text);

// INVALID_ARGUMENT "chart \"<id>\": <what>".
absl::Status ChartError(const ChartText& text, absl::string_view what);

// The root <svg> element of one chart and the parts every chart has.
class ChartFrame {
 public:
  // `kind` goes into data-chart. REQUIRES: CheckChartText(text).ok();
  // *writer and `text` outlive the frame.
  ChartFrame(SvgWriter* writer, const ChartText& text, absl::string_view kind,
             double width, double height);

  // Opens <svg>, writes <title>, <desc> (the caller's description, then
  // `summary`), the fill patterns, the background, the heading and the
  // subtitle. `empty` sets data-empty="true" for a chart without data.
  void Begin(absl::string_view summary, bool empty);
  // Closes <svg>.
  void End();

  // Top of the space below the heading and subtitle of a chart with `text`.
  static double ContentTop(const ChartText& text);
  // An id inside the chart: "<chart id>-<suffix>".
  std::string SubId(absl::string_view suffix) const;
  // The fill of a bar in `level`: its colour, with the level's hatch
  // pattern ("url(#<id>-hatch)") for watch and drifting.
  std::string LevelFill(Level level) const;

 private:
  SvgWriter* writer_;
  const ChartText& text_;
  std::string kind_;
  double width_;
  double height_;
};

// Light grid lines at the ticks across the plot, tick labels on the left
// edge and the axis title rotated along it, or, with title_on_top, written
// level above the plot's top left corner (wide plots, long titles; the
// caller leaves kTitleOnTopRoom above the plot).
inline constexpr double kTitleOnTopRoom = 20;
void DrawYAxis(SvgWriter* w, const Rect& plot, const LinearScale& y,
               const Ticks& ticks, absl::string_view title,
               bool title_on_top = false);
// Grid lines, tick labels below the plot, and the axis title under them.
void DrawXAxis(SvgWriter* w, const Rect& plot, const LinearScale& x,
               const Ticks& ticks, absl::string_view title);
// The axis lines along the left and bottom edges of the plot.
void DrawAxisLines(SvgWriter* w, const Rect& plot);

struct LegendEntry {
  enum class Kind { kSeries, kBox, kReferenceLine };
  Kind kind = Kind::kSeries;
  std::string label;
  const SeriesStyle* series = nullptr;  // kSeries
  std::string fill;                     // kBox: fill (colour or url())
  std::string stroke = kReference;      // kBox outline, kReferenceLine
  std::string dash = "none";            // kBox outline, kReferenceLine
};

LegendEntry SeriesEntry(std::string label, const SeriesStyle& style);
LegendEntry BoxEntry(std::string label, std::string fill, std::string stroke,
                     std::string dash = "none");
LegendEntry LineEntry(std::string label, std::string stroke, std::string dash);

// One legend entry per line from (x, y) downwards; labels cut to fit
// `width` with the full text in a <title>. Returns the height used.
double DrawLegend(SvgWriter* w, double x, double y, double width,
                  const std::vector<LegendEntry>& entries);
// The entries side by side from (x, y), wrapping within `width`. Returns the
// height used.
double DrawLegendRow(SvgWriter* w, double x, double y, double width,
                     const std::vector<LegendEntry>& entries);

// Opens the marker element of a series at (x, y) with `extra` attributes;
// the caller may add children (a <title>) and must Close() it.
void OpenMarker(SvgWriter* w, const SeriesStyle& style, double x, double y,
                double radius, const std::vector<SvgAttribute>& extra);

// A grey panel over `plot` saying `message`, for a chart without data.
void DrawNoData(SvgWriter* w, const Rect& plot, absl::string_view message);

// Text that is cut to `max_chars` with an ellipsis, the full text in a
// <title> child so it shows on hover and reaches screen readers.
void DrawFittedText(SvgWriter* w, std::vector<SvgAttribute> attributes,
                    absl::string_view text, size_t max_chars);

}  // namespace plumbline::charts::internal

#endif  // PLUMBLINE_DAEMON_CHARTS_CHART_FRAME_H_
