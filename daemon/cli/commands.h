// File: daemon/cli/commands.h
//
// plumbctl's subcommands, separated from flag parsing so they can be called
// with plain options:
//   sets    table of the sets plumbd has loaded (--verbose: feature schemas)
//   score   one record from --json, or a CSV file through plumbd (--set) or
//           offline from a set file (--set-file)
// Text output rounds to six significant digits; --format json (one record)
// and the CSV output keep full precision.
// Each returns absl::Status; plumbctl's main prints failures as
// "plumbctl: CODE: message".
//
// Thread-safe: no shared state, but they write to the given streams.
#ifndef PLUMBLINE_DAEMON_CLI_COMMANDS_H_
#define PLUMBLINE_DAEMON_CLI_COMMANDS_H_

#include <ostream>
#include <string>
#include <vector>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "absl/time/time.h"
#include "daemon/cli/output.h"
#include "daemon/csv/missing.h"
#include "daemon/util/text_table.h"
#include "plumbline/v1/scoring.pb.h"

namespace plumbline::daemon {

struct ClientOptions {
  // plumbd's gRPC address.
  std::string addr = "127.0.0.1:7390";
  // Deadline of each RPC.
  absl::Duration timeout = absl::Seconds(10);
};

struct ScoreCommandOptions {
  // Exactly one of set (online) and set_file (offline).
  std::string set;
  std::string set_file;
  // Exactly one of json (one record) and csv (a file of records).
  std::string json;
  std::string csv;
  // CSV output file; empty = stdout.
  std::string out;
  // Record id for --json; empty generates one ("cli-<unix µs>-<8 hex>-1",
  // daemon/util/record_ids.h).
  std::string record_id;
  // Records per ScoreBatch call (CSV).
  int batch = 1000;
  v1::ReasonOptions reasons;
  // CSV: which cells are missing values (--na).
  MissingCells missing;
  // CSV: refuse a file without a column for every feature (--strict).
  bool strict = false;
  // --json only: the reply as text or as JSON (ScoreReply).
  OutputFormat format = OutputFormat::kText;
};

// "raises" | "lowers" | "magnitude" → ReasonOrder; INVALID_ARGUMENT otherwise.
absl::StatusOr<v1::ReasonOrder> ParseReasonOrder(const std::string& text);

// Text: a table of names, versions, feature counts and sources (verbose:
// each set's features too). JSON: the ListSetsReply, features included.
absl::Status RunSetsCommand(const ClientOptions& client, bool verbose,
                            OutputFormat format, std::ostream& out);

// `err` receives the closing "scored N records in M batches" line and notes.
absl::Status RunScoreCommand(const ClientOptions& client,
                             const ScoreCommandOptions& options,
                             std::ostream& out, std::ostream& err);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CLI_COMMANDS_H_
