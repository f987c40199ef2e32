// File: daemon/csv/scoring.h
//
// plumbctl's CSV scoring run: read the CSV, type it into records by the set's
// schema, send them in batches to a BatchScorer and write the scored CSV.
// Online the BatchScorer calls plumbd's ScoreBatch; offline it calls
// ScoreBatchWithPlan on a set read from a file. Everything else is this one
// code path, so the two give the same text for the same input.
//
// Nothing is written unless every record scored.
//
// Thread-safe: yes, if the BatchScorer is.
#ifndef PLUMBLINE_DAEMON_CSV_SCORING_H_
#define PLUMBLINE_DAEMON_CSV_SCORING_H_

#include <functional>
#include <string>
#include <vector>

#include "absl/status/statusor.h"
#include "plumbline/v1/scoring.pb.h"

namespace plumbline::daemon {

using BatchScorer = std::function<absl::StatusOr<v1::ScoreBatchReply>(
    const v1::ScoreBatchRequest&)>;

struct CsvScoringOptions {
  // Input CSV file.
  std::string csv_path;
  // Output CSV file; empty writes to stdout.
  std::string out_path;
  // Records per ScoreBatch call.
  int batch_size = 1000;
  // Reason codes per record (top) and their order.
  v1::ReasonOptions reasons;
};

struct CsvScoringResult {
  int records = 0;
  int batches = 0;
  // Features of the set without a column (missing in every record).
  std::vector<std::string> absent_features;
};

// Scores `options.csv_path` against the set described by `schema`.
// REQUIRES: options.batch_size > 0.
absl::StatusOr<CsvScoringResult> ScoreCsvFile(const CsvScoringOptions& options,
                                              const v1::SetSummary& schema,
                                              const BatchScorer& scorer);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CSV_SCORING_H_
