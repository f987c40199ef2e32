// The history chart of charts.h: a figure over days, one line per series,
// threshold lines labelled at their right end, grey bands where a value is
// undefined (the line breaks there), UTC days on the x axis.
#include <algorithm>
#include <cmath>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "absl/strings/str_cat.h"
#include "absl/time/civil_time.h"
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
constexpr double kPlotHeight = 210;
constexpr double kRightRoom = 112;  // threshold labels

double Seconds(absl::Time t) {
  return absl::ToDoubleSeconds(t - absl::UnixEpoch());
}

bool Finite(absl::Time t) {
  return t != absl::InfiniteFuture() && t != absl::InfinitePast();
}

absl::Status Check(const TimeSeriesChart& chart) {
  if (chart.series.size() > kMaxSeries) {
    return ChartError(chart.text,
                      absl::StrCat("at most ", kMaxSeries, " series, got ",
                                   chart.series.size()));
  }
  for (size_t s = 0; s < chart.series.size(); ++s) {
    const auto& points = chart.series[s].points;
    for (size_t i = 0; i < points.size(); ++i) {
      if (!Finite(points[i].at) ||
          (i > 0 && !(points[i].at > points[i - 1].at))) {
        return ChartError(chart.text,
                          absl::StrCat("series[", s, "].points[", i,
                                       "].at must be finite and after the "
                                       "point before it"));
      }
    }
  }
  for (size_t i = 0; i < chart.thresholds.size(); ++i) {
    if (!std::isfinite(chart.thresholds[i].value)) {
      return ChartError(
          chart.text, absl::StrCat("thresholds[", i, "].value is not finite"));
    }
  }
  return absl::OkStatus();
}

// Day-aligned tick times (UTC midnights, or every 6 hours for a short span)
// within [lo, hi].
std::vector<absl::Time> TimeTicks(absl::Time lo, absl::Time hi) {
  const absl::TimeZone utc = absl::UTCTimeZone();
  const double days = absl::ToDoubleHours(hi - lo) / 24;
  std::vector<absl::Time> ticks;
  if (days <= 1.5) {
    absl::CivilHour h = absl::ToCivilHour(lo, utc);
    h -= h.hour() % 6;
    for (; absl::FromCivil(h, utc) <= hi; h += 6) {
      if (absl::FromCivil(h, utc) >= lo)
        ticks.push_back(absl::FromCivil(h, utc));
    }
    return ticks;
  }
  int step = 1;
  if (days > 10) step = 2;
  if (days > 21) step = 7;
  if (days > 90) step = 30;
  absl::CivilDay d = absl::ToCivilDay(lo, utc);
  if (absl::FromCivil(d, utc) < lo) ++d;
  for (; absl::FromCivil(d, utc) <= hi; d += step) {
    ticks.push_back(absl::FromCivil(d, utc));
  }
  return ticks;
}

}  // namespace

