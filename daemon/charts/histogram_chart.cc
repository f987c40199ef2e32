// The histogram against the baseline of charts.h: the window's share of
// records per bin as solid bars, the baseline's as a dashed step line over
// them, bins as equal slots labelled by their edges (numeric) or levels.
#include <algorithm>
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
using internal::Rect;

constexpr double kWidth = 640;
constexpr double kPlotHeight = 200;
constexpr char kEnDash[] = "\xE2\x80\x93";

size_t BinCount(const BaselineHistogram& chart) {
  return chart.levels.empty() ? chart.edges.size() + 1 : chart.levels.size();
}

absl::Status CheckShares(const BaselineHistogram& chart,
                         const std::vector<double>& shares,
                         absl::string_view field) {
  if (shares.size() != BinCount(chart)) {
    return ChartError(
        chart.text, absl::StrCat(field, " has ", shares.size(), " shares for ",
                                 BinCount(chart), " bins"));
  }
  for (size_t i = 0; i < shares.size(); ++i) {
    const double v = shares[i];
    if (!std::isnan(v) && !(v >= 0 && v <= 1)) {
      return ChartError(chart.text, absl::StrCat(field, "[", i,
                                                 "] is not a share in [0, 1]"));
    }
  }
  return absl::OkStatus();
}

absl::Status Check(const BaselineHistogram& chart) {
  if (!chart.levels.empty() && !chart.edges.empty()) {
    return ChartError(chart.text,
                      "give edges (numeric bins) or levels (categorical "
                      "bins), not both");
  }
  for (size_t i = 0; i < chart.edges.size(); ++i) {
    if (!std::isfinite(chart.edges[i]) ||
        (i > 0 && !(chart.edges[i] > chart.edges[i - 1]))) {
      return ChartError(chart.text,
                        absl::StrCat("edges[", i,
                                     "] must be finite and above the edge "
                                     "before it"));
    }
  }
  if (chart.window.empty()) return absl::OkStatus();  // no data
  if (absl::Status s = CheckShares(chart, chart.window, "window"); !s.ok()) {
    return s;
  }
  if (!chart.baseline.empty()) {
    return CheckShares(chart, chart.baseline, "baseline");
  }
  return absl::OkStatus();
}

// The bin's range in words, for tooltips and the description.
std::string BinName(const BaselineHistogram& chart, size_t i) {
  if (!chart.levels.empty()) return SanitizeUtf8(chart.levels[i]);
  const auto& e = chart.edges;
  if (e.empty()) return "all values";
  if (i == 0) return absl::StrCat("below ", ShortNumber(e[0], 4));
  if (i == e.size())
    return absl::StrCat(ShortNumber(e[i - 1], 4), " and above");
  return absl::StrCat(ShortNumber(e[i - 1], 4), kEnDash, ShortNumber(e[i], 4));
}

}  // namespace

