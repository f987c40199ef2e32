// File: daemon/csv/records.cc
#include "daemon/csv/records.h"

#include "absl/status/status.h"
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
    }
  }
  for (int f = 0; f < schema.features_size(); ++f) {
    if (!present[static_cast<size_t>(f)]) {
      layout.absent_features.push_back(schema.features(f).name());
    }
  }
  return layout;
}

absl::StatusOr<std::vector<v1::Record>> CsvToRecords(
    const CsvTable& table, const CsvLayout& layout, absl::string_view source,
    absl::string_view id_prefix) {
  std::vector<v1::Record> records;
  records.reserve(table.rows.size());
  for (size_t r = 0; r < table.rows.size(); ++r) {
    const std::vector<std::string>& row = table.rows[r];
    v1::Record record;
    if (layout.record_id_column >= 0 &&
        !row[static_cast<size_t>(layout.record_id_column)].empty()) {
      record.set_record_id(row[static_cast<size_t>(layout.record_id_column)]);
    } else {
      record.set_record_id(absl::StrCat(id_prefix, "-", r + 1));
    }
    auto& fields = *record.mutable_features()->mutable_fields();
    for (size_t c = 0; c < row.size(); ++c) {
      const v1::FeatureSummary* feature = layout.feature_of_column[c];
      if (feature == nullptr) continue;
      google::protobuf::Value& value = fields[feature->name()];
      const std::string& cell = row[c];
      if (!IsNumberKind(*feature)) {
        if (cell.empty()) {
          value.set_null_value(google::protobuf::NULL_VALUE);
        } else {
          value.set_string_value(cell);
        }
        continue;
      }
      if (absl::StripAsciiWhitespace(cell).empty()) {
        value.set_null_value(google::protobuf::NULL_VALUE);
        continue;
      }
      double number = 0;
      if (!absl::SimpleAtod(cell, &number)) {
        return absl::InvalidArgumentError(absl::StrCat(
            source, ": row ", r + 1, " (line ", table.row_lines[r],
            "), column '", table.header[c], "': '", cell,
            "' is not a number (feature '", feature->name(), "' is ",
            v1::FeatureSummary::Kind_Name(feature->kind()), ")"));
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
  for (size_t r = 0; r < table.rows.size(); ++r) {
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

}  // namespace plumbline::daemon
