// File: daemon/charts/html.cc
#include "daemon/charts/html.h"

#include "absl/strings/str_cat.h"
#include "daemon/charts/svg.h"

namespace plumbline::charts {
namespace {

// The stylesheet: a paper-white sheet with ink text, sections ruled like a
// surveyor's notebook, charts on white panels in a grid that folds to one
// column on narrow screens and in print. Colours: palette.h.
constexpr char kStyle[] = R"css(
:root { color-scheme: light; }
* { box-sizing: border-box; }
body { margin: 0; background: #F7F6F2; color: #1A1A1A;
  font: 15px/1.45 "DejaVu Sans", Verdana, Helvetica, Arial, sans-serif; }
a { color: #0072B2; }
header.band { background: #FFFFFF; border-top: 6px solid #1A1A1A;
  border-bottom: 1px solid #BDBDBD; padding: 14px 28px 12px 28px;
  display: flex; flex-wrap: wrap; align-items: baseline; gap: 6px 18px; }
header.band .kind { font-size: 12px; letter-spacing: 0.12em;
  text-transform: uppercase; color: #4D4D4D; border: 1px solid #4D4D4D;
  padding: 1px 7px; }
header.band h1 { font-size: 22px; margin: 0; font-weight: 700; }
header.band .sub { color: #4D4D4D; font-size: 14px; flex-basis: 100%; }
main { padding: 8px 28px 28px 28px; max-width: 1500px; }
.caution { margin: 16px 0 8px 0; padding: 10px 14px; background: #FBEFF5;
  border-left: 8px solid #CC79A7; border-top: 1px solid #CC79A7;
  border-bottom: 1px solid #CC79A7; border-right: 1px solid #CC79A7; }
.caution strong { letter-spacing: 0.04em; }
section { margin-top: 26px; }
section > h2 { font-size: 18px; margin: 0 0 10px 0; padding-bottom: 4px;
  border-bottom: 2px solid #1A1A1A; }
section > h3 { font-size: 15px; margin: 16px 0 6px 0; }
p.lead { margin: 4px 0 10px 0; color: #333333; max-width: 110ch; }
.grid { display: grid; gap: 14px;
  grid-template-columns: repeat(auto-fill, minmax(460px, 1fr)); }
.panel { background: #FFFFFF; border: 1px solid #CCCCCC; padding: 8px; }
.panel svg { width: 100%; height: auto; display: block; }
table { border-collapse: collapse; background: #FFFFFF; margin: 4px 0 8px 0; }
th, td { border: 1px solid #CCCCCC; padding: 4px 8px; text-align: left;
  vertical-align: top; }
th { background: #EFEEE9; font-weight: 700; }
td.num, th.num { text-align: right; font-variant-numeric: tabular-nums;
  white-space: nowrap; }
td.note { color: #4D4D4D; font-size: 13px; }
tr.worse td { background: #FDF3EC; }
table#overview { width: 100%; }
#overview td.note { min-width: 24em; }
.badge { display: inline-block; min-width: 6.5em; text-align: center;
  padding: 1px 8px; border: 2px solid; font-weight: 700; color: #1A1A1A; }
.badge.steady { border-color: #009E73; background: #DDF1EA; }
.badge.watch { border-color: #E69F00; background: repeating-linear-gradient(
  45deg, #FCEFD2 0 5px, #F4D389 5px 7px); }
.badge.drifting { border-color: #D55E00; background:
  repeating-linear-gradient(45deg, transparent 0 4px, #EFB38C 4px 6px),
  repeating-linear-gradient(-45deg, #F9E3D4 0 4px, #EFB38C 4px 6px); }
.facts { display: flex; flex-wrap: wrap; gap: 10px 26px; margin: 8px 0; }
.facts div { min-width: 9em; }
.facts .k { display: block; font-size: 12px; color: #4D4D4D;
  text-transform: uppercase; letter-spacing: 0.06em; }
.facts .v { font-size: 17px; font-variant-numeric: tabular-nums; }
ul.reasons { margin: 6px 0; padding-left: 20px; }
footer { padding: 14px 28px 24px 28px; color: #4D4D4D; font-size: 13px; }
@media print {
  body { background: #FFFFFF; }
  main { max-width: none; }
  .grid { grid-template-columns: 1fr 1fr; }
  section { break-inside: avoid-page; }
  .noprint { display: none; }
}
)css";

}  // namespace

const char kPeopleCaution[] =
    "When these scores feed decisions about people (credit, insurance, "
    "health care, employment, housing), the model, its refits and every "
    "promotion need human review, must follow local law and regulation and "
    "fall under the organisation's model-risk governance. These figures "
    "describe the model's fit to recent data; they are not evidence that it "
    "is fair, lawful or fit for a purpose.";

std::string Html(absl::string_view text) { return EscapeText(text); }
std::string HtmlAttribute(absl::string_view text) {
  return EscapeAttribute(text);
}

std::string StateBadge(Level level) {
  const LevelStyle& s = LevelStyleOf(level);
  return absl::StrCat("<span class=\"badge ", s.name, "\" data-state=\"",
                      s.name, "\">", s.name, "</span>");
}

std::string HtmlPage(const HtmlPageOptions& o, absl::string_view body_html) {
  std::string out = "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n";
  absl::StrAppend(&out, "<meta charset=\"utf-8\">\n");
  absl::StrAppend(&out,
                  "<meta name=\"viewport\" content=\"width=device-width, "
                  "initial-scale=1\">\n");
  if (o.refresh_seconds > 0) {
    absl::StrAppend(&out, "<meta http-equiv=\"refresh\" content=\"",
                    o.refresh_seconds, "\">\n");
  }
  absl::StrAppend(&out, "<title>", Html(o.title), "</title>\n<style>", kStyle,
                  "</style>\n</head>\n<body>\n<header class=\"band\">");
  if (!o.kind.empty()) {
    absl::StrAppend(&out, "<span class=\"kind\">", Html(o.kind), "</span>");
  }
  absl::StrAppend(&out, "<h1>", Html(o.title), "</h1>");
  if (!o.subtitle.empty()) {
    absl::StrAppend(&out, "<div class=\"sub\">", Html(o.subtitle), "</div>");
  }
  absl::StrAppend(&out,
                  "</header>\n<main>\n<div class=\"caution\" "
                  "id=\"caution\" role=\"note\"><strong>Caution: decisions "
                  "about people.</strong> ",
                  Html(kPeopleCaution), "</div>\n", body_html,
                  "\n</main>\n<footer>", Html(o.footer),
                  "</footer>\n</body>\n</html>\n");
  return out;
}

}  // namespace plumbline::charts
