// File: daemon/csv/table.h
//
// CSV text in and out, RFC 4180: comma-separated fields, records ended by LF
// or CRLF, fields that hold a comma, quote or line break are enclosed in
// double quotes with inner quotes doubled. The first record is the header.
// Used by plumbctl's CSV scoring (online and offline).
//
// Written by hand: Debian's usual C++ library set (Abseil, Boost, Qt aside)
// has no CSV reader, and RFC 4180 is small enough to implement exactly.
//
//   absl::StatusOr<CsvTable> table = ParseCsv(text, "parcels.csv");
//   std::string line = FormatCsvRow({"a", "b,c"});  // a,"b,c"\n
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_CSV_TABLE_H_
#define PLUMBLINE_DAEMON_CSV_TABLE_H_

#include <string>
#include <vector>

#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"

namespace plumbline::daemon {

struct CsvTable {
  std::vector<std::string> header;
  // Data records; each has header.size() fields.
  std::vector<std::vector<std::string>> rows;
  // 1-based line of the file where each data record starts.
  std::vector<int> row_lines;
};

// Parses `text`. A UTF-8 byte-order mark is skipped; blank lines are not
// records. INVALID_ARGUMENT starting with `source` for: no header, an empty
// or repeated column name, a record whose field count differs from the
// header's, an unterminated quoted field, a quote inside an unquoted field or
// text after a closing quote.
absl::StatusOr<CsvTable> ParseCsv(absl::string_view text,
                                  absl::string_view source);

// One record with its line end ("\n"), quoting fields as needed.
std::string FormatCsvRow(const std::vector<std::string>& fields);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CSV_TABLE_H_
