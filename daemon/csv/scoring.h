// File: daemon/csv/scoring.h
//
// plumbctl's CSV scoring run: read the CSV, type it into records by the set's
// schema, send them in batches to a BatchScorer and write the scored CSV.
// Online the BatchScorer calls plumbd's ScoreBatch; offline it calls
// ScoreBatchWithPlan on a set read from a file. Everything else is this one
// code path, so the two give the same text for the same input.
//
// The run is resumable rather than all-or-nothing, because only plumbd can
// decide some refusals (a record id its ledger holds with other features, a
// level the set refuses, a full queue, a lost connection). Everything the
// set's schema can decide is checked for the whole file before the first
// call: the CSV itself, the header (CheckLayout), every cell (CsvToRecords)
// and repeated record ids; such a failure sends and writes nothing. When a
// batch then fails, the rows scored before it are written to the output as
// usual and every row from the failed batch on goes to the refusals file
// (FormatRefusedCsv: row, record_id, error, the input columns), which is
// itself an input to score the rest with: the record ids are kept, and a
// row plumbd had recorded after all comes back as a repeat (Scored.repeat,
// the stored score), never twice.
//
// Thread-safe: yes, if the BatchScorer is.
#ifndef PLUMBLINE_DAEMON_CSV_SCORING_H_
#define PLUMBLINE_DAEMON_CSV_SCORING_H_

#include <functional>
#include <string>
#include <vector>

#include "absl/status/statusor.h"
#include "daemon/csv/missing.h"
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
  // Which cells are missing values.
  MissingCells missing;
  // Refuse a file without a column for every feature of the set.
  bool strict = false;
};

// Where the refusals of an interrupted run go: "<out>.refused.csv", or
// "<csv>.refused.csv" when the output is stdout.
std::string RefusalsPath(const CsvScoringOptions& options);

struct CsvScoringResult {
  int records = 0;
  int batches = 0;
  // Records plumbd had recorded before with the same id and features (a
  // resumed or repeated run): their stored scores were returned.
  int repeats = 0;
  // Features of the set without a column (missing in every record).
  std::vector<std::string> absent_features;
};

// Scores `options.csv_path` against the set described by `schema`. A failed
// batch returns its status with the rows named and what was written (see the
// file comment). REQUIRES: options.batch_size > 0.
absl::StatusOr<CsvScoringResult> ScoreCsvFile(const CsvScoringOptions& options,
                                              const v1::SetSummary& schema,
                                              const BatchScorer& scorer);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CSV_SCORING_H_
