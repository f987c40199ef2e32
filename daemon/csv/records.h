// File: daemon/csv/records.h
//
// The bridge between a CSV table and scoring records, shared by plumbctl's
// online (through plumbd) and offline (in-process) CSV scoring so both send
// exactly the same records and write exactly the same output.
//
// Typing follows the set's schema (ListSets' SetSummary): numeric and binned
// feature columns are parsed as numbers, categorical columns are text, an
// empty cell is missing. A `record_id` column gives the record ids; other
// columns that are not features pass through to the output unsent.
//
//   absl::StatusOr<CsvLayout> layout = LayoutCsv(table.header, schema);
//   absl::StatusOr<std::vector<v1::Record>> records =
//       CsvToRecords(table, *layout, "parcels.csv", "parcels-1767225600");
//   std::string out = FormatScoredCsv(table, *layout, *records, scores, 3);
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_CSV_RECORDS_H_
#define PLUMBLINE_DAEMON_CSV_RECORDS_H_

#include <string>
#include <vector>

#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "daemon/csv/table.h"
#include "plumbline/v1/scoring.pb.h"

namespace plumbline::daemon {

// Name of the CSV column that holds record ids.
inline constexpr char kRecordIdColumn[] = "record_id";

// How a table's columns map onto a set's features.
struct CsvLayout {
  // Per column: the feature's summary, or nullptr for a pass-through column.
  // Points into the SetSummary given to LayoutCsv, which must outlive it.
  std::vector<const v1::FeatureSummary*> feature_of_column;
  // Column of record ids, or -1 when ids are generated.
  int record_id_column = -1;
  // Features of the set that no column provides (missing in every record).
  std::vector<std::string> absent_features;
};

CsvLayout LayoutCsv(const std::vector<std::string>& header,
                    const v1::SetSummary& schema);

// One record per data row. Ids come from the record_id column; an empty cell
// or a table without that column gets "<id_prefix>-<row>" (rows counted from
// 1). INVALID_ARGUMENT "<source>: row R (line L), column 'c': ..." for a
// numeric cell that is not a number.
absl::StatusOr<std::vector<v1::Record>> CsvToRecords(
    const CsvTable& table, const CsvLayout& layout, absl::string_view source,
    absl::string_view id_prefix);

// The output table: the input columns (the record_id cell holding the id
// used), a record_id column if the input had none, log_odds and probability
// (%.17g), and with reasons > 0 the columns reason_1..reason_<reasons> as
// "feature:contribution". REQUIRES: records and scores match table.rows.
std::string FormatScoredCsv(const CsvTable& table, const CsvLayout& layout,
                            const std::vector<v1::Record>& records,
                            const std::vector<v1::Scored>& scores, int reasons);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CSV_RECORDS_H_