absl::StatusOr<std::string> RenderTimeSeries(const TimeSeriesChart& chart) {
  if (absl::Status s = internal::CheckChartText(chart.text); !s.ok()) return s;
  if (absl::Status s = Check(chart); !s.ok()) return s;

  // Extent of the data: every point's time, defined values and thresholds.
  std::optional<absl::Time> t_lo, t_hi;
  std::optional<double> v_lo, v_hi;
  size_t defined = 0, undefined = 0;
  for (const TimeSeries& series : chart.series) {
    for (const TimePoint& p : series.points) {
      t_lo = t_lo ? std::min(*t_lo, p.at) : p.at;
      t_hi = t_hi ? std::max(*t_hi, p.at) : p.at;
      if (std::isfinite(p.value)) {
        ++defined;
        v_lo = v_lo ? std::min(*v_lo, p.value) : p.value;
        v_hi = v_hi ? std::max(*v_hi, p.value) : p.value;
      } else {
        ++undefined;
      }
    }
  }
  const bool empty = defined == 0;
  for (const ThresholdLine& t : chart.thresholds) {
    v_lo = v_lo ? std::min(*v_lo, t.value) : t.value;
    v_hi = v_hi ? std::max(*v_hi, t.value) : t.value;
  }
  const std::string value_title = internal::AxisTitle(
      chart.value_label.empty() ? "value" : chart.value_label,
      chart.value_unit);

  std::string summary = absl::StrCat("History of ", SanitizeUtf8(value_title));
  if (empty) {
    absl::StrAppend(&summary, ": no defined values.");
  } else {
    absl::StrAppend(&summary, " from ", DayText(*t_lo), " to ", DayText(*t_hi),
                    " (UTC), ", defined, " values");
    if (undefined > 0) absl::StrAppend(&summary, ", ", undefined, " undefined");
    absl::StrAppend(&summary, ".");
    for (const TimeSeries& series : chart.series) {
      // Latest defined value of each series, in words.
      for (auto it = series.points.rbegin(); it != series.points.rend(); ++it) {
        if (std::isfinite(it->value)) {
          absl::StrAppend(&summary, " ", SanitizeUtf8(series.name), ": latest ",
                          ShortNumber(it->value, 4), " on ", DayText(it->at),
                          ".");
          break;
        }
      }
    }
  }
  for (const ThresholdLine& t : chart.thresholds) {
    absl::StrAppend(&summary, " Threshold ", SanitizeUtf8(t.name), " at ",
                    ShortNumber(t.value, 4), ".");
  }

  // Legend: the series, and the gap band when there is one.
  std::vector<LegendEntry> legend;
  for (size_t s = 0; s < chart.series.size(); ++s) {
    legend.push_back(
        internal::SeriesEntry(chart.series[s].name, SeriesStyleAt(s)));
  }
  if (undefined > 0 && !empty) {
    legend.push_back(internal::BoxEntry("no value (gap)", kNoDataFill, kGrid));
  }
  SvgWriter w;
  SvgWriter scratch;
  const double top = ChartFrame::ContentTop(chart.text);
  const double legend_height =
      internal::DrawLegendRow(&scratch, 72, top, kWidth - 96, legend);
  const Rect plot{72, top + legend_height + 8 + internal::kTitleOnTopRoom,
                  kWidth - 72 - kRightRoom, kPlotHeight};
  const double height = plot.bottom() + 52;
  ChartFrame frame(&w, chart.text, "timeseries", kWidth, height);
  frame.Begin(summary, empty);
  internal::DrawLegendRow(&w, 72, top, kWidth - 96, legend);

  // Scales. A single time or a single value gets room around it.
  absl::Time t0 = t_lo.value_or(absl::UnixEpoch());
  absl::Time t1 = t_hi.value_or(t0);
  if (t1 - t0 < absl::Hours(1)) {
    t0 -= absl::Hours(12);
    t1 += absl::Hours(12);
  } else {
    // A little room so the first and last markers clear the axes.
    const absl::Duration pad = (t1 - t0) / 40;
    t0 -= pad;
    t1 += pad;
  }
  double lo = v_lo.value_or(0), hi = v_hi.value_or(1);
  if (hi - lo <= std::fabs(hi) * 1e-9) {
    const double pad = std::max(std::fabs(hi) * 0.1, 0.05);
    lo -= pad;
    hi += pad;
  } else {
    const double pad = (hi - lo) * 0.08;
    lo -= pad;
    hi += pad;
    if (v_lo.value_or(0) >= 0 && lo < 0) lo = 0;  // non-negative figures
  }
  const Ticks ticks = NiceTicks(lo, hi, 4);
  const LinearScale y{ticks.values.front(), ticks.values.back(), plot.bottom(),
                      plot.y};
  const LinearScale x{Seconds(t0), Seconds(t1), plot.x, plot.right()};
  internal::DrawYAxis(&w, plot, y, ticks, value_title,
                      /*title_on_top=*/true);

  // Time axis: grid lines and day labels.
  w.Open("g", {{"class", "axis-x"}});
  const std::vector<absl::Time> day_ticks = TimeTicks(t0, t1);
  const double label_width = 56;
  const size_t every = std::max<size_t>(
      1,
      static_cast<size_t>(std::ceil(
          label_width * static_cast<double>(day_ticks.size()) / plot.width)));
  for (size_t i = 0; i < day_ticks.size(); ++i) {
    const double px = x(Seconds(day_ticks[i]));
    w.Leaf("line", {{"x1", Coord(px)},
                    {"x2", Coord(px)},
                    {"y1", Coord(plot.y)},
                    {"y2", Coord(plot.bottom())},
                    {"stroke", kGrid},
                    {"stroke-width", "1"}});
    if (i % every != 0) continue;
    w.TextElement("text",
                  {{"x", Coord(px)},
                   {"y", Coord(plot.bottom() + 16)},
                   {"text-anchor", "middle"},
                   {"font-size", Coord(internal::kSmallSize)},
                   {"fill", kMutedInk}},
                  DayText(day_ticks[i]));
  }
  w.TextElement("text",
                {{"x", Coord(plot.x + plot.width / 2)},
                 {"y", Coord(plot.bottom() + 36)},
                 {"text-anchor", "middle"},
                 {"font-size", Coord(internal::kTextSize)},
                 {"fill", kInk}},
                "date and time (UTC)");
  w.Close();

  if (empty) {
    internal::DrawNoData(&w, plot, "no evaluation produced a value yet");
  } else {
    // Gap bands first, so lines and markers stay on top.
    for (size_t s = 0; s < chart.series.size(); ++s) {
      const auto& points = chart.series[s].points;
      size_t i = 0;
      while (i < points.size()) {
        if (std::isfinite(points[i].value)) {
          ++i;
          continue;
        }
        size_t j = i;
        while (j + 1 < points.size() && !std::isfinite(points[j + 1].value)) {
          ++j;
        }
        const double from = x(Seconds(points[i > 0 ? i - 1 : i].at));
        const double to =
            x(Seconds(points[j + 1 < points.size() ? j + 1 : j].at));
        const double mid = (from + to) / 2;
        const double half = std::max((to - from) / 2, 3.0);
        const std::string first = ExactTime(points[i].at);
        const std::string last = ExactTime(points[j].at);
        w.Open("rect", {{"class", "gap"},
                        {"data-series-index", absl::StrCat(s)},
                        {"data-from", first},
                        {"data-to", last},
                        {"x", Coord(mid - half)},
                        {"y", Coord(plot.y)},
                        {"width", Coord(2 * half)},
                        {"height", Coord(plot.height)},
                        {"fill", kNoDataFill},
                        {"stroke", kGrid},
                        {"stroke-dasharray", "3 3"}});
        w.TextElement(
            "title", {},
            absl::StrCat(SanitizeUtf8(chart.series[s].name), ": no value from ",
                         DayText(points[i].at), " to ", DayText(points[j].at)));
        w.Close();
        i = j + 1;
      }
    }
    // Threshold lines with their name and value at the right end.
    for (const ThresholdLine& t : chart.thresholds) {
      const LevelStyle& style = LevelStyleOf(t.level);
      const double ty = y(t.value);
      const std::string v = ExactNumber(t.value);
      w.Open("g", {{"class", "threshold"},
                   {"data-name", t.name},
                   {"data-level", style.name},
                   {"data-value", v}});
      w.Leaf("line",
             {{"x1", Coord(plot.x)},
              {"x2", Coord(plot.right())},
              {"y1", Coord(ty)},
              {"y2", Coord(ty)},
              {"stroke", style.colour},
              {"stroke-width", "1.8"},
              {"stroke-dasharray",
               style.dash == std::string("none") ? "10 3" : style.dash}});
      internal::DrawFittedText(
          &w,
          {{"x", Coord(plot.right() + 6)},
           {"y", Coord(ty + 4)},
           {"font-size", Coord(internal::kSmallSize)},
           {"fill", kInk}},
          absl::StrCat(t.name, " ", ShortNumber(t.value, 4)),
          internal::CharsThatFit(kRightRoom - 10, internal::kSmallSize));
      w.Close();
    }
    for (size_t s = 0; s < chart.series.size(); ++s) {
      const TimeSeries& series = chart.series[s];
      const SeriesStyle& style = SeriesStyleAt(s);
      w.Open("g", {{"class", "series"},
                   {"data-series", series.name},
                   {"data-series-index", absl::StrCat(s)}});
      std::vector<std::optional<Point>> line;
      for (const TimePoint& p : series.points) {
        if (std::isfinite(p.value)) {
          line.push_back(Point{x(Seconds(p.at)), y(p.value)});
        } else {
          line.push_back(std::nullopt);
        }
      }
      const std::string d = internal::PathWithGaps(line);
      if (!d.empty()) {
        w.Leaf("path", {{"d", d},
                        {"fill", "none"},
                        {"stroke", style.colour},
                        {"stroke-width", "2"},
                        {"stroke-dasharray", style.dash},
                        {"stroke-linejoin", "round"}});
      }
      // Past 40 points the line alone shows the data; the markers stay, as
      // transparent hover targets carrying the numbers, except where a
      // point stands alone between gaps.
      const bool many = series.points.size() > 40;
      for (size_t i = 0; i < series.points.size(); ++i) {
        const TimePoint& p = series.points[i];
        if (!line[i].has_value()) continue;
        const bool isolated =
            (i == 0 || !line[i - 1].has_value()) &&
            (i + 1 == line.size() || !line[i + 1].has_value());
        const std::string at = ExactTime(p.at);
        const std::string value = ExactNumber(p.value);
        std::vector<SvgAttribute> attributes = {
            {"class", "point"}, {"data-t", at}, {"data-value", value}};
        if (many && !isolated) {
          attributes.push_back({"fill-opacity", "0"});
          attributes.push_back({"stroke-opacity", "0"});
        }
        internal::OpenMarker(&w, style, line[i]->x, line[i]->y, 3.8,
                             attributes);
        w.TextElement(
            "title", {},
            absl::StrCat(SanitizeUtf8(series.name), ", ", DayText(p.at), ": ",
                         ShortNumber(p.value, 4)));
        w.Close();
      }
      w.Close();
    }
  }
  internal::DrawAxisLines(&w, plot);
  frame.End();
  return std::move(w).Release();
}

}  // namespace plumbline::charts
