// File: daemon/csv/training.cc
#include "daemon/csv/training.h"

#include <algorithm>
#include <cmath>

#include "absl/container/flat_hash_map.h"
#include "absl/container/flat_hash_set.h"
#include "absl/status/status.h"
#include "absl/strings/ascii.h"
#include "absl/strings/numbers.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_join.h"
#include "absl/strings/str_split.h"
#include "daemon/csv/outcomes.h"
#include "daemon/csv/records.h"

namespace plumbline::daemon {
namespace {

bool IsBlank(absl::string_view cell) {
  return absl::StripAsciiWhitespace(cell).empty();
}

// "parcels.csv: row 3 (line 4), column 'failed': <what>"
absl::Status CellError(absl::string_view source, const CsvTable& table,
                       size_t row, size_t column, absl::string_view what) {
  return absl::InvalidArgumentError(
      absl::StrCat(source, ": row ", row + 1, " (line ", table.row_lines[row],
                   "), column '", table.header[column], "': ", what));
}

// Column index of every header name.
absl::flat_hash_map<std::string, size_t> IndexHeader(const CsvTable& table) {
  absl::flat_hash_map<std::string, size_t> index;
  for (size_t c = 0; c < table.header.size(); ++c) {
    index[table.header[c]] = c;
  }
  return index;
}

// Resolves `name` (the value of `flag`) to a column.
absl::StatusOr<size_t> FindColumn(
    const absl::flat_hash_map<std::string, size_t>& index,
    const CsvTable& table, absl::string_view source, absl::string_view flag,
    const std::string& name) {
  auto it = index.find(name);
  if (it == index.end()) {
    return absl::InvalidArgumentError(absl::StrCat(
        source, " has no column '", name, "' (named by ", flag,
        "); its columns are: ", absl::StrJoin(table.header, ", ")));
  }
  return it->second;
}

bool IsNumericColumn(const CsvTable& table, size_t column) {
  for (const std::vector<std::string>& row : table.rows) {
    const std::string& cell = row[column];
    double number = 0;
    if (!IsBlank(cell) && !absl::SimpleAtod(cell, &number)) return false;
  }
  return true;
}

absl::StatusOr<Eigen::VectorXd> ReadLabels(const CsvTable& table, size_t column,
                                           absl::string_view source) {
  Eigen::VectorXd labels(static_cast<Eigen::Index>(table.rows.size()));
  for (size_t r = 0; r < table.rows.size(); ++r) {
    absl::StatusOr<int> label = ParseLabel(table.rows[r][column]);
    if (!label.ok()) {
      return CellError(source, table, r, column,
                       absl::StrCat(label.status().message(),
                                    "; the target column holds 0 or 1 in "
                                    "every row"));
    }
    labels[static_cast<Eigen::Index>(r)] = *label;
  }
  return labels;
}

absl::StatusOr<Eigen::VectorXd> ReadWeights(const CsvTable& table,
                                            size_t column,
                                            absl::string_view source) {
  Eigen::VectorXd weights(static_cast<Eigen::Index>(table.rows.size()));
  for (size_t r = 0; r < table.rows.size(); ++r) {
    const std::string& cell = table.rows[r][column];
    double w = 0;
    if (IsBlank(cell)) {
      return CellError(source, table, r, column,
                       "the weight is missing; every row needs a weight "
                       "(0 leaves the row out)");
    }
    if (!absl::SimpleAtod(cell, &w) || !std::isfinite(w) || w < 0) {
      return CellError(
          source, table, r, column,
          absl::StrCat("weight '", cell, "' is not a finite number >= 0"));
    }
    weights[static_cast<Eigen::Index>(r)] = w;
  }
  return weights;
}

}  // namespace

std::vector<std::string> SplitColumnList(absl::string_view text) {
  std::vector<std::string> names;
  for (absl::string_view part : absl::StrSplit(text, ',')) {
    part = absl::StripAsciiWhitespace(part);
    if (!part.empty()) names.emplace_back(part);
  }
  return names;
}

absl::StatusOr<TrainingData> TrainingDataFromCsv(const CsvTable& table,
                                                 const TrainingColumns& columns,
                                                 absl::string_view source) {
  if (columns.target.empty()) {
    return absl::InvalidArgumentError("no target column named (--target)");
  }
  if (table.rows.empty()) {
    return absl::InvalidArgumentError(
        absl::StrCat(source, " has a header but no data rows to fit"));
  }
  const absl::flat_hash_map<std::string, size_t> index = IndexHeader(table);
  absl::StatusOr<size_t> target =
      FindColumn(index, table, source, "--target", columns.target);
  if (!target.ok()) return target.status();
  int weights_column = -1;
  if (!columns.weights.empty()) {
    if (columns.weights == columns.target) {
      return absl::InvalidArgumentError(absl::StrCat(
          "column '", columns.weights, "' cannot be both target and weights"));
    }
    absl::StatusOr<size_t> w =
        FindColumn(index, table, source, "--weights", columns.weights);
    if (!w.ok()) return w.status();
    weights_column = static_cast<int>(*w);
  }

  // The feature columns, in order.
  std::vector<size_t> feature_columns;
  if (columns.features.empty()) {
    for (size_t c = 0; c < table.header.size(); ++c) {
      if (c == *target || static_cast<int>(c) == weights_column ||
          table.header[c] == kRecordIdColumn) {
        continue;
      }
      feature_columns.push_back(c);
    }
  } else {
    absl::flat_hash_set<std::string> seen;
    for (const std::string& name : columns.features) {
      absl::StatusOr<size_t> c =
          FindColumn(index, table, source, "--features", name);
      if (!c.ok()) return c.status();
      if (!seen.insert(name).second) {
        return absl::InvalidArgumentError(
            absl::StrCat("--features names column '", name, "' twice"));
      }
      if (*c == *target || static_cast<int>(*c) == weights_column) {
        return absl::InvalidArgumentError(absl::StrCat(
            "column '", name, "' is the ", *c == *target ? "target" : "weights",
            " column and cannot also be a feature"));
      }
      if (name == kRecordIdColumn) {
        return absl::InvalidArgumentError(
            absl::StrCat("column '", kRecordIdColumn,
                         "' holds record ids and cannot be a feature"));
      }
      feature_columns.push_back(*c);
    }
  }
  if (feature_columns.empty()) {
    return absl::InvalidArgumentError(absl::StrCat(
        source, " has no feature columns besides the target",
        weights_column >= 0 ? ", the weights" : "", " and record_id"));
  }
  absl::flat_hash_set<std::string> forced;
  for (const std::string& name : columns.categorical) {
    absl::StatusOr<size_t> c =
        FindColumn(index, table, source, "--categorical", name);
    if (!c.ok()) return c.status();
    if (std::find(feature_columns.begin(), feature_columns.end(), *c) ==
        feature_columns.end()) {
      return absl::InvalidArgumentError(
          absl::StrCat("--categorical names column '", name,
                       "', which is not a feature of this fit"));
    }
    forced.insert(name);
  }

  TrainingData data;
  absl::StatusOr<Eigen::VectorXd> labels = ReadLabels(table, *target, source);
  if (!labels.ok()) return labels.status();
  data.labels = *std::move(labels);
  if (weights_column >= 0) {
    absl::StatusOr<Eigen::VectorXd> w =
        ReadWeights(table, static_cast<size_t>(weights_column), source);
    if (!w.ok()) return w.status();
    data.weights = *std::move(w);
  }

  for (size_t c : feature_columns) {
    scorer::FeatureSpec spec;
    spec.name = table.header[c];
    spec.kind = forced.contains(spec.name) || !IsNumericColumn(table, c)
                    ? scorer::FeatureKind::kCategorical
                    : scorer::FeatureKind::kNumeric;
    data.specs.push_back(std::move(spec));
  }
  data.records.assign(table.rows.size(),
                      std::vector<scorer::RawValue>(feature_columns.size()));
  for (size_t r = 0; r < table.rows.size(); ++r) {
    for (size_t f = 0; f < feature_columns.size(); ++f) {
      const size_t c = feature_columns[f];
      const std::string& cell = table.rows[r][c];
      scorer::RawValue& value = data.records[r][f];
      if (IsBlank(cell)) continue;  // missing
      if (data.specs[f].kind == scorer::FeatureKind::kCategorical) {
        value = scorer::RawValue::Text(cell);
        continue;
      }
      // IsNumericColumn checked that it parses; a cell that does not is
      // refused like a non-finite one rather than read as 0.
      double number = 0;
      if (!absl::SimpleAtod(cell, &number) || !std::isfinite(number)) {
        return CellError(source, table, r, c,
                         absl::StrCat("'", cell,
                                      "' is not a finite number; leave the "
                                      "cell empty for a missing value"));
      }
      value = scorer::RawValue::Number(number);
    }
  }
  return data;
}

}  // namespace plumbline::daemon
