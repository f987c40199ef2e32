// The stability bars of charts.h: one horizontal bar per feature, largest
// PSI first, filled by state (colour and hatch), the watch and drifting
// thresholds as vertical lines, and each feature's PSI and state in words
// at the end of its row.
#include <algorithm>
#include <cmath>
#include <string>
#include <utility>
#include <vector>

#include "absl/strings/str_cat.h"
#include "absl/strings/str_join.h"
#include "daemon/charts/chart_frame.h"
#include "daemon/charts/charts.h"

namespace plumbline::charts {
namespace {

using internal::ChartError;
using internal::ChartFrame;
using internal::LegendEntry;
using internal::LinearScale;
using internal::Rect;

constexpr double kWidth = 640;
constexpr double kRow = 24;
constexpr double kBar = 14;
constexpr double kNameRight = 196;  // names end here, right-aligned
constexpr double kValueColumn = 120;
// Bars longer than this many times the drifting threshold are cut at the
// edge with a break mark, so one wild feature does not flatten the rest.
constexpr double kMaxScaleOverDrifting = 6;

absl::Status Check(const StabilityBars& chart) {
  if (!std::isfinite(chart.watch) || !std::isfinite(chart.drifting) ||
      !(chart.watch >= 0) || !(chart.watch <= chart.drifting)) {
    return ChartError(chart.text,
                      "thresholds must be finite with 0 <= watch <= "
                      "drifting");
  }
  for (size_t i = 0; i < chart.features.size(); ++i) {
    const double psi = chart.features[i].psi;
    if (!std::isnan(psi) && !(std::isfinite(psi) && psi >= 0)) {
      return ChartError(chart.text,
                        absl::StrCat("features[", i, "] (\"",
                                     Ellipsize(chart.features[i].feature, 60),
                                     "\"): psi must be finite and >= 0, or "
                                     "NaN when not computed"));
    }
  }
  return absl::OkStatus();
}

struct Row {
  const FeatureStability* feature;
  bool defined;
  std::optional<Level> state;  // absent: undefined PSI and no state given
};

std::optional<Level> StateOf(const FeatureStability& f, double watch,
                             double drifting) {
  if (f.state.has_value()) return f.state;
  if (std::isnan(f.psi)) return std::nullopt;
  if (f.psi > drifting) return Level::kDrifting;
  if (f.psi > watch) return Level::kWatch;
  return Level::kSteady;
}

}  // namespace

absl::StatusOr<std::string> RenderStabilityBars(const StabilityBars& chart) {
  if (absl::Status s = internal::CheckChartText(chart.text); !s.ok()) return s;
  if (absl::Status s = Check(chart); !s.ok()) return s;

  std::vector<Row> rows;
  double max_psi = 0;
  for (const FeatureStability& f : chart.features) {
    const bool defined = !std::isnan(f.psi);
    rows.push_back({&f, defined, StateOf(f, chart.watch, chart.drifting)});
    if (defined) max_psi = std::max(max_psi, f.psi);
  }
  // Largest PSI first; undefined last; ties keep the caller's order.
  std::stable_sort(rows.begin(), rows.end(), [](const Row& a, const Row& b) {
    if (a.defined != b.defined) return a.defined;
    return a.defined && a.feature->psi > b.feature->psi;
  });
  const bool empty = rows.empty();

  // The description lists the features by state, worst first.
  std::string summary = absl::StrCat(
      "Population stability index (PSI) of each feature against its "
      "baseline, largest first; watch above ",
      ShortNumber(chart.watch, 4), ", drifting above ",
      ShortNumber(chart.drifting, 4), ".");
  if (empty) {
    summary = "Population stability per feature: no features to show.";
  }
  for (Level level : {Level::kDrifting, Level::kWatch, Level::kSteady}) {
    std::vector<std::string> names;
    for (const Row& r : rows) {
      if (r.state == level) {
        names.push_back(absl::StrCat(Ellipsize(r.feature->feature, 60), " ",
                                     ShortNumber(r.feature->psi, 3)));
      }
    }
    if (!names.empty()) {
      absl::StrAppend(&summary, " ", LevelStyleOf(level).name, " (",
                      names.size(), "): ", absl::StrJoin(names, ", "), ".");
    }
  }

  SvgWriter w;
  const double top = ChartFrame::ContentTop(chart.text);
  const std::string watch_text = ShortNumber(chart.watch, 4);
  const std::string drifting_text = ShortNumber(chart.drifting, 4);
  std::vector<LegendEntry> legend = {
      internal::BoxEntry(absl::StrCat("steady: PSI \xE2\x89\xA4 ", watch_text),
                         kBluishGreen, kAxis),
      internal::BoxEntry(absl::StrCat("watch: PSI > ", watch_text), "", kAxis),
      internal::BoxEntry(absl::StrCat("drifting: PSI > ", drifting_text), "",
                         kAxis)};
  SvgWriter scratch;
  ChartFrame scratch_frame(&scratch, chart.text, "stability", kWidth, 0);
  legend[1].fill = scratch_frame.LevelFill(Level::kWatch);
  legend[2].fill = scratch_frame.LevelFill(Level::kDrifting);
  const double legend_height =
      internal::DrawLegendRow(&scratch, 16, top, kWidth - 32, legend);
  const double rows_height =
      empty ? 120 : kRow * static_cast<double>(rows.size());
  // Room above the rows for the threshold labels.
  const Rect plot{kNameRight + 8, top + legend_height + 26,
                  kWidth - kNameRight - 8 - kValueColumn, rows_height};
  const double height = plot.bottom() + 54;

  ChartFrame frame(&w, chart.text, "stability", kWidth, height);
  frame.Begin(summary, empty);
  internal::DrawLegendRow(&w, 16, top, kWidth - 32, legend);

  double axis_max = std::max(chart.drifting * 1.3, max_psi * 1.05);
  if (axis_max <= 0) axis_max = 0.3;  // all zero and zero thresholds
  const double cap = std::max(chart.drifting, 0.05) * kMaxScaleOverDrifting;
  const bool capped = axis_max > cap;
  if (capped) axis_max = cap;
  const Ticks ticks = NiceTicks(0, axis_max, 5);
  const LinearScale x{0, ticks.values.back(), plot.x, plot.right()};
  internal::DrawXAxis(&w, plot, x, ticks,
                      "population stability index (PSI, unitless)");

  if (empty) {
    internal::DrawNoData(&w, plot, "no feature has a baseline to compare");
  } else {
    for (size_t i = 0; i < rows.size(); ++i) {
      const Row& r = rows[i];
      const FeatureStability& f = *r.feature;
      const double row_top = plot.y + kRow * static_cast<double>(i);
      const double mid = row_top + kRow / 2;
      const std::string psi = ExactNumber(f.psi);
      const std::string rank = absl::StrCat(i);
      const char* state_name = r.state ? LevelStyleOf(*r.state).name : "";
      std::vector<SvgAttribute> attributes = {{"class", "feature"},
                                              {"data-feature", f.feature},
                                              {"data-rank", rank}};
      if (r.defined) attributes.push_back({"data-psi", psi});
      if (r.state) attributes.push_back({"data-state", state_name});
      w.Open("g", attributes);
      const std::string words =
          r.defined
              ? absl::StrCat(ShortNumber(f.psi, 3), "  ",
                             r.state ? state_name : "")
              : absl::StrCat("n/a  ", r.state ? state_name : "not computed");
      w.TextElement(
          "title", {},
          absl::StrCat(SanitizeUtf8(f.feature), ": PSI ", ShortNumber(f.psi, 6),
                       ", ", r.state ? state_name : "not computed"));
      if (i % 2 == 1) {
        w.Leaf("rect", {{"x", "8"},
                        {"y", Coord(row_top)},
                        {"width", Coord(kWidth - 16)},
                        {"height", Coord(kRow)},
                        {"fill", "#F5F5F5"}});
      }
      internal::DrawFittedText(
          &w,
          {{"x", Coord(kNameRight)},
           {"y", Coord(mid + 4)},
           {"text-anchor", "end"},
           {"font-size", Coord(internal::kTextSize)},
           {"fill", kInk}},
          f.feature,
          internal::CharsThatFit(kNameRight - 16, internal::kTextSize));
      if (r.defined) {
        const bool cut = f.psi > ticks.values.back();
        const double end = cut ? plot.right() : x(f.psi);
        const std::string fill =
            frame.LevelFill(r.state.value_or(Level::kSteady));
        w.Leaf("rect", {{"x", Coord(plot.x)},
                        {"y", Coord(mid - kBar / 2)},
                        {"width", Coord(std::max(end - plot.x, 0.0))},
                        {"height", Coord(kBar)},
                        {"fill", fill},
                        {"stroke", kAxis},
                        {"stroke-width", "0.8"}});
        if (cut) {
          // Break mark: the bar goes on beyond the axis.
          const double bx = plot.right() - 12;
          w.Leaf(
              "path",
              {{"d", absl::StrCat(
                         "M", Coord(bx - 3), " ", Coord(mid + kBar / 2 + 2),
                         "L", Coord(bx + 3), " ", Coord(mid - kBar / 2 - 2),
                         "M", Coord(bx + 2), " ", Coord(mid + kBar / 2 + 2),
                         "L", Coord(bx + 8), " ", Coord(mid - kBar / 2 - 2))},
               {"stroke", kPaper},
               {"stroke-width", "2.5"}});
        }
      }
      w.TextElement(
          "text",
          {{"x", Coord(plot.right() + 10)},
           {"y", Coord(mid + 4)},
           {"font-size", Coord(internal::kTextSize)},
           {"font-weight", r.state == Level::kDrifting ? "bold" : "normal"},
           {"fill", r.defined ? kInk : kMutedInk},
           {"xml:space", "preserve"}},
          words);
      w.Close();
    }
    // Threshold lines over the rows, labelled above them.
    const std::pair<Level, double> lines[] = {
        {Level::kWatch, chart.watch}, {Level::kDrifting, chart.drifting}};
    for (const auto& [level, value] : lines) {
      if (value > ticks.values.back()) continue;
      const double lx = x(value);
      const LevelStyle& style = LevelStyleOf(level);
      const std::string v = ExactNumber(value);
      w.Open("g", {{"class", "threshold"},
                   {"data-level", style.name},
                   {"data-value", v}});
      w.Leaf("line", {{"x1", Coord(lx)},
                      {"x2", Coord(lx)},
                      {"y1", Coord(plot.y - 6)},
                      {"y2", Coord(plot.bottom())},
                      {"stroke", kInk},
                      {"stroke-width", "1.4"},
                      {"stroke-dasharray", style.dash}});
      // Watch's label to the left of its line, drifting's to the right, so
      // close thresholds do not overwrite each other.
      const bool left = level == Level::kWatch;
      w.TextElement("text",
                    {{"x", Coord(left ? lx - 4 : lx + 4)},
                     {"y", Coord(plot.y - 10)},
                     {"text-anchor", left ? "end" : "start"},
                     {"font-size", Coord(internal::kSmallSize)},
                     {"fill", kInk}},
                    absl::StrCat(style.name, " ", ShortNumber(value, 4)));
      w.Close();
    }
  }
  internal::DrawAxisLines(&w, plot);
  frame.End();
  return std::move(w).Release();
}

}  // namespace plumbline::charts