absl::StatusOr<std::string> RenderBaselineHistogram(
    const BaselineHistogram& chart) {
  if (absl::Status s = internal::CheckChartText(chart.text); !s.ok()) return s;
  if (absl::Status s = Check(chart); !s.ok()) return s;

  const size_t bins = BinCount(chart);
  const bool has_baseline = !chart.baseline.empty();
  double max_share = 0;
  bool any_defined = false;
  for (size_t i = 0; i < chart.window.size(); ++i) {
    if (!std::isnan(chart.window[i])) {
      any_defined = true;
      max_share = std::max(max_share, chart.window[i]);
    }
    if (has_baseline && !std::isnan(chart.baseline[i])) {
      max_share = std::max(max_share, chart.baseline[i]);
    }
  }
  const std::string value_title = internal::AxisTitle(
      chart.value_label.empty() ? "value" : chart.value_label,
      chart.value_unit);

  std::string summary = absl::StrCat(
      "Share of records per bin of ", SanitizeUtf8(value_title), ", ",
      SanitizeUtf8(chart.window_name),
      has_baseline
          ? absl::StrCat(" against ", SanitizeUtf8(chart.baseline_name))
          : std::string(),
      ", ", bins, " bins.");
  if (!any_defined) {
    summary = absl::StrCat("Share of records per bin of ",
                           SanitizeUtf8(value_title), ": no records.");
  } else if (has_baseline) {
    // The bin that moved most, in words.
    size_t worst = bins;
    double worst_gap = -1;
    for (size_t i = 0; i < bins; ++i) {
      if (std::isnan(chart.window[i]) || std::isnan(chart.baseline[i])) {
        continue;
      }
      const double gap = std::fabs(chart.window[i] - chart.baseline[i]);
      if (gap > worst_gap) {
        worst_gap = gap;
        worst = i;
      }
    }
    if (worst < bins) {
      absl::StrAppend(&summary, " Largest difference in bin ",
                      BinName(chart, worst), ": ",
                      PercentText(chart.window[worst]), " against ",
                      PercentText(chart.baseline[worst]), ".");
    }
  }

  SvgWriter w;
  const double top = ChartFrame::ContentTop(chart.text);
  std::vector<LegendEntry> legend = {
      internal::BoxEntry(chart.window_name, kSkyBlue, kBlue)};
  if (has_baseline) {
    legend.push_back(internal::LineEntry(chart.baseline_name, kInk, "6 3"));
  }
  // The legend goes first; measure it by drawing into a scratch writer.
  SvgWriter scratch;
  const double legend_height =
      internal::DrawLegendRow(&scratch, 72, top, kWidth - 96, legend);
  const Rect plot{72, top + legend_height + 10 + internal::kTitleOnTopRoom,
                  kWidth - 72 - 24, kPlotHeight};
  const bool categorical = !chart.levels.empty();
  const double slot = plot.width / static_cast<double>(bins);
  // Categorical labels are cut to their slot, or turned by 35 degrees when
  // the slots are too narrow for even a short word.
  size_t longest_level = 0;
  for (const std::string& level : chart.levels) {
    longest_level = std::max(longest_level, CharCount(level));
  }
  const size_t slot_chars =
      internal::CharsThatFit(slot - 4, internal::kSmallSize);
  const bool turned =
      categorical && slot_chars < 6 && longest_level > slot_chars;
  const double label_room = turned ? 78 : 20;
  const double height = plot.bottom() + label_room + 30;

  ChartFrame frame(&w, chart.text, "histogram", kWidth, height);
  frame.Begin(summary, !any_defined);
  internal::DrawLegendRow(&w, 72, top, kWidth - 96, legend);

  const double top_percent = max_share > 0 ? max_share * 100 * 1.12 : 10;
  const Ticks ticks = NiceTicks(0, top_percent, 4);
  const LinearScale y{0, ticks.values.back(), plot.bottom(), plot.y};
  internal::DrawYAxis(&w, plot, y, ticks, "share of records (%)",
                      /*title_on_top=*/true);

  if (!any_defined) {
    internal::DrawNoData(&w, plot, "the window holds no records");
  } else {
    // Window bars with their share printed above when the slot has room.
    const bool print_values = slot >= 36;
    struct Label {
      double x, y;
      std::string text;
    };
    std::vector<Label> labels;  // drawn last, over the baseline line
    std::vector<std::optional<internal::Point>> step;
    for (size_t i = 0; i < bins; ++i) {
      const double x0 = plot.x + slot * static_cast<double>(i);
      std::vector<SvgAttribute> attributes = {{"class", "bin"}};
      const std::string index = absl::StrCat(i);
      attributes.push_back({"data-bin", index});
      std::string lower, upper, window, baseline;
      if (categorical) {
        attributes.push_back({"data-level", chart.levels[i]});
      } else {
        if (i > 0) {
          lower = ExactNumber(chart.edges[i - 1]);
          attributes.push_back({"data-lower", lower});
        }
        if (i < chart.edges.size()) {
          upper = ExactNumber(chart.edges[i]);
          attributes.push_back({"data-upper", upper});
        }
      }
      const bool window_defined = !std::isnan(chart.window[i]);
      if (window_defined) {
        window = ExactNumber(chart.window[i]);
        attributes.push_back({"data-window", window});
      }
      const bool baseline_defined =
          has_baseline && !std::isnan(chart.baseline[i]);
      if (baseline_defined) {
        baseline = ExactNumber(chart.baseline[i]);
        attributes.push_back({"data-baseline", baseline});
      }
      w.Open("g", attributes);
      std::string tip = absl::StrCat("bin ", BinName(chart, i), ": ",
                                     SanitizeUtf8(chart.window_name), " ",
                                     PercentText(chart.window[i], 4));
      if (has_baseline) {
        absl::StrAppend(&tip, ", ", SanitizeUtf8(chart.baseline_name), " ",
                        PercentText(chart.baseline[i], 4));
      }
      w.TextElement("title", {}, tip);
      if (window_defined) {
        const double bar_top = y(chart.window[i] * 100);
        const double pad = std::min(6.0, slot * 0.12);
        w.Leaf("rect", {{"x", Coord(x0 + pad)},
                        {"y", Coord(bar_top)},
                        {"width", Coord(slot - 2 * pad)},
                        {"height", Coord(plot.bottom() - bar_top)},
                        {"fill", kSkyBlue},
                        {"stroke", kBlue},
                        {"stroke-width", "1"}});
        if (print_values) {
          labels.push_back(
              {x0 + slot / 2, bar_top - 4, PercentText(chart.window[i], 3)});
        }
      } else {
        w.TextElement("text",
                      {{"x", Coord(x0 + slot / 2)},
                       {"y", Coord(plot.bottom() - 4)},
                       {"text-anchor", "middle"},
                       {"font-size", Coord(internal::kSmallSize - 1)},
                       {"fill", kMutedInk}},
                      "n/a");
      }
      w.Close();
      if (baseline_defined) {
        const double by = y(chart.baseline[i] * 100);
        step.push_back(internal::Point{x0, by});
        step.push_back(internal::Point{x0 + slot, by});
      } else {
        step.push_back(std::nullopt);
      }
    }
    if (has_baseline) {
      const std::string d = internal::PathWithGaps(step);
      if (!d.empty()) {
        w.Leaf("path", {{"class", "baseline"},
                        {"d", d},
                        {"fill", "none"},
                        {"stroke", kInk},
                        {"stroke-width", "2"},
                        {"stroke-dasharray", "6 3"}});
      }
    }
    // Shares over the bars, with a white halo so the baseline line under
    // them does not strike them through.
    w.Open("g", {{"class", "values"}, {"aria-hidden", "true"}});
    for (const Label& label : labels) {
      w.TextElement("text",
                    {{"x", Coord(label.x)},
                     {"y", Coord(label.y)},
                     {"text-anchor", "middle"},
                     {"font-size", Coord(internal::kSmallSize - 1)},
                     {"fill", kInk},
                     {"stroke", kPaper},
                     {"stroke-width", "3"},
                     {"stroke-linejoin", "round"},
                     {"paint-order", "stroke"}},
                    label.text);
    }
    w.Close();
  }

  // Bin labels: edges under the slot boundaries, or levels under slots.
  w.Open("g", {{"class", "axis-x"}});
  if (categorical) {
    for (size_t i = 0; i < bins; ++i) {
      const double cx = plot.x + slot * (static_cast<double>(i) + 0.5);
      const double ly = plot.bottom() + 15;
      const std::string xs = Coord(cx), ys = Coord(ly);
      const std::string size = Coord(internal::kSmallSize);
      const std::string rotate = absl::StrCat("rotate(-35 ", xs, " ", ys, ")");
      std::vector<SvgAttribute> a = {
          {"x", xs}, {"y", ys}, {"font-size", size}, {"fill", kMutedInk}};
      if (turned) {
        a.push_back({"text-anchor", "end"});
        a.push_back({"transform", rotate});
      } else {
        a.push_back({"text-anchor", "middle"});
      }
      internal::DrawFittedText(&w, a, chart.levels[i],
                               turned ? 14 : std::max<size_t>(slot_chars, 1));
    }
  } else {
    size_t widest = 1;
    for (double e : chart.edges) {
      widest = std::max(widest, ShortNumber(e, 3).size());
    }
    const double label_width =
        static_cast<double>(widest) * internal::kSmallSize * 0.62 + 8;
    const size_t every = static_cast<size_t>(std::ceil(label_width / slot));
    for (size_t i = 0; i < chart.edges.size(); ++i) {
      const double ex = plot.x + slot * static_cast<double>(i + 1);
      w.Leaf("line", {{"x1", Coord(ex)},
                      {"x2", Coord(ex)},
                      {"y1", Coord(plot.bottom())},
                      {"y2", Coord(plot.bottom() + 4)},
                      {"stroke", kAxis}});
      if ((i + 1) % every != 0 && every > 1) continue;
      w.TextElement("text",
                    {{"x", Coord(ex)},
                     {"y", Coord(plot.bottom() + 16)},
                     {"text-anchor", "middle"},
                     {"font-size", Coord(internal::kSmallSize)},
                     {"fill", kMutedInk}},
                    ShortNumber(chart.edges[i], 3));
    }
  }
  internal::DrawFittedText(
      &w,
      {{"x", Coord(plot.x + plot.width / 2)},
       {"y", Coord(plot.bottom() + label_room + 16)},
       {"text-anchor", "middle"},
       {"font-size", Coord(internal::kTextSize)},
       {"fill", kInk}},
      categorical ? absl::StrCat(value_title, ", by level")
                  : absl::StrCat(value_title, ", bins by edge"),
      internal::CharsThatFit(plot.width, internal::kTextSize));
  w.Close();
  internal::DrawAxisLines(&w, plot);
  frame.End();
  return std::move(w).Release();
}

}  // namespace plumbline::charts
