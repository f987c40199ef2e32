// File: daemon/event_log.h
//
// The daemon's log: one line per event on stderr, as key=value pairs, e.g.
//
//   level=info event=set_loaded set=courier version=2026-11 file=sets/c.json
//
// Values that contain spaces, quotes, '=' or are empty are written in double
// quotes with backslash escapes, so every line splits on spaces unambiguously.
//
//   LogEvent(LogLevel::kError, "set_rejected",
//            {{"file", path}, {"error", status.message()}});
//
// Thread-safe: each line is formatted whole and written under a mutex.
#ifndef PLUMBLINE_DAEMON_EVENT_LOG_H_
#define PLUMBLINE_DAEMON_EVENT_LOG_H_

#include <initializer_list>
#include <string>
#include <utility>

#include "absl/strings/string_view.h"

namespace plumbline::daemon {

enum class LogLevel { kInfo, kWarning, kError };

using LogField = std::pair<absl::string_view, absl::string_view>;

// Formats one event line without the trailing newline.
std::string FormatEvent(LogLevel level, absl::string_view event,
                        std::initializer_list<LogField> fields);

// Writes FormatEvent(...) and a newline to stderr.
void LogEvent(LogLevel level, absl::string_view event,
              std::initializer_list<LogField> fields = {});

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_EVENT_LOG_H_
