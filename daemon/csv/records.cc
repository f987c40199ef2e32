// File: daemon/csv/records.cc
#include "daemon/csv/records.h"

#include <algorithm>
#include <cmath>

#include "absl/container/flat_hash_map.h"
#include "absl/status/status.h"
#include "absl/strings/match.h"
#include "absl/strings/numbers.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "absl/strings/strip.h"

namespace plumbline::daemon {
namespace {

bool IsNumberKind(const v1::FeatureSummary& feature) {
  return feature.kind() == v1::FeatureSummary::NUMERIC ||
         feature.kind() == v1::FeatureSummary::BINNED;
}

std::string FormatDouble(double x) { return absl::StrFormat("%.17g", x); }

// The missing rule's enum name in FeatureSummary.missing.
constexpr char kRejectRule[] = "REJECT";

std::vector<std::string> FeatureNames(const v1::SetSummary& schema) {
  std::vector<std::string> names;
  for (const v1::FeatureSummary& f : schema.features()) {
    names.push_back(f.name());
  }
  return names;
}

// `name`, or "refused_" + name when the input already has that column.
std::string AddedColumn(const std::vector<std::string>& header,
                        const std::string& name) {
  return std::find(header.begin(), header.end(), name) == header.end()
             ? name
             : absl::StrCat("refused_", name);
}

}  // namespace

CsvLayout LayoutCsv(const std::vector<std::string>& header,
                    const v1::SetSummary& schema) {
  CsvLayout layout;
  layout.feature_of_column.assign(header.size(), nullptr);
  std::vector<bool> present(static_cast<size_t>(schema.features_size()), false);
  for (size_t c = 0; c < header.size(); ++c) {
    if (header[c] == kRecordIdColumn) {
      layout.record_id_column = static_cast<int>(c);
      continue;
    }
    for (int f = 0; f < schema.features_size(); ++f) {
      if (schema.features(f).name() != header[c]) continue;
      layout.feature_of_column[c] = &schema.features(f);
      present[static_cast<size_t>(f)] = true;
      ++layout.feature_columns;
    }
  }
  for (int f = 0; f < schema.features_size(); ++f) {
    if (!present[static_cast<size_t>(f)]) {
      layout.absent_features.push_back(schema.features(f).name());
    }
  }
  return layout;
}

absl::Status CheckLayout(const CsvLayout& layout, const v1::SetSummary& schema,
                         const std::vector<std::string>& header, bool strict,
                         absl::string_view source) {
  if (layout.feature_columns == 0 && schema.features_size() > 0) {
    std::string hint;
    if (header.size() == 1 && (absl::StrContains(header[0], ';') ||
                               absl::StrContains(header[0], '\t'))) {
      hint =
          "; the header is one column holding ';' or tabs: plumbctl reads "
          "comma-separated files";
    }
    return absl::InvalidArgumentError(absl::StrCat(
        source, ": no column is a feature of set '", schema.name(),
        "', so every record would score at the intercept; its features: ",
        ListFirst(FeatureNames(schema)),
        "; the file's columns: ", ListFirst(header), hint));
  }
  std::vector<std::string> rejecting;
  for (const std::string& name : layout.absent_features) {
    for (const v1::FeatureSummary& f : schema.features()) {
      if (f.name() == name && f.missing() == kRejectRule) {
        rejecting.push_back(name);
      }
    }
  }
  if (!rejecting.empty()) {
    return absl::InvalidArgumentError(absl::StrCat(
        source, ": no column for feature(s) ", ListFirst(rejecting),
        " of set '", schema.name(),
        "', whose missing rule is REJECT: every record would be refused"));
  }
  if (strict && !layout.absent_features.empty()) {
    return absl::InvalidArgumentError(absl::StrCat(
        source, ": no column for feature(s) ",
        ListFirst(layout.absent_features), " of set '", schema.name(),
        "' (--strict refuses a file without every feature)"));
  }
  return absl::OkStatus();
}

absl::StatusOr<std::vector<v1::Record>> CsvToRecords(
    const CsvTable& table, const CsvLayout& layout, absl::string_view source,
    const CsvRecordOptions& options) {
  std::vector<v1::Record> records;
  records.reserve(table.rows.size());
  // Each id's row (0-based), for the repeated-id check.
  absl::flat_hash_map<std::string, size_t> row_of_id;
  row_of_id.reserve(table.rows.size());
  for (size_t r = 0; r < table.rows.size(); ++r) {
    const std::vector<std::string>& row = table.rows[r];
    const auto cell_error = [&](size_t c, absl::string_view what) {
      return absl::InvalidArgumentError(
          absl::StrCat(source, ": row ", r + 1, " (line ", table.row_lines[r],
                       "), column '", table.header[c], "': ", what));
    };
    v1::Record record;
    if (layout.record_id_column >= 0 &&
        !row[static_cast<size_t>(layout.record_id_column)].empty()) {
      record.set_record_id(row[static_cast<size_t>(layout.record_id_column)]);
    } else {
      record.set_record_id(options.new_id());
    }
    const auto [it, inserted] = row_of_id.emplace(record.record_id(), r);
    if (!inserted) {
      return absl::InvalidArgumentError(absl::StrCat(
          source, ": record_id '", record.record_id(), "' appears in row ",
          it->second + 1, " and row ", r + 1,
          "; a record id names one record (plumbd would refuse the second "
          "as a repeat with other features)"));
    }
    auto& fields = *record.mutable_features()->mutable_fields();
    for (size_t c = 0; c < row.size(); ++c) {
      const v1::FeatureSummary* feature = layout.feature_of_column[c];
      if (feature == nullptr) continue;
      google::protobuf::Value& value = fields[feature->name()];
      const std::string& cell = row[c];
      if (options.missing.IsMissing(cell)) {
        if (feature->missing() == kRejectRule) {
          return cell_error(
              c, absl::StrCat("a missing value, and feature '", feature->name(),
                              "' of the set refuses records without it "
                              "(missing rule REJECT)"));
        }
        value.set_null_value(google::protobuf::NULL_VALUE);
        continue;
      }
      if (!IsNumberKind(*feature)) {
        value.set_string_value(cell);
        continue;
      }
      double number = 0;
      if (!absl::SimpleAtod(cell, &number) || !std::isfinite(number)) {
        return cell_error(
            c, absl::StrCat("'", cell, "' is not a ",
                            std::isfinite(number) ? "number" : "finite number",
                            " (feature '", feature->name(), "' is ",
                            v1::FeatureSummary::Kind_Name(feature->kind()), ")",
                            options.missing.tokens().empty()
                                ? "; if it marks a missing value, "
                                  "pass --na"
                                : ""));
      }
      value.set_number_value(number);
    }
    records.push_back(std::move(record));
  }
  return records;
}

std::string FormatScoredCsv(const CsvTable& table, const CsvLayout& layout,
                            const std::vector<v1::Record>& records,
                            const std::vector<v1::Scored>& scores,
                            int reasons) {
  const bool add_id_column = layout.record_id_column < 0;
  std::vector<std::string> header = table.header;
  if (add_id_column) header.push_back(kRecordIdColumn);
  header.push_back("log_odds");
  header.push_back("probability");
  for (int k = 1; k <= reasons; ++k) {
    header.push_back(absl::StrCat("reason_", k));
  }
  std::string out = FormatCsvRow(header);
  for (size_t r = 0; r < scores.size(); ++r) {
    std::vector<std::string> fields = table.rows[r];
    const std::string& id = records[r].record_id();
    if (add_id_column) {
      fields.push_back(id);
    } else {
      fields[static_cast<size_t>(layout.record_id_column)] = id;
    }
    const v1::Scored& scored = scores[r];
    fields.push_back(FormatDouble(scored.log_odds()));
    fields.push_back(FormatDouble(scored.probability()));
    for (int k = 0; k < reasons; ++k) {
      if (k < scored.reasons_size()) {
        const v1::Reason& reason = scored.reasons(k);
        fields.push_back(absl::StrCat(reason.feature(), ":",
                                      FormatDouble(reason.contribution())));
      } else {
        fields.emplace_back();
      }
    }
    out += FormatCsvRow(fields);
  }
  return out;
}

std::string FormatRefusedCsv(const CsvTable& table, const CsvLayout& layout,
                             const std::vector<v1::Record>& records,
                             size_t first_row,
                             const std::vector<std::string>& errors) {
  std::vector<std::string> header = {AddedColumn(table.header, "row"),
                                     kRecordIdColumn,
                                     AddedColumn(table.header, "error")};
  for (size_t c = 0; c < table.header.size(); ++c) {
    if (static_cast<int>(c) != layout.record_id_column) {
      header.push_back(table.header[c]);
    }
  }
  std::string out = FormatCsvRow(header);
  for (size_t i = 0; i < errors.size(); ++i) {
    const size_t r = first_row + i;
    std::vector<std::string> fields = {absl::StrCat(r + 1),
                                       records[r].record_id(), errors[i]};
    for (size_t c = 0; c < table.header.size(); ++c) {
      if (static_cast<int>(c) != layout.record_id_column) {
        fields.push_back(table.rows[r][c]);
      }
    }
    out += FormatCsvRow(fields);
  }
  return out;
}

}  // namespace plumbline::daemon
