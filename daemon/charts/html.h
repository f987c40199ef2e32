// File: daemon/charts/html.h
//
// The HTML around the charts: one look for the model-health page and the
// refit dossier. A page is a single self-contained document: an inline
// stylesheet (no font, image or script from anywhere, nothing a browser
// must fetch), a heading band, the caution on decisions about people, the
// body the caller wrote, and a footer. States are printed as words in a
// badge whose border, colour and fill pattern repeat the charts' (Okabe–Ito
// colours, daemon/charts/palette.h), so a black-and-white print still reads.
//
//   std::string body = absl::StrCat("<h2>", Html(set_name), "</h2>", svg);
//   std::string page = HtmlPage({.title = "Model health",
//                                .refresh_seconds = 30}, body);
//
// Every text from outside (set, feature and version names, reasons, actors)
// goes through Html() or HtmlAttribute() before it is written.
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_CHARTS_HTML_H_
#define PLUMBLINE_DAEMON_CHARTS_HTML_H_

#include <string>

#include "absl/strings/string_view.h"
#include "daemon/charts/palette.h"

namespace plumbline::charts {

// Text escaped for element content / a double-quoted attribute value.
std::string Html(absl::string_view text);
std::string HtmlAttribute(absl::string_view text);

// The caution every page and dossier carries, as plain text.
extern const char kPeopleCaution[];

struct HtmlPageOptions {
  std::string title;     // <title> and the heading
  std::string subtitle;  // second line of the heading band; may be empty
  // Where the page stands: "plumbd model health" or "refit dossier".
  std::string kind;
  // Seconds between the browser's own reloads (<meta http-equiv=refresh>);
  // 0: never (the dossier).
  int refresh_seconds = 0;
  // Footer line, e.g. "generated 2026-12-02 03:15:00 UTC by plumbd".
  std::string footer;
};

// The whole document around `body_html` (already escaped HTML).
std::string HtmlPage(const HtmlPageOptions& options,
                     absl::string_view body_html);

// "<span class=badge ...>drifting</span>": the state in words with its
// colour and pattern.
std::string StateBadge(Level level);

}  // namespace plumbline::charts

#endif  // PLUMBLINE_DAEMON_CHARTS_HTML_H_
