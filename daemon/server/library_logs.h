// File: daemon/server/library_logs.h
//
// What protobuf and gRPC would print to stderr on their own (protobuf's
// GOOGLE_LOG lines, such as "String field ... contains invalid UTF-8 data
// when parsing a protocol buffer", and gpr_log lines) goes through the
// event log instead, as event=library_log lines with the library, the
// source line and the message, so a JSON-lines log stays one JSON object
// per line whatever a caller sends.
//
//   RouteLibraryLogsToEventLog();   // once, before the server starts
//
// Thread-safe to call more than once (only the first call installs the
// handlers); the handlers themselves may run on any thread.
#ifndef PLUMBLINE_DAEMON_SERVER_LIBRARY_LOGS_H_
#define PLUMBLINE_DAEMON_SERVER_LIBRARY_LOGS_H_

namespace plumbline::daemon {

void RouteLibraryLogsToEventLog();

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SERVER_LIBRARY_LOGS_H_
