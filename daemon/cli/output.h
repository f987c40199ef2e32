// File: daemon/cli/output.h
//
// How plumbctl prints what it read: as text for people, or with
// `--format json` as one JSON document on stdout for programs. Every read
// command (sets, versions, audit, health, score --json) hands its reply
// message and its text form to PrintReply, so a new read command (a later
// `show` or `diff`) gets `--format json` by doing the same.
//
//   text:  tables, numbers to six significant digits (FormatNumber), counts
//          that agree in number (CountOf: "1 record", "2 records");
//   json:  the reply message in protobuf's JSON mapping: the .proto's field
//          names (snake_case), every scalar and list present even when zero
//          or empty (a message field that is unset, such as a time not yet
//          known, is absent), enums by name, times as RFC 3339 strings,
//          doubles to full precision (they read back to the same double),
//          64-bit integers as strings (the mapping's rule, so no reader
//          loses digits).
//
//   absl::Status s = PrintReply(reply, format,
//                               [&] { return FormatTable(rows); }, out);
//
// Thread-safe: pure functions, apart from writing to the given stream.
#ifndef PLUMBLINE_DAEMON_CLI_OUTPUT_H_
#define PLUMBLINE_DAEMON_CLI_OUTPUT_H_

#include <cstdint>
#include <ostream>
#include <string>

#include "absl/functional/function_ref.h"
#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "google/protobuf/message.h"

namespace plumbline::daemon {

enum class OutputFormat {
  kText,  // for people (the default)
  kJson,  // one JSON document, full precision
};

// "text" or "json"; INVALID_ARGUMENT naming --format otherwise.
absl::StatusOr<OutputFormat> ParseOutputFormat(absl::string_view text);

// `x` to six significant digits ("0.123457", "1.5e-07", "nan", "inf").
std::string FormatNumber(double x);

// "1 record", "2 records", "0 records"; `plural` defaults to singular + "s".
std::string CountOf(int64_t n, absl::string_view singular,
                    absl::string_view plural = "");

// `message` as pretty-printed JSON (see the file comment), ending in "\n".
absl::StatusOr<std::string> MessageJson(const google::protobuf::Message& reply);

// Writes `reply` as JSON (kJson) or `text()` (kText) to `out`.
absl::Status PrintReply(const google::protobuf::Message& reply,
                        OutputFormat format,
                        absl::FunctionRef<std::string()> text,
                        std::ostream& out);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CLI_OUTPUT_H_
