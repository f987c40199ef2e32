// File: daemon/util/json_text.h
//
// JSON text written by hand where it runs for every record or row: the
// stored-features JSON (daemon/scoring/features_json.h) and the ledger's
// record-id lists. protobuf's JSON printer on a google.protobuf.Struct was
// measured at 21.5 us per seven-feature record against 1.1 us for these
// appends (tests/bench/ledger_bench FeaturesJson/*). Numbers are written by
// std::to_chars in its shortest form that reads back to the same double:
// exact on a round trip like %.17g, without its noise digits (4.2 stays
// "4.2"), and faster.
//
//   std::string out;
//   AppendJsonString("rural", &out);   // "rural"
//   AppendJsonNumber(4.2, &out);       // 4.2
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_UTIL_JSON_TEXT_H_
#define PLUMBLINE_DAEMON_UTIL_JSON_TEXT_H_

#include <string>

#include "absl/strings/string_view.h"

namespace plumbline::daemon {

// Appends `text` as a JSON string (quotes included): '"' and '\' are
// escaped, control characters become \n, \t ... or \u00XX; other bytes pass
// through (the request's strings are UTF-8 already: protobuf checks proto3
// strings when it parses them).
void AppendJsonString(absl::string_view text, std::string* out);

// Appends `x` as a JSON number, shortest round-trip form; NaN and +-inf,
// which JSON cannot hold, as null.
void AppendJsonNumber(double x, std::string* out);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_UTIL_JSON_TEXT_H_
