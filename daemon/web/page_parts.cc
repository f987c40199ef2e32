// File: daemon/web/page_parts.cc
#include "daemon/web/page_parts.h"

#include "absl/strings/str_cat.h"
#include "daemon/charts/format.h"
#include "daemon/charts/html.h"
#include "daemon/util/time.h"

namespace plumbline::daemon {

const v1::WindowHealth* WindowOf(const v1::SetHealth& health,
                                 absl::string_view name) {
  for (const v1::WindowHealth& w : health.windows()) {
    if (w.window() == name) return &w;
  }
  return nullptr;
}

std::string FigureText(const v1::Figure& figure) {
  return figure.defined() ? charts::ShortNumber(figure.value(), 4) : "n/a";
}

std::string UtcText(absl::Time t) {
  return absl::FormatTime("%Y-%m-%d %H:%M:%S UTC", t, absl::UTCTimeZone());
}

std::string EvaluatedText(const v1::SetHealth& health, absl::Time now) {
  if (!health.has_evaluated_at()) return "not yet";
  absl::StatusOr<absl::Time> at =
      FromTimestamp(health.evaluated_at(), "evaluated_at");
  if (!at.ok()) return "not yet";
  const int64_t ago = absl::ToInt64Seconds(now - *at);
  return absl::StrCat(UtcText(*at), " (", ago < 0 ? 0 : ago, " s ago)");
}

std::string FormatSpan(absl::Duration d) {
  const int64_t s = absl::ToInt64Seconds(d);
  if (s % 86400 == 0 && s >= 86400) {
    return absl::StrCat(s / 86400, s == 86400 ? " day" : " days");
  }
  if (s % 3600 == 0 && s >= 3600) return absl::StrCat(s / 3600, " h");
  if (s % 60 == 0 && s >= 60) return absl::StrCat(s / 60, " min");
  return absl::StrCat(s, " s");
}

std::string FooterText(absl::Time now) {
  return absl::StrCat(
      "Served read-only by plumbd at ", UtcText(now),
      ". Every number is plumbd's own (the same evaluation as "
      "Monitor.GetSetHealth and /metrics). No script, font or file from "
      "anywhere else.");
}

}  // namespace plumbline::daemon
