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
#include "absl/strings/str_format.h"
#include "absl/strings/str_join.h"
#include "absl/strings/str_split.h"
#include "daemon/csv/records.h"
#include "daemon/util/text_table.h"

namespace plumbline::daemon {
namespace {

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

// Numeric when every present cell is a number, categorical when fewer
// than kNumericShare are; in between, INVALID_ARGUMENT.
absl::StatusOr<scorer::FeatureKind> InferKind(const CsvTable& table,
                                              size_t column,
                                              const MissingCells& missing,
                                              absl::string_view source) {
  int present = 0;
  std::vector<std::string> text;  // distinct non-numbers, first seen first
  absl::flat_hash_set<std::string> seen;
  int text_cells = 0;
  for (const std::vector<std::string>& row : table.rows) {
    const std::string& cell = row[column];
    if (missing.IsMissing(cell)) continue;
    ++present;
    double number = 0;
    if (absl::SimpleAtod(cell, &number)) continue;
    ++text_cells;
    if (seen.insert(cell).second) text.push_back(cell);
  }
  if (text_cells == 0) return scorer::FeatureKind::kNumeric;
  // A quotient, not a product: 27 / 30 is the double nearest 0.9, as the
  // constant is.
  if (static_cast<double>(present - text_cells) / present < kNumericShare) {
    return scorer::FeatureKind::kCategorical;
  }
  return absl::InvalidArgumentError(absl::StrCat(
      source, ": column '", table.header[column], "' looks numeric (",
      present - text_cells, " of ", present, " present cells are numbers) but ",
      text_cells, text_cells == 1 ? " cell is" : " cells are",
      " not: ", ListFirst(text), ". If they mark missing values, pass --na ",
      absl::StrJoin(text.begin(),
                    text.begin() + std::min<size_t>(3, text.size()), ","),
      "; if the column is a code, --categorical ", table.header[column],
      "; otherwise correct the cells"));
}

absl::StatusOr<Eigen::VectorXd> ReadLabels(const CsvTable& table, size_t column,
                                           absl::string_view source) {
  Eigen::VectorXd labels(static_cast<Eigen::Index>(table.rows.size()));
  for (size_t r = 0; r < table.rows.size(); ++r) {
    absl::StatusOr<int> label = ParseTarget(table.rows[r][column]);
    if (!label.ok()) {
      return CellError(source, table, r, column, label.status().message());
    }
    labels[static_cast<Eigen::Index>(r)] = *label;
  }
  return labels;
}

absl::StatusOr<Eigen::VectorXd> ReadWeights(const CsvTable& table,
                                            size_t column,
                                            const MissingCells& missing,
                                            absl::string_view source) {
  Eigen::VectorXd weights(static_cast<Eigen::Index>(table.rows.size()));
  for (size_t r = 0; r < table.rows.size(); ++r) {
    const std::string& cell = table.rows[r][column];
    double w = 0;
    if (missing.IsMissing(cell)) {
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

constexpr size_t kRowsShown = 5;

absl::string_view RuleName(v1::MissingRule::Kind rule) {
  switch (rule) {
    case v1::MissingRule::IMPUTE:
      return "impute";
    case v1::MissingRule::INDICATOR:
      return "indicator";
    default:
      return "reject";
  }
}

}  // namespace

absl::StatusOr<v1::MissingRule::Kind> ParseMissingRule(absl::string_view flag,
                                                       absl::string_view text) {
  const absl::string_view t = absl::StripAsciiWhitespace(text);
  if (t == "impute") return v1::MissingRule::IMPUTE;
  if (t == "indicator") return v1::MissingRule::INDICATOR;
  if (t == "reject") return v1::MissingRule::REJECT;
  return absl::InvalidArgumentError(
      absl::StrCat(flag, ": '", text,
                   "' is not a missing-value rule; expected impute, "
                   "indicator or reject"));
}

absl::StatusOr<std::pair<std::string, v1::MissingRule::Kind>>
ParseColumnMissingRule(absl::string_view text) {
  const size_t eq = text.rfind('=');
  if (eq == absl::string_view::npos ||
      absl::StripAsciiWhitespace(text.substr(0, eq)).empty()) {
    return absl::InvalidArgumentError(absl::StrCat(
        "--missing: '", text, "'; expected COLUMN=impute|indicator|reject"));
  }
  absl::StatusOr<v1::MissingRule::Kind> rule =
      ParseMissingRule("--missing", text.substr(eq + 1));
  if (!rule.ok()) return rule.status();
  return std::make_pair(
      std::string(absl::StripAsciiWhitespace(text.substr(0, eq))), *rule);
}

absl::StatusOr<int> ParseTarget(absl::string_view cell) {
  const absl::string_view t = absl::StripAsciiWhitespace(cell);
  // "1", "1.0", "1.00": a 0/1 column written by a program as floats.
  const auto is_label = [&t](char digit) {
    if (t.empty() || t[0] != digit) return false;
    if (t.size() == 1) return true;
    if (t.size() < 3 || t[1] != '.') return false;
    return t.substr(2).find_first_not_of('0') == absl::string_view::npos;
  };
  if (is_label('1') || t == "true" || t == "True" || t == "TRUE") return 1;
  if (is_label('0') || t == "false" || t == "False" || t == "FALSE") return 0;
  return absl::InvalidArgumentError(absl::StrCat(
      "target '", cell,
      "' is not a label; the target column holds 1, 1.0 or true (the event "
      "happened) or 0, 0.0 or false in every row"));
}

absl::Status CheckMissingRules(const TrainingData& data,
                               absl::string_view source) {
  std::vector<std::string> refused;
  std::string first;
  for (const MissingCount& m : data.missing) {
    if (m.rule != v1::MissingRule::REJECT || m.count == 0) continue;
    std::vector<std::string> rows;
    for (int r : m.first_rows) rows.push_back(absl::StrCat(r));
    rows.resize(static_cast<size_t>(m.count), "");  // for the "and N more"
    refused.push_back(absl::StrCat("column '", m.column, "' has ", m.count,
                                   " (rows ", ListFirst(rows, false), ")"));
    if (first.empty()) first = m.column;
  }
  if (refused.empty()) return absl::OkStatus();
  return absl::InvalidArgumentError(absl::StrCat(
      source, ": missing values in feature columns whose rule is reject: ",
      absl::StrJoin(refused, "; "), ". Choose a rule per column (--missing ",
      first,
      "=impute|indicator) or for every column (--missing_default), or fill "
      "the cells; a cell counts as missing when blank",
      " or equal to an --na token"));
}

std::string MissingTable(const TrainingData& data) {
  std::vector<std::vector<std::string>> rows = {
      {"column", "missing", "share", "rule"}};
  for (const MissingCount& m : data.missing) {
    rows.push_back(
        {m.column, absl::StrCat(m.count),
         absl::StrFormat("%.1f%%",
                         data.rows == 0 ? 0.0 : 100.0 * m.count / data.rows),
         std::string(RuleName(m.rule))});
  }
  return FormatTable(rows);
}

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
  absl::flat_hash_map<std::string, v1::MissingRule::Kind> rules;
  for (const auto& [name, rule] : columns.missing_rules) {
    absl::StatusOr<size_t> c =
        FindColumn(index, table, source, "--missing", name);
    if (!c.ok()) return c.status();
    if (std::find(feature_columns.begin(), feature_columns.end(), *c) ==
        feature_columns.end()) {
      return absl::InvalidArgumentError(
          absl::StrCat("--missing names column '", name,
                       "', which is not a feature of this fit"));
    }
    rules[name] = rule;
  }

  TrainingData data;
  absl::StatusOr<Eigen::VectorXd> labels = ReadLabels(table, *target, source);
  if (!labels.ok()) return labels.status();
  data.labels = *std::move(labels);
  if (weights_column >= 0) {
    absl::StatusOr<Eigen::VectorXd> w = ReadWeights(
        table, static_cast<size_t>(weights_column), columns.missing, source);
    if (!w.ok()) return w.status();
    data.weights = *std::move(w);
  }

  data.rows = static_cast<int>(table.rows.size());
  for (size_t c : feature_columns) {
    scorer::FeatureSpec spec;
    spec.name = table.header[c];
    if (forced.contains(spec.name)) {
      spec.kind = scorer::FeatureKind::kCategorical;
    } else {
      absl::StatusOr<scorer::FeatureKind> kind =
          InferKind(table, c, columns.missing, source);
      if (!kind.ok()) return kind.status();
      spec.kind = *kind;
    }
    const auto rule = rules.find(spec.name);
    spec.missing = rule == rules.end() ? columns.missing_default : rule->second;
    MissingCount count;
    count.column = spec.name;
    count.rule = spec.missing;
    data.missing.push_back(std::move(count));
    data.specs.push_back(std::move(spec));
  }
  data.records.assign(table.rows.size(),
                      std::vector<scorer::RawValue>(feature_columns.size()));
  for (size_t r = 0; r < table.rows.size(); ++r) {
    for (size_t f = 0; f < feature_columns.size(); ++f) {
      const size_t c = feature_columns[f];
      const std::string& cell = table.rows[r][c];
      scorer::RawValue& value = data.records[r][f];
      if (columns.missing.IsMissing(cell)) {
        MissingCount& m = data.missing[f];
        if (++m.count <= static_cast<int>(kRowsShown)) {
          m.first_rows.push_back(static_cast<int>(r) + 1);
        }
        continue;
      }
      if (data.specs[f].kind == scorer::FeatureKind::kCategorical) {
        value = scorer::RawValue::Text(cell);
        continue;
      }
      // InferKind checked that it parses; a cell that does not is
      // refused like a non-finite one rather than read as 0.
      double number = 0;
      if (!absl::SimpleAtod(cell, &number) || !std::isfinite(number)) {
        return CellError(source, table, r, c,
                         absl::StrCat("'", cell,
                                      "' is not a finite number; leave the "
                                      "cell empty (or pass --na) for a "
                                      "missing value"));
      }
      value = scorer::RawValue::Number(number);
    }
  }
  return data;
}

}  // namespace plumbline::daemon
