// File: daemon/csv/records.h
//
// The bridge between a CSV table and scoring records, shared by plumbctl's
// online (through plumbd) and offline (in-process) CSV scoring so both send
// exactly the same records and write exactly the same output.
//
// Typing follows the set's schema (ListSets' SetSummary): numeric and binned
// feature columns are parsed as numbers, categorical columns are text, a
// missing cell (daemon/csv/missing.h: blank, or an --na token) is missing.
// A `record_id` column gives the record ids; other columns that are not
// features pass through to the output unsent.
//
//   CsvLayout layout = LayoutCsv(table.header, schema);
//   absl::Status ok = CheckLayout(layout, schema, strict, "parcels.csv");
//   absl::StatusOr<std::vector<v1::Record>> records =
//       CsvToRecords(table, layout, "parcels.csv", {.new_id = ...});
//   std::string out = FormatScoredCsv(table, layout, *records, scores, 3);
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_CSV_RECORDS_H_
#define PLUMBLINE_DAEMON_CSV_RECORDS_H_

#include <functional>
#include <string>
#include <vector>

#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "daemon/csv/missing.h"
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
  // Number of columns that hold a feature of the set.
  int feature_columns = 0;
};

CsvLayout LayoutCsv(const std::vector<std::string>& header,
                    const v1::SetSummary& schema);

// The header checks made before anything is scored. INVALID_ARGUMENT naming
// `source` when no column is a feature of the set (with a hint when the
// header looks ';'- or tab-delimited), when a feature whose missing rule is
// REJECT has no column (every record would be refused), and under `strict`
// when any feature has no column.
absl::Status CheckLayout(const CsvLayout& layout, const v1::SetSummary& schema,
                         const std::vector<std::string>& header, bool strict,
                         absl::string_view source);

struct CsvRecordOptions {
  // Which cells are missing values.
  MissingCells missing;
  // The id of a row whose record_id cell is empty, or of every row when the
  // table has no record_id column. Required.
  std::function<std::string()> new_id;
};

// One record per data row, checked against the schema as far as the schema
// tells: INVALID_ARGUMENT "<source>: row R (line L), column 'c': ..." for a
// numeric cell that is not a finite number or a missing cell of a feature
// whose missing rule is REJECT, and "<source>: record_id 'x' appears in row
// R1 and row R2" when two rows share an id. Rows count from 1 after the
// header.
absl::StatusOr<std::vector<v1::Record>> CsvToRecords(
    const CsvTable& table, const CsvLayout& layout, absl::string_view source,
    const CsvRecordOptions& options);

// The output table: the input columns (the record_id cell holding the id
// used), a record_id column if the input had none, log_odds and probability
// (%.17g), and with reasons > 0 the columns reason_1..reason_<reasons> as
// "feature:contribution"; one row per score, for the first scores.size()
// rows of the table. REQUIRES: records match table.rows, scores.size() <=
// table.rows.size().
std::string FormatScoredCsv(const CsvTable& table, const CsvLayout& layout,
                            const std::vector<v1::Record>& records,
                            const std::vector<v1::Scored>& scores, int reasons);

// The refusals table of an interrupted run: the columns row (counted from 1
// after the header), record_id and error, then the input's other columns, one
// line per row from `first_row` on with errors[row - first_row]. It is itself
// an input for `plumbctl score --csv` (row and error pass through), with the
// same record ids. An input column already called row or error is written
// as is and the added one is named refused_row or refused_error.
// REQUIRES: first_row + errors.size() <= table.rows.size().
std::string FormatRefusedCsv(const CsvTable& table, const CsvLayout& layout,
                             const std::vector<v1::Record>& records,
                             size_t first_row,
                             const std::vector<std::string>& errors);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CSV_RECORDS_H_
