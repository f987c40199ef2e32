// File: daemon/csv/outcomes.h
//
// plumbctl's outcome reporting from a CSV file: read and check the file,
// send the outcomes in ReportOutcomes batches through an OutcomesSender
// (plumbd's RPC, or a fake in tests) and collect what was accepted and what
// was refused, with the reason for each refusal.
//
// The file has a header and the columns record_id, label (0 or 1) and,
// optionally, observed_at (RFC 3339, e.g. 2026-12-01T08:30:00Z, or unix
// seconds; empty means "when reported"). A row with an empty record id, a
// bad label or a bad observed_at is refused here and never sent.
//
//   absl::StatusOr<OutcomesCsv> csv = ReadOutcomesCsv("outcomes.csv");
//   OutcomesCsvRun run = ReportOutcomesCsv(*csv, 1000, sender);
//
// Thread-safe: yes, if the OutcomesSender is.
#ifndef PLUMBLINE_DAEMON_CSV_OUTCOMES_H_
#define PLUMBLINE_DAEMON_CSV_OUTCOMES_H_

#include <functional>
#include <string>
#include <vector>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "absl/time/time.h"
#include "plumbline/v1/outcomes.pb.h"

namespace plumbline::daemon {

// One refused outcome.
struct OutcomeRefusal {
  std::string record_id;
  // Line of the CSV file the row starts on.
  int line = 0;
  absl::StatusCode code = absl::StatusCode::kUnknown;
  std::string message;
};

// A checked outcomes file.
struct OutcomesCsv {
  std::string path;
  // Rows to send, in file order, with the line each starts on.
  std::vector<v1::Outcome> outcomes;
  std::vector<int> lines;
  // Rows refused while reading, in file order.
  std::vector<OutcomeRefusal> refused;
};

// Reads and checks `path`. The file's shape is the caller's to fix:
// INVALID_ARGUMENT naming the file for malformed CSV, a missing record_id or
// label column, or any other column (all of them named). An unreadable file
// keeps its errno-based code (NOT_FOUND if it does not exist).
absl::StatusOr<OutcomesCsv> ReadOutcomesCsv(const std::string& path);

// "2026-12-01T08:30:00Z", "2026-12-01T09:30:00.25+01:00", "1796113800" or
// "1796113800.25" (unix seconds). INVALID_ARGUMENT otherwise.
absl::StatusOr<absl::Time> ParseObservedAt(absl::string_view text);

// "0" or "1" (surrounding blanks ignored); INVALID_ARGUMENT otherwise.
absl::StatusOr<int> ParseLabel(absl::string_view text);

// Sets `outcome`'s observed_at to `t`.
void SetObservedAt(absl::Time t, v1::Outcome* outcome);

using OutcomesSender = std::function<absl::StatusOr<v1::ReportOutcomesReply>(
    const v1::ReportOutcomesRequest&)>;

struct OutcomesCsvRun {
  int accepted = 0;
  // Accepted outcomes whose record already had the same label.
  int repeats = 0;
  int batches = 0;
  // Local and remote refusals, in file order.
  std::vector<OutcomeRefusal> refusals;
  // The first failed call; when not OK, the rows from `first_unsent_line`
  // on were not sent (or their answer was lost).
  absl::Status status;
  int first_unsent_line = 0;
};

// Sends csv.outcomes in batches of `batch_size`, stopping at the first call
// that fails. REQUIRES: batch_size > 0.
OutcomesCsvRun ReportOutcomesCsv(const OutcomesCsv& csv, int batch_size,
                                 const OutcomesSender& send);

// The refusals as CSV: record_id,line,code,message.
std::string FormatRefusalsCsv(const std::vector<OutcomeRefusal>& refusals);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CSV_OUTCOMES_H_
