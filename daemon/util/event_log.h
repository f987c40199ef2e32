// File: daemon/util/event_log.h
//
// The daemon's log: one line per event on stderr, by default as key=value
// pairs,
//
//   level=info event=set_loaded set=courier version=2026-11 file=sets/c.json
//
// or, with LogFormat::kJsonLines, one JSON object per line:
//
//   {"level":"info","event":"set_loaded","set":"courier","version":"2026-11"}
//
// In key=value lines, values that contain spaces, quotes, '=' or are empty
// are written in double quotes with backslash escapes, so every line splits
// on spaces unambiguously.
//
//   LogEvent(LogLevel::kError, "set_rejected",
//            {{"file", path}, {"error", status.message()}});
//   LogEvent(LogLevel::kWarning, "record_refused",
//            {{"set", name}, RecordValueField("features", json)});
//
// What is never written: events below the configured level; the value of a
// field made with RecordValueField (feature values, record contents) unless
// LogOptions::record_values is true ("[withheld]" instead); bearer tokens and
// `authorization: Bearer` values anywhere in a value (their secret part is
// masked, whatever the options say).
//
// plumbd calls ConfigureEventLog once at startup, after reading its config;
// until then the defaults below apply.
//
// Thread-safe: each line is formatted whole and written under a mutex;
// ConfigureEventLog may run while other threads log.
#ifndef PLUMBLINE_DAEMON_UTIL_EVENT_LOG_H_
#define PLUMBLINE_DAEMON_UTIL_EVENT_LOG_H_

#include <initializer_list>
#include <string>

#include "absl/strings/string_view.h"

namespace plumbline::daemon {

enum class LogLevel { kInfo, kWarning, kError };

enum class LogFormat { kKeyValue, kJsonLines };

struct LogOptions {
  // Events below this level are dropped.
  LogLevel min_level = LogLevel::kInfo;
  LogFormat format = LogFormat::kKeyValue;
  // Whether fields made with RecordValueField are written as they are.
  bool record_values = false;
};

// One key and value of an event. Both must stay valid for the LogEvent call.
struct LogField {
  LogField(absl::string_view field_key, absl::string_view field_value)
      : key(field_key), value(field_value) {}

  absl::string_view key;
  absl::string_view value;
  // The value may carry feature values or record contents.
  bool record_value = false;
};

// A field whose value may carry feature values or record contents: written
// only when LogOptions::record_values is true.
LogField RecordValueField(absl::string_view key, absl::string_view value);

// Replaces the process-wide options (plumbd: once, from its config).
void ConfigureEventLog(const LogOptions& options);
LogOptions CurrentLogOptions();

// Formats one event line under `options`, without the trailing newline.
std::string FormatEvent(const LogOptions& options, LogLevel level,
                        absl::string_view event,
                        std::initializer_list<LogField> fields);
// The same under the process-wide options.
std::string FormatEvent(LogLevel level, absl::string_view event,
                        std::initializer_list<LogField> fields);

// Writes FormatEvent(...) and a newline to stderr, unless `level` is below
// the configured level.
void LogEvent(LogLevel level, absl::string_view event,
              std::initializer_list<LogField> fields = {});

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_UTIL_EVENT_LOG_H_
