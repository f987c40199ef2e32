// File: daemon/web/pages.cc
// Routing, the overview of every set, and the dossier pages; the set page
// is in set_page.cc.
#include "daemon/web/pages.h"

#include <utility>
#include <vector>

#include "absl/strings/match.h"
#include "absl/strings/numbers.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_split.h"
#include "daemon/charts/format.h"
#include "daemon/charts/html.h"
#include "daemon/review/chart_data.h"
#include "daemon/review/dossier_data.h"
#include "daemon/review/dossier_html.h"
#include "daemon/scoring/core.h"
#include "daemon/util/time.h"
#include "daemon/web/page_parts.h"

namespace plumbline::daemon {

using charts::Html;
using charts::HtmlAttribute;

ModelHealthPages::ModelHealthPages(PagesParts parts, PagesOptions options)
    : parts_(parts), options_(std::move(options)) {}

HttpReply ModelHealthPages::Get(const std::string& path,
                                const std::string& /*query*/) {
  if (path == "/" || path == "/index.html") return Overview();
  absl::string_view rest = path;
  if (absl::ConsumePrefix(&rest, "/sets/")) {
    std::vector<std::string> parts = absl::StrSplit(rest, '/');
    if (parts.size() == 1 && !parts[0].empty()) return SetPage(parts[0]);
    if (parts.size() == 3 && parts[1] == "dossiers") {
      return Dossier(parts[0], parts[2]);
    }
  }
  return NotFound(absl::StrCat("no page at ", path));
}

HttpReply ModelHealthPages::NotFound(absl::string_view what) {
  HttpReply r;
  r.status = 404;
  charts::HtmlPageOptions o;
  o.kind = "plumbd model health";
  o.title = "Not found";
  o.footer = "plumbd";
  r.body = charts::HtmlPage(
      o, absl::StrCat("<section><p class=\"lead\">", Html(what),
                      ". <a href=\"/\">Every set</a>.</p></section>"));
  return r;
}

HttpReply ModelHealthPages::Overview() {
  const absl::Time now = options_.now();
  std::vector<v1::SetHealth> all = parts_.monitor->AllHealth();
  std::string body =
      "<section id=\"sets\"><h2>Every set</h2><p class=\"lead\">One row per "
      "monitored version (shadows beside their active version). Volumes are "
      "the records in each window; outcome coverage is the share of the time "
      "window's scored records that already have their outcome (outcomes "
      "arrive later, so a young window reads low). States: ";
  absl::StrAppend(&body, charts::StateBadge(charts::Level::kSteady), " ",
                  charts::StateBadge(charts::Level::kWatch), " ",
                  charts::StateBadge(charts::Level::kDrifting),
                  ".</p><table id=\"overview\"><tr><th>set</th><th>version"
                  "</th><th>state</th><th>reasons</th><th>last evaluation</th>"
                  "<th class=\"num\">scored<br>count / time</th><th "
                  "class=\"num\">labelled<br>count / time</th><th "
                  "class=\"num\">outcome coverage</th><th "
                  "class=\"num\">log-loss</th><th class=\"num\">score "
                  "PSI</th></tr>");
  for (const v1::SetHealth& h : all) {
    const v1::WindowHealth* count = WindowOf(h, "count");
    const v1::WindowHealth* time = WindowOf(h, "time");
    std::string reasons;
    int shown = 0;
    for (const v1::DriftReason& r : h.reasons()) {
      if (shown++ == 3) {
        absl::StrAppend(&reasons, "<br>and ", h.reasons_size() - 3, " more");
        break;
      }
      absl::StrAppend(&reasons, reasons.empty() ? "" : "<br>", Html(r.text()));
    }
    if (reasons.empty()) reasons = "none";
    absl::StrAppend(
        &body, "<tr data-set=\"", HtmlAttribute(h.set()), "\" data-version=\"",
        HtmlAttribute(h.version()), "\"><td><a href=\"/sets/",
        HtmlAttribute(h.set()), "\">", Html(h.set()), "</a></td><td>",
        Html(h.version()), "</td><td>", charts::StateBadge(LevelOf(h.state())),
        "</td><td class=\"note\">", reasons, "</td><td>", EvaluatedText(h, now),
        "</td><td class=\"num\">",
        count ? charts::CountText(count->scored()) : "—", " / ",
        time ? charts::CountText(time->scored()) : "—",
        "</td><td class=\"num\">",
        count ? charts::CountText(count->labelled()) : "—", " / ",
        time ? charts::CountText(time->labelled()) : "—",
        "</td><td class=\"num\">",
        time && time->scored() > 0
            ? charts::PercentText(static_cast<double>(time->labelled()) /
                                  static_cast<double>(time->scored()))
            : "—",
        "</td><td class=\"num\">", count ? FigureText(count->log_loss()) : "—",
        "</td><td class=\"num\">", count ? FigureText(count->score_psi()) : "—",
        "</td></tr>");
  }
  if (all.empty()) {
    absl::StrAppend(&body,
                    "<tr><td colspan=\"10\">No set is loaded.</td></tr>");
  }
  absl::StrAppend(&body, "</table></section>");
  HttpReply r;
  charts::HtmlPageOptions o;
  o.kind = "plumbd model health";
  o.title = "Model health";
  o.subtitle =
      absl::StrCat(all.size(), " monitored version", all.size() == 1 ? "" : "s",
                   " · evaluated every ", FormatSpan(options_.tick),
                   " · this page reloads every ", options_.refresh_seconds,
                   " s · ", UtcText(now));
  o.refresh_seconds = options_.refresh_seconds;
  o.footer = FooterText(now);
  r.body = charts::HtmlPage(o, body);
  return r;
}

HttpReply ModelHealthPages::Dossier(const std::string& set,
                                    const std::string& job_text) {
  int64_t job = 0;
  if (parts_.dossiers == nullptr || !CheckSetName(set).ok() ||
      !absl::SimpleAtoi(job_text, &job)) {
    return NotFound(absl::StrCat("no dossier ", job_text, " of set ", set));
  }
  absl::StatusOr<v1::Dossier> d = parts_.dossiers->Read(set, job);
  if (!d.ok()) return NotFound(d.status().message());
  if (absl::StatusOr<std::vector<AuditRecord>> audit =
          parts_.lifecycle->Audit(set);
      audit.ok()) {
    RefreshTrail(*audit, options_.now(), &*d);
  }
  HttpReply r;
  r.body = RenderDossier(*d, *parts_.policy);
  return r;
}

}  // namespace plumbline::daemon
