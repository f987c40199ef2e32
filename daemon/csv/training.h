// File: daemon/csv/training.h
//
// Training data from a CSV table for `plumbctl fit`: which columns are
// features, how each is typed, the 0/1 labels and the optional sample
// weights, ready for scorer::DesignLayout (design_matrix.h) and
// scorer::FitLogistic (fit.h).
//
// Column rules:
//   features     the columns named in TrainingColumns::features, in that
//                order; when none are named, every column except the target,
//                the weights and record_id, in file order.
//   missing      a blank cell or one equal to an --na token
//                (daemon/csv/missing.h) is a missing value.
//   kind         a feature column is numeric when every present cell is a
//                number (absl::SimpleAtod), categorical when fewer than
//                kNumericShare of them are; in between the column is refused
//                as a numeric column with stray text (naming the column, the
//                count and the first values: missing-value markers want
//                --na, codes want --categorical), not made a categorical
//                with a level per number. A column in
//                TrainingColumns::categorical is categorical whatever its
//                cells look like.
//   missing rule per feature: TrainingColumns::missing_rules, else
//                missing_default (REJECT unless changed); it becomes the
//                set's rule. CheckMissingRules refuses missing cells of a
//                REJECT feature; MissingTable prints the counts.
//   target       every cell 1, 1.0, true, True or TRUE (label 1) or 0, 0.0,
//                false, False or FALSE (label 0), surrounding blanks
//                ignored; anything else (a missing cell too) is refused.
//   weights      every cell a finite number >= 0.
// Cells are read exactly as plumbctl's CSV scoring reads them
// (daemon/csv/records.h), so a set fitted here scores its own training file
// with the probabilities of the fit. Errors are INVALID_ARGUMENT naming the
// file, the row (counted from 1 after the header), its line and the column.
//
//   absl::StatusOr<TrainingData> data =
//       TrainingDataFromCsv(table, {.target = "failed"}, "parcels.csv");
//   auto layout = scorer::DesignLayout::Learn(data->specs, data->records);
//
// Thread-safe: pure function.
#ifndef PLUMBLINE_DAEMON_CSV_TRAINING_H_
#define PLUMBLINE_DAEMON_CSV_TRAINING_H_

#include <Eigen/Core>
#include <string>
#include <utility>
#include <vector>

#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "daemon/csv/missing.h"
#include "daemon/csv/table.h"
#include "scorer/design_matrix.h"
#include "scorer/scoring_plan.h"

namespace plumbline::daemon {

// Which columns of the table play which part.
struct TrainingColumns {
  // Column of 0/1 labels; required.
  std::string target;
  // Column of sample weights; empty = every row weighs 1.
  std::string weights;
  // Feature columns in order; empty = every other column (see above).
  std::vector<std::string> features;
  // Columns to treat as categorical even when every cell is a number.
  std::vector<std::string> categorical;
  // Which cells are missing values (--na).
  MissingCells missing;
  // Missing-value rule of named feature columns (--missing COLUMN=RULE).
  std::vector<std::pair<std::string, v1::MissingRule::Kind>> missing_rules;
  // Missing-value rule of the other features (--missing_default).
  v1::MissingRule::Kind missing_default = v1::MissingRule::REJECT;
};

// The share of a column's present cells that must be numbers for a column
// with some text to be refused as "numeric with stray text" rather than
// taken as categorical: 0.9. A common rule of thumb in data-cleaning
// practice, no source; a column of codes is made categorical with
// --categorical.
inline constexpr double kNumericShare = 0.9;

// Missing cells of one feature column.
struct MissingCount {
  std::string column;
  v1::MissingRule::Kind rule = v1::MissingRule::REJECT;
  int count = 0;
  // Rows (counted from 1 after the header) of the first few missing cells.
  std::vector<int> first_rows;
};

// "impute" | "indicator" | "reject" → the rule; INVALID_ARGUMENT naming
// `flag` otherwise.
absl::StatusOr<v1::MissingRule::Kind> ParseMissingRule(absl::string_view flag,
                                                       absl::string_view text);

// "COLUMN=RULE" (a --missing value) → the pair; INVALID_ARGUMENT otherwise.
absl::StatusOr<std::pair<std::string, v1::MissingRule::Kind>>
ParseColumnMissingRule(absl::string_view text);

// A target cell → 0 or 1 (see the file comment); INVALID_ARGUMENT otherwise.
absl::StatusOr<int> ParseTarget(absl::string_view cell);

struct TrainingData {
  // One spec per feature (library defaults apart from name and kind).
  std::vector<scorer::FeatureSpec> specs;
  // One record per data row, one value per spec. Text values are views of
  // the table's cells.
  std::vector<std::vector<scorer::RawValue>> records;
  // Labels (0 or 1), one per row.
  Eigen::VectorXd labels;
  // Sample weights, one per row; empty when there is no weights column.
  Eigen::VectorXd weights;
  // Per feature (in spec order): its missing cells.
  std::vector<MissingCount> missing;
  // Rows in the table (for shares).
  int rows = 0;
};

// INVALID_ARGUMENT naming every REJECT feature with missing cells: its
// count and first rows, and the flags that choose another rule.
absl::Status CheckMissingRules(const TrainingData& data,
                               absl::string_view source);

// The missing-data table for people: column, missing, share, rule.
std::string MissingTable(const TrainingData& data);

// Splits "a,b , c" into {"a", "b", "c"} (blanks around names dropped, empty
// names skipped): the form of --features and --categorical.
std::vector<std::string> SplitColumnList(absl::string_view text);

// Reads `table` under `columns`. `source` names the file in messages.
// INVALID_ARGUMENT for: no target named, a named column the table lacks
// (the message lists the columns it has), a column named twice or in two
// roles, a feature called record_id, a --categorical or --missing column
// that is not a feature, no feature left, no data rows, a target cell that
// is not a label, a weight that is missing, not a number, negative or not
// finite, a non-finite number in a numeric feature column, a numeric column
// with stray text (see kind above). Missing cells of REJECT features are
// left to CheckMissingRules, so the caller can show the table first.
// REQUIRES: `table` outlives the result (records hold views of its cells).
absl::StatusOr<TrainingData> TrainingDataFromCsv(const CsvTable& table,
                                                 const TrainingColumns& columns,
                                                 absl::string_view source);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CSV_TRAINING_H_
