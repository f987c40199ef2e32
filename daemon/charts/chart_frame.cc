#include "daemon/charts/chart_frame.h"

#include <algorithm>
#include <cmath>
#include <utility>

#include "absl/strings/ascii.h"
#include "absl/strings/str_cat.h"

namespace plumbline::charts::internal {

size_t CharsThatFit(double width, double size) {
  const double n = std::floor(width / (size * kGlyphWidth));
  return n < 1 ? 1 : static_cast<size_t>(n);
}

std::string PathWithGaps(const std::vector<std::optional<Point>>& points) {
  std::string d;
  bool pen_down = false;
  for (const std::optional<Point>& p : points) {
    if (!p.has_value()) {
      pen_down = false;
      continue;
    }
    absl::StrAppend(&d, d.empty() ? "" : " ", pen_down ? "L" : "M", Coord(p->x),
                    " ", Coord(p->y));
    pen_down = true;
  }
  return d;
}

std::string AxisTitle(absl::string_view label, absl::string_view unit) {
  if (unit.empty()) return std::string(label);
  return absl::StrCat(label, " (", unit, ")");
}

absl::Status ChartError(const ChartText& text, absl::string_view what) {
  return absl::InvalidArgumentError(
      absl::StrCat("chart \"", SanitizeUtf8(text.id), "\": ", what));
}

absl::Status CheckChartText(const ChartText& text) {
  const std::string& id = text.id;
  bool ok = !id.empty() && id.size() <= 64 &&
            absl::ascii_isalpha(static_cast<unsigned char>(id[0]));
  for (char c : id) {
    const auto u = static_cast<unsigned char>(c);
    if (!absl::ascii_isalnum(u) && c != '-' && c != '_') ok = false;
  }
  if (!ok) {
    return ChartError(text,
                      "id must be a letter followed by letters, digits, '-' "
                      "or '_' (at most 64 characters)");
  }
  return absl::OkStatus();
}

ChartFrame::ChartFrame(SvgWriter* writer, const ChartText& text,
                       absl::string_view kind, double width, double height)
    : writer_(writer),
      text_(text),
      kind_(kind),
      width_(width),
      height_(height) {}

std::string ChartFrame::SubId(absl::string_view suffix) const {
  return absl::StrCat(text_.id, "-", suffix);
}

std::string ChartFrame::LevelFill(Level level) const {
  switch (level) {
    case Level::kSteady:
      return kLevelStyles[0].colour;
    case Level::kWatch:
      return absl::StrCat("url(#", SubId("hatch"), ")");
    case Level::kDrifting:
      return absl::StrCat("url(#", SubId("cross"), ")");
  }
  return kLevelStyles[0].colour;
}

double ChartFrame::ContentTop(const ChartText& text) {
  if (!text.subtitle.empty()) return 58;
  if (!text.title.empty()) return 40;
  return 12;
}

void ChartFrame::Begin(absl::string_view summary, bool empty) {
  SvgWriter& w = *writer_;
  const std::string w_text = Coord(width_);
  const std::string h_text = Coord(height_);
  w.Open("svg",
         {{"xmlns", "http://www.w3.org/2000/svg"},
          {"id", text_.id},
          {"class", "plumbline-chart"},
          {"data-chart", kind_},
          {"data-empty", empty ? "true" : "false"},
          {"role", "img"},
          {"aria-labelledby", absl::StrCat(SubId("title"), " ", SubId("desc"))},
          {"viewBox", absl::StrCat("0 0 ", w_text, " ", h_text)},
          {"width", w_text},
          {"height", h_text},
          {"style", "max-width:100%;height:auto"},
          {"font-family", kFontFamily}});
  w.TextElement("title", {{"id", SubId("title")}},
                text_.title.empty() ? kind_ : text_.title);
  std::string desc = text_.description;
  if (!desc.empty() && !summary.empty()) desc += " ";
  absl::StrAppend(&desc, summary);
  w.TextElement("desc", {{"id", SubId("desc")}}, desc);

  // Fill patterns for watch (sparse diagonal hatch) and drifting (dense
  // cross hatch): the state still shows when printed in grey.
  w.Open("defs");
  w.Open("pattern", {{"id", SubId("hatch")},
                     {"patternUnits", "userSpaceOnUse"},
                     {"width", "6"},
                     {"height", "6"},
                     {"patternTransform", "rotate(45)"}});
  w.Leaf("rect", {{"width", "6"}, {"height", "6"}, {"fill", kOrange}});
  w.Leaf("line", {{"x1", "0"},
                  {"y1", "0"},
                  {"x2", "0"},
                  {"y2", "6"},
                  {"stroke", kInk},
                  {"stroke-width", "1.6"},
                  {"stroke-opacity", "0.7"}});
  w.Close();
  w.Open("pattern", {{"id", SubId("cross")},
                     {"patternUnits", "userSpaceOnUse"},
                     {"width", "5"},
                     {"height", "5"},
                     {"patternTransform", "rotate(45)"}});
  w.Leaf("rect", {{"width", "5"}, {"height", "5"}, {"fill", kVermilion}});
  w.Leaf("path", {{"d", "M0 0V5M0 0H5"},
                  {"stroke", kPaper},
                  {"stroke-width", "1.4"},
                  {"stroke-opacity", "0.85"}});
  w.Close();
  w.Close();

  w.Leaf("rect", {{"width", w_text}, {"height", h_text}, {"fill", kPaper}});
  if (!text_.title.empty()) {
    DrawFittedText(&w,
                   {{"x", "16"},
                    {"y", "25"},
                    {"font-size", Coord(kTitleSize)},
                    {"font-weight", "bold"},
                    {"fill", kInk}},
                   text_.title, CharsThatFit(width_ - 32, kTitleSize));
  }
  if (!text_.subtitle.empty()) {
    DrawFittedText(&w,
                   {{"x", "16"},
                    {"y", "44"},
                    {"font-size", Coord(kTextSize)},
                    {"fill", kMutedInk}},
                   text_.subtitle, CharsThatFit(width_ - 32, kTextSize));
  }
}

void ChartFrame::End() { writer_->Close(); }

void DrawFittedText(SvgWriter* w, std::vector<SvgAttribute> attributes,
                    absl::string_view text, size_t max_chars) {
  if (CharCount(text) <= max_chars) {
    w->TextElement("text", attributes, text);
  } else {
    w->TextWithTooltip("text", attributes, Ellipsize(text, max_chars), text);
  }
}

void DrawYAxis(SvgWriter* w, const Rect& plot, const LinearScale& y,
               const Ticks& ticks, absl::string_view title, bool title_on_top) {
  w->Open("g", {{"class", "axis-y"}});
  for (double t : ticks.values) {
    const double py = y(t);
    if (py < plot.y - 0.5 || py > plot.bottom() + 0.5) continue;
    w->Leaf("line", {{"x1", Coord(plot.x)},
                     {"x2", Coord(plot.right())},
                     {"y1", Coord(py)},
                     {"y2", Coord(py)},
                     {"stroke", kGrid},
                     {"stroke-width", "1"}});
    w->TextElement("text",
                   {{"x", Coord(plot.x - 6)},
                    {"y", Coord(py + 4)},
                    {"text-anchor", "end"},
                    {"font-size", Coord(kSmallSize)},
                    {"fill", kMutedInk}},
                   TickLabel(t, ticks.step));
  }
  if (title_on_top) {
    DrawFittedText(w,
                   {{"x", Coord(plot.x - 40)},
                    {"y", Coord(plot.y - 10)},
                    {"font-size", Coord(kTextSize)},
                    {"fill", kInk}},
                   title, CharsThatFit(plot.width + 40, kTextSize));
    w->Close();
    return;
  }
  const double cx = plot.x - 46;
  const double cy = plot.y + plot.height / 2;
  DrawFittedText(w,
                 {{"x", Coord(cx)},
                  {"y", Coord(cy)},
                  {"text-anchor", "middle"},
                  {"transform",
                   absl::StrCat("rotate(-90 ", Coord(cx), " ", Coord(cy), ")")},
                  {"font-size", Coord(kTextSize)},
                  {"fill", kInk}},
                 title, CharsThatFit(plot.height, kTextSize));
  w->Close();
}

void DrawXAxis(SvgWriter* w, const Rect& plot, const LinearScale& x,
               const Ticks& ticks, absl::string_view title) {
  w->Open("g", {{"class", "axis-x"}});
  for (double t : ticks.values) {
    const double px = x(t);
    if (px < plot.x - 0.5 || px > plot.right() + 0.5) continue;
    w->Leaf("line", {{"x1", Coord(px)},
                     {"x2", Coord(px)},
                     {"y1", Coord(plot.y)},
                     {"y2", Coord(plot.bottom())},
                     {"stroke", kGrid},
                     {"stroke-width", "1"}});
    w->TextElement("text",
                   {{"x", Coord(px)},
                    {"y", Coord(plot.bottom() + 16)},
                    {"text-anchor", "middle"},
                    {"font-size", Coord(kSmallSize)},
                    {"fill", kMutedInk}},
                   TickLabel(t, ticks.step));
  }
  DrawFittedText(w,
                 {{"x", Coord(plot.x + plot.width / 2)},
                  {"y", Coord(plot.bottom() + 36)},
                  {"text-anchor", "middle"},
                  {"font-size", Coord(kTextSize)},
                  {"fill", kInk}},
                 title, CharsThatFit(plot.width + 80, kTextSize));
  w->Close();
}

void DrawAxisLines(SvgWriter* w, const Rect& plot) {
  w->Leaf("path",
          {{"d", absl::StrCat("M", Coord(plot.x), " ", Coord(plot.y), "V",
                              Coord(plot.bottom()), "H", Coord(plot.right()))},
           {"fill", "none"},
           {"stroke", kAxis},
           {"stroke-width", "1.2"}});
}

void OpenMarker(SvgWriter* w, const SeriesStyle& style, double x, double y,
                double radius, const std::vector<SvgAttribute>& extra) {
  std::vector<SvgAttribute> a = extra;
  const std::string fill = style.hollow_marker ? kPaper : style.colour;
  a.push_back({"fill", fill});
  a.push_back({"stroke", style.colour});
  a.push_back({"stroke-width", "1.6"});
  std::string x0, y0, side, points;
  switch (style.marker) {
    case Marker::kCircle: {
      x0 = Coord(x);
      y0 = Coord(y);
      side = Coord(radius);
      a.push_back({"cx", x0});
      a.push_back({"cy", y0});
      a.push_back({"r", side});
      w->Open("circle", a);
      return;
    }
    case Marker::kSquare: {
      const double h = radius * 0.9;
      x0 = Coord(x - h);
      y0 = Coord(y - h);
      side = Coord(2 * h);
      a.push_back({"x", x0});
      a.push_back({"y", y0});
      a.push_back({"width", side});
      a.push_back({"height", side});
      w->Open("rect", a);
      return;
    }
    case Marker::kTriangle: {
      const double r = radius * 1.2;
      points = absl::StrCat(Coord(x), ",", Coord(y - r), " ",
                            Coord(x + r * 0.866), ",", Coord(y + r * 0.5), " ",
                            Coord(x - r * 0.866), ",", Coord(y + r * 0.5));
      break;
    }
    case Marker::kDiamond: {
      const double r = radius * 1.25;
      points = absl::StrCat(Coord(x), ",", Coord(y - r), " ", Coord(x + r), ",",
                            Coord(y), " ", Coord(x), ",", Coord(y + r), " ",
                            Coord(x - r), ",", Coord(y));
      break;
    }
  }
  a.push_back({"points", points});
  w->Open("polygon", a);
}

LegendEntry SeriesEntry(std::string label, const SeriesStyle& style) {
  LegendEntry e;
  e.kind = LegendEntry::Kind::kSeries;
  e.label = std::move(label);
  e.series = &style;
  return e;
}

LegendEntry BoxEntry(std::string label, std::string fill, std::string stroke,
                     std::string dash) {
  LegendEntry e;
  e.kind = LegendEntry::Kind::kBox;
  e.label = std::move(label);
  e.fill = std::move(fill);
  e.stroke = std::move(stroke);
  e.dash = std::move(dash);
  return e;
}

LegendEntry LineEntry(std::string label, std::string stroke, std::string dash) {
  LegendEntry e;
  e.kind = LegendEntry::Kind::kReferenceLine;
  e.label = std::move(label);
  e.stroke = std::move(stroke);
  e.dash = std::move(dash);
  return e;
}

namespace {

constexpr double kLegendLine = 20;
constexpr double kSwatchWidth = 36;  // swatch and the gap before the label

void DrawLegendEntry(SvgWriter* w, double x, double y, double label_width,
                     const LegendEntry& e) {
  const double mid = y + kLegendLine / 2;
  switch (e.kind) {
    case LegendEntry::Kind::kSeries:
      w->Leaf("line", {{"x1", Coord(x)},
                       {"x2", Coord(x + 28)},
                       {"y1", Coord(mid)},
                       {"y2", Coord(mid)},
                       {"stroke", e.series->colour},
                       {"stroke-width", "2.2"},
                       {"stroke-dasharray", e.series->dash}});
      OpenMarker(w, *e.series, x + 14, mid, 4, {});
      w->Close();
      break;
    case LegendEntry::Kind::kBox:
      w->Leaf("rect", {{"x", Coord(x + 4)},
                       {"y", Coord(mid - 6)},
                       {"width", "20"},
                       {"height", "12"},
                       {"fill", e.fill},
                       {"stroke", e.stroke},
                       {"stroke-width", "1.2"},
                       {"stroke-dasharray", e.dash}});
      break;
    case LegendEntry::Kind::kReferenceLine:
      w->Leaf("line", {{"x1", Coord(x)},
                       {"x2", Coord(x + 28)},
                       {"y1", Coord(mid)},
                       {"y2", Coord(mid)},
                       {"stroke", e.stroke},
                       {"stroke-width", "2"},
                       {"stroke-dasharray", e.dash}});
      break;
  }
  DrawFittedText(w,
                 {{"x", Coord(x + kSwatchWidth)},
                  {"y", Coord(mid + 4)},
                  {"font-size", Coord(kTextSize)},
                  {"fill", kInk}},
                 e.label, CharsThatFit(label_width, kTextSize));
}

}  // namespace

double DrawLegend(SvgWriter* w, double x, double y, double width,
                  const std::vector<LegendEntry>& entries) {
  w->Open("g", {{"class", "legend"}});
  double cy = y;
  for (const LegendEntry& e : entries) {
    DrawLegendEntry(w, x, cy, width - kSwatchWidth, e);
    cy += kLegendLine;
  }
  w->Close();
  return cy - y;
}

double DrawLegendRow(SvgWriter* w, double x, double y, double width,
                     const std::vector<LegendEntry>& entries) {
  if (entries.empty()) return 0;
  w->Open("g", {{"class", "legend"}});
  const double max_label = std::max(width - kSwatchWidth, 40.0);
  double cx = x, cy = y;
  for (const LegendEntry& e : entries) {
    const double label = std::min(
        static_cast<double>(CharCount(e.label)) * kTextSize * kGlyphWidth,
        max_label);
    const double needed = kSwatchWidth + label;
    if (cx > x && cx + needed > x + width) {
      cx = x;
      cy += kLegendLine;
    }
    DrawLegendEntry(w, cx, cy, label + 1, e);
    cx += needed + 18;
  }
  w->Close();
  return cy + kLegendLine - y;
}

void DrawNoData(SvgWriter* w, const Rect& plot, absl::string_view message) {
  w->Open("g", {{"class", "no-data"}});
  w->Leaf("rect", {{"x", Coord(plot.x)},
                   {"y", Coord(plot.y)},
                   {"width", Coord(plot.width)},
                   {"height", Coord(plot.height)},
                   {"fill", kNoDataFill},
                   {"stroke", kGrid}});
  const double cx = plot.x + plot.width / 2;
  const double cy = plot.y + plot.height / 2;
  w->TextElement("text",
                 {{"x", Coord(cx)},
                  {"y", Coord(cy - 4)},
                  {"text-anchor", "middle"},
                  {"font-size", "15"},
                  {"font-weight", "bold"},
                  {"fill", kMutedInk}},
                 "No data");
  DrawFittedText(w,
                 {{"x", Coord(cx)},
                  {"y", Coord(cy + 16)},
                  {"text-anchor", "middle"},
                  {"font-size", Coord(kTextSize)},
                  {"fill", kMutedInk}},
                 message, CharsThatFit(plot.width - 16, kTextSize));
  w->Close();
}

}  // namespace plumbline::charts::internal
