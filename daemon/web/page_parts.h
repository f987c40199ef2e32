// File: daemon/web/page_parts.h
//
// Small pieces the model-health pages share: finding a window, a figure or
// a time as text, the footer.
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_WEB_PAGE_PARTS_H_
#define PLUMBLINE_DAEMON_WEB_PAGE_PARTS_H_

#include <string>

#include "absl/strings/string_view.h"
#include "absl/time/time.h"
#include "plumbline/v1/monitor.pb.h"

namespace plumbline::daemon {

// The window named `name` ("count" or "time"), or nullptr.
const v1::WindowHealth* WindowOf(const v1::SetHealth& health,
                                 absl::string_view name);
// A defined figure at 4 significant digits; "n/a" otherwise.
std::string FigureText(const v1::Figure& figure);
// "2026-12-02 03:15:00 UTC".
std::string UtcText(absl::Time t);
// "2026-12-02 03:15:00 UTC (12 s ago)", or "not yet" before the first.
std::string EvaluatedText(const v1::SetHealth& health, absl::Time now);
// "15 s", "5 min", "3 days".
std::string FormatSpan(absl::Duration d);
std::string FooterText(absl::Time now);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_WEB_PAGE_PARTS_H_
