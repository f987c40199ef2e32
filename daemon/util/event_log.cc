// File: daemon/util/event_log.cc
#include "daemon/util/event_log.h"

#include <cstdint>
#include <cstdio>

#include "absl/base/const_init.h"
#include "absl/strings/escaping.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "absl/synchronization/mutex.h"
#include "daemon/util/caller_text.h"
#include "daemon/util/redact.h"

namespace plumbline::daemon {
namespace {

constexpr absl::string_view kWithheld = "[withheld]";

ABSL_CONST_INIT absl::Mutex log_mu(absl::kConstInit);
ABSL_CONST_INIT absl::Mutex options_mu(absl::kConstInit);
LogOptions& Options() ABSL_EXCLUSIVE_LOCKS_REQUIRED(options_mu) {
  static LogOptions* options = new LogOptions();
  return *options;
}

absl::string_view LevelName(LogLevel level) {
  switch (level) {
    case LogLevel::kInfo:
      return "info";
    case LogLevel::kWarning:
      return "warning";
    case LogLevel::kError:
      return "error";
  }
  return "info";
}

bool NeedsQuotes(absl::string_view value) {
  if (value.empty()) return true;
  for (char c : value) {
    if (c == ' ' || c == '"' || c == '=' || c == '\\' ||
        static_cast<unsigned char>(c) < 0x20) {
      return true;
    }
  }
  return false;
}

void AppendKeyValue(std::string* line, absl::string_view value) {
  if (!NeedsQuotes(value)) {
    line->append(value.data(), value.size());
    return;
  }
  // CEscape turns quotes, backslashes and control characters into C escapes.
  absl::StrAppend(line, "\"", absl::CEscape(value), "\"");
}

// Appends `value` as a JSON string. Written by hand rather than through
// protobuf's JSON printer: that printer refuses strings that are not valid
// UTF-8 (file names, SQLite messages may not be) and a log line must never
// be lost; here invalid bytes become U+FFFD.
void AppendJsonString(std::string* line, absl::string_view value) {
  line->push_back('"');
  for (size_t i = 0; i < value.size();) {
    const char c = value[i];
    const auto u = static_cast<unsigned char>(c);
    if (u >= 0x80) {
      const size_t length = Utf8CharLength(value, i);
      if (length == 0) {
        line->append("\xEF\xBF\xBD");  // U+FFFD REPLACEMENT CHARACTER
        ++i;
      } else {
        line->append(value.data() + i, length);
        i += length;
      }
      continue;
    }
    switch (c) {
      case '"':
        line->append("\\\"");
        break;
      case '\\':
        line->append("\\\\");
        break;
      case '\n':
        line->append("\\n");
        break;
      case '\r':
        line->append("\\r");
        break;
      case '\t':
        line->append("\\t");
        break;
      default:
        if (u < 0x20 || u == 0x7F) {
          absl::StrAppendFormat(line, "\\u%04x", u);
        } else {
          line->push_back(c);
        }
    }
    ++i;
  }
  line->push_back('"');
}

}  // namespace

LogField RecordValueField(absl::string_view key, absl::string_view value) {
  LogField field(key, value);
  field.record_value = true;
  return field;
}

void ConfigureEventLog(const LogOptions& options) {
  absl::MutexLock lock(&options_mu);
  Options() = options;
}

LogOptions CurrentLogOptions() {
  absl::MutexLock lock(&options_mu);
  return Options();
}

std::string FormatEvent(const LogOptions& options, LogLevel level,
                        absl::string_view event,
                        std::initializer_list<LogField> fields) {
  const bool json = options.format == LogFormat::kJsonLines;
  std::string line;
  if (json) {
    absl::StrAppend(&line, "{\"level\":\"", LevelName(level), "\",\"event\":");
    AppendJsonString(&line, event);
  } else {
    absl::StrAppend(&line, "level=", LevelName(level), " event=");
    AppendKeyValue(&line, event);
  }
  for (const LogField& field : fields) {
    std::string masked;
    absl::string_view value = field.value;
    if (field.record_value && !options.record_values) {
      value = kWithheld;
    } else if (MayHoldSecret(value)) {
      masked = MaskSecrets(value);
      value = masked;
    }
    if (json) {
      line.push_back(',');
      AppendJsonString(&line, field.key);
      line.push_back(':');
      AppendJsonString(&line, value);
    } else {
      absl::StrAppend(&line, " ", field.key, "=");
      AppendKeyValue(&line, value);
    }
  }
  if (json) line.push_back('}');
  return line;
}

std::string FormatEvent(LogLevel level, absl::string_view event,
                        std::initializer_list<LogField> fields) {
  return FormatEvent(CurrentLogOptions(), level, event, fields);
}

void LogEvent(LogLevel level, absl::string_view event,
              std::initializer_list<LogField> fields) {
  const LogOptions options = CurrentLogOptions();
  if (static_cast<int>(level) < static_cast<int>(options.min_level)) return;
  std::string line = FormatEvent(options, level, event, fields);
  line.push_back('\n');
  absl::MutexLock lock(&log_mu);
  std::fwrite(line.data(), 1, line.size(), stderr);
  std::fflush(stderr);
}

}  // namespace plumbline::daemon
