// File: daemon/server/library_logs.cc
#include "daemon/server/library_logs.h"

#include <grpc/support/log.h>

#include <mutex>
#include <string>

#include "absl/strings/str_cat.h"
#include "absl/strings/string_view.h"
#include "daemon/util/event_log.h"
#include "google/protobuf/stubs/logging.h"

namespace plumbline::daemon {
namespace {

void Log(LogLevel level, absl::string_view library, const char* file, int line,
         absl::string_view message) {
  const std::string source =
      absl::StrCat(file != nullptr ? file : "?", ":", line);
  LogEvent(level, "library_log",
           {{"library", library}, {"source", source}, {"message", message}});
}

void ProtobufLog(google::protobuf::LogLevel level, const char* file, int line,
                 const std::string& message) {
  LogLevel ours = LogLevel::kError;
  if (level == google::protobuf::LOGLEVEL_INFO) ours = LogLevel::kInfo;
  if (level == google::protobuf::LOGLEVEL_WARNING) ours = LogLevel::kWarning;
  Log(ours, "protobuf", file, line, message);
}

void GrpcLog(gpr_log_func_args* args) {
  LogLevel ours = LogLevel::kInfo;
  if (args->severity == GPR_LOG_SEVERITY_ERROR) ours = LogLevel::kError;
  Log(ours, "grpc", args->file, args->line,
      args->message != nullptr ? args->message : "");
}

}  // namespace

void RouteLibraryLogsToEventLog() {
  static std::once_flag once;
  std::call_once(once, [] {
    google::protobuf::SetLogHandler(&ProtobufLog);
    gpr_set_log_function(&GrpcLog);
  });
}

}  // namespace plumbline::daemon
