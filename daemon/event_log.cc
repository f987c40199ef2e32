// File: daemon/event_log.cc
#include "daemon/event_log.h"

#include <cstdio>

#include "absl/base/const_init.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/escaping.h"
#include "absl/synchronization/mutex.h"

namespace plumbline::daemon {
namespace {

ABSL_CONST_INIT absl::Mutex log_mu(absl::kConstInit);

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

void AppendValue(std::string* line, absl::string_view value) {
  if (!NeedsQuotes(value)) {
    line->append(value.data(), value.size());
    return;
  }
  // CEscape turns quotes, backslashes and control characters into C escapes.
  absl::StrAppend(line, "\"", absl::CEscape(value), "\"");
}

}  // namespace

std::string FormatEvent(LogLevel level, absl::string_view event,
                        std::initializer_list<LogField> fields) {
  std::string line = absl::StrCat("level=", LevelName(level), " event=");
  AppendValue(&line, event);
  for (const LogField& field : fields) {
    absl::StrAppend(&line, " ", field.first, "=");
    AppendValue(&line, field.second);
  }
  return line;
}

void LogEvent(LogLevel level, absl::string_view event,
              std::initializer_list<LogField> fields) {
  std::string line = FormatEvent(level, event, fields);
  line.push_back('\n');
  absl::MutexLock lock(&log_mu);
  std::fwrite(line.data(), 1, line.size(), stderr);
  std::fflush(stderr);
}

}  // namespace plumbline::daemon
