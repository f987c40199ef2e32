// File: daemon/cli/outcomes.h
//
// plumbctl's outcome commands:
//   outcomes --csv FILE   report a file of outcomes in ReportOutcomes
//                         batches; print "accepted N, refused M" and the
//                         refusals (the first few on the terminal, all of
//                         them in --refusals_out FILE)
//   outcome --record_id ID --label 0|1 [--observed_at T]
//                         report one outcome with ReportOutcome
// Per-outcome refusals are results, not failures: the commands fail (and
// plumbctl exits 1) only when a call fails.
//
// Thread-safe: no shared state, but they write to the given stream.
#ifndef PLUMBLINE_DAEMON_CLI_OUTCOMES_H_
#define PLUMBLINE_DAEMON_CLI_OUTCOMES_H_

#include <ostream>
#include <string>

#include "absl/status/status.h"
#include "daemon/cli/commands.h"
#include "daemon/csv/outcomes.h"
#include "plumbline/v1/outcomes.pb.h"

namespace plumbline::daemon {

struct OutcomesCommandOptions {
  // Outcomes per ReportOutcomes call.
  int batch = 1000;
  // If not empty, every refusal is written there as CSV.
  std::string refusals_out;
  // Refusals listed on the terminal; the rest are counted.
  int max_listed = 20;
};

// Sends `csv` (read by ReadOutcomesCsv) and prints the summary to `out`.
// Returns the first failed call (rows after it were not sent; the summary
// printed says what was done before it) or a failure to write refusals_out.
// REQUIRES: options.batch > 0.
absl::Status RunOutcomesCsvCommand(const ClientOptions& client,
                                   const OutcomesCsv& csv,
                                   const OutcomesCommandOptions& options,
                                   std::ostream& out);

// Reports one outcome and prints "accepted" (noting a repeat). A refusal is
// the call's status (NOT_FOUND, FAILED_PRECONDITION, INVALID_ARGUMENT).
absl::Status RunOutcomeCommand(const ClientOptions& client,
                               const v1::Outcome& outcome, std::ostream& out);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CLI_OUTCOMES_H_
