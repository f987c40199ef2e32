// File: daemon/csv/table.cc
#include "daemon/csv/table.h"

#include "absl/container/flat_hash_map.h"
#include "absl/status/status.h"
#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"

namespace plumbline::daemon {
namespace {

// The UTF-8 byte-order mark.
constexpr absl::string_view kUtf8Bom = "\xEF\xBB\xBF";

// Splits `text` into records of fields, tracking the line each starts on.
class CsvReader {
 public:
  CsvReader(absl::string_view text, absl::string_view source)
      : text_(text), source_(source) {}

  bool done() const { return pos_ >= text_.size(); }
  int line() const { return line_; }

  // Reads the next record into `fields`; an empty vector is a blank line.
  absl::Status Next(std::vector<std::string>* fields) {
    fields->clear();
    if (AtLineEnd()) {  // blank line
      SkipLineEnd();
      return absl::OkStatus();
    }
    while (true) {
      std::string field;
      if (absl::Status s = ReadField(&field); !s.ok()) return s;
      fields->push_back(std::move(field));
      if (done()) return absl::OkStatus();
      if (text_[pos_] == ',') {
        ++pos_;
        continue;
      }
      SkipLineEnd();  // ReadField stops only at ',', a line end or the end
      return absl::OkStatus();
    }
  }

 private:
  bool AtLineEnd() const {
    return !done() && (text_[pos_] == '\n' ||
                       (text_[pos_] == '\r' && pos_ + 1 < text_.size() &&
                        text_[pos_ + 1] == '\n'));
  }
  void SkipLineEnd() {
    if (text_[pos_] == '\r') ++pos_;
    ++pos_;  // '\n'
    ++line_;
  }
  absl::Status Error(int line, absl::string_view what) const {
    return absl::InvalidArgumentError(
        absl::StrCat(source_, ": line ", line, ": ", what));
  }

  absl::Status ReadField(std::string* field) {
    if (!done() && text_[pos_] == '"') return ReadQuoted(field);
    while (!done() && text_[pos_] != ',' && !AtLineEnd()) {
      if (text_[pos_] == '"') {
        return Error(line_,
                     "a '\"' inside an unquoted field; quote the whole field "
                     "and double the inner quotes");
      }
      field->push_back(text_[pos_++]);
    }
    return absl::OkStatus();
  }

  absl::Status ReadQuoted(std::string* field) {
    const int start_line = line_;
    ++pos_;  // opening quote
    while (true) {
      if (done()) return Error(start_line, "unterminated quoted field");
      const char c = text_[pos_++];
      if (c == '"') {
        if (!done() && text_[pos_] == '"') {
          field->push_back('"');
          ++pos_;
          continue;
        }
        break;
      }
      if (c == '\n') ++line_;
      field->push_back(c);
    }
    if (!done() && text_[pos_] != ',' && !AtLineEnd()) {
      return Error(line_, "text after the closing '\"' of a quoted field");
    }
    return absl::OkStatus();
  }

  const absl::string_view text_;
  const absl::string_view source_;
  size_t pos_ = 0;
  int line_ = 1;
};

}  // namespace

absl::StatusOr<CsvTable> ParseCsv(absl::string_view text,
                                  absl::string_view source) {
  if (absl::StartsWith(text, kUtf8Bom)) text.remove_prefix(kUtf8Bom.size());
  CsvReader reader(text, source);
  CsvTable table;
  std::vector<std::string> fields;
  while (!reader.done()) {
    const int line = reader.line();
    if (absl::Status s = reader.Next(&fields); !s.ok()) return s;
    if (fields.empty()) continue;
    if (table.header.empty()) {
      absl::flat_hash_map<std::string, int> seen;
      for (size_t c = 0; c < fields.size(); ++c) {
        if (fields[c].empty()) {
          return absl::InvalidArgumentError(
              absl::StrCat(source, ": line ", line, ": header column ", c + 1,
                           " has no name"));
        }
        if (!seen.emplace(fields[c], static_cast<int>(c)).second) {
          return absl::InvalidArgumentError(
              absl::StrCat(source, ": line ", line, ": header names column '",
                           fields[c], "' twice"));
        }
      }
      table.header = fields;
      continue;
    }
    if (fields.size() != table.header.size()) {
      return absl::InvalidArgumentError(absl::StrCat(
          source, ": row ", table.rows.size() + 1, " (line ", line, "): ",
          fields.size(), " fields, but the header has ", table.header.size()));
    }
    table.rows.push_back(fields);
    table.row_lines.push_back(line);
  }
  if (table.header.empty()) {
    return absl::InvalidArgumentError(
        absl::StrCat(source, ": no header row (the file is empty)"));
  }
  return table;
}

std::string FormatCsvRow(const std::vector<std::string>& fields) {
  std::string out;
  for (size_t i = 0; i < fields.size(); ++i) {
    if (i > 0) out.push_back(',');
    const std::string& field = fields[i];
    // A field that starts with a byte-order mark is quoted too: unquoted at
    // the start of a file, ParseCsv would take the mark for the file's own
    // and drop it (found by tests/fuzz/fuzz_csv).
    if (field.find_first_of(",\"\r\n") == std::string::npos &&
        !absl::StartsWith(field, kUtf8Bom)) {
      out += field;
      continue;
    }
    out.push_back('"');
    for (char c : field) {
      if (c == '"') out.push_back('"');
      out.push_back(c);
    }
    out.push_back('"');
  }
  out.push_back('\n');
  return out;
}

}  // namespace plumbline::daemon
