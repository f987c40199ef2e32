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
//   kind         a feature column is numeric when every non-blank cell is a
//                number (absl::SimpleAtod), otherwise categorical; a column
//                in TrainingColumns::categorical is categorical whatever its
//                cells look like. A blank cell is a missing value.
//   target       every cell "0" or "1" (surrounding blanks ignored), as for
//                plumbctl's outcomes.
//   weights      every cell a finite number >= 0.
// Cells are read exactly as plumbctl's CSV scoring reads them
// (daemon/csv_records.h), so a set fitted here scores its own training file
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
#include <vector>

#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
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
};

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
};

// Splits "a,b , c" into {"a", "b", "c"} (blanks around names dropped, empty
// names skipped): the form of --features and --categorical.
std::vector<std::string> SplitColumnList(absl::string_view text);

// Reads `table` under `columns`. `source` names the file in messages.
// INVALID_ARGUMENT for: no target named, a named column the table lacks
// (the message lists the columns it has), a column named twice or in two
// roles, a feature called record_id, a --categorical column that is not a
// feature, no feature left, no data rows, a label other than 0/1, a weight
// that is blank, not a number, negative or not finite, a non-finite number
// in a numeric feature column.
// REQUIRES: `table` outlives the result (records hold views of its cells).
absl::StatusOr<TrainingData> TrainingDataFromCsv(const CsvTable& table,
                                                 const TrainingColumns& columns,
                                                 absl::string_view source);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CSV_TRAINING_H_
