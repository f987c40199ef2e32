// File: tests/fuzz/fuzz_csv.cc
//
// libFuzzer target: plumbctl's CSV reader (RFC 4180, written by hand) and
// the conversion of a table's rows into records for the fuzz plan.
//
// Checked properties, besides "no crash, no sanitizer report": every row of
// an accepted table has the header's width; writing the table back with
// FormatCsvRow and reading it again gives the same table (round trip).
#include <cstdint>
#include <string>

#include "absl/strings/str_cat.h"
#include "daemon/csv/records.h"
#include "daemon/csv/table.h"
#include "daemon/scoring/core.h"
#include "tests/fuzz/fuzz_plan.h"

namespace {

void Check(bool condition) {
  if (!condition) __builtin_trap();
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* bytes, size_t size) {
  const std::string text(reinterpret_cast<const char*>(bytes), size);
  absl::StatusOr<plumbline::daemon::CsvTable> table =
      plumbline::daemon::ParseCsv(text, "fuzz.csv");
  if (!table.ok()) return 0;
  Check(table->rows.size() == table->row_lines.size());
  for (const auto& row : table->rows) Check(row.size() == table->header.size());

  // Round trip. Blank lines are not records, so a table whose header or
  // rows are one empty field cannot survive it: skip those.
  bool has_blank_row = table->header.size() == 1 && table->header[0].empty();
  for (const auto& row : table->rows) {
    has_blank_row = has_blank_row || (row.size() == 1 && row[0].empty());
  }
  if (!has_blank_row) {
    std::string written = plumbline::daemon::FormatCsvRow(table->header);
    for (const auto& row : table->rows) {
      written += plumbline::daemon::FormatCsvRow(row);
    }
    absl::StatusOr<plumbline::daemon::CsvTable> again =
        plumbline::daemon::ParseCsv(written, "written.csv");
    Check(again.ok());
    Check(again->header == table->header);
    Check(again->rows == table->rows);
  }

  const plumbline::v1::SetSummary schema =
      plumbline::daemon::SummarizeSet(plumbline::fuzz::FuzzPlan());
  const plumbline::daemon::CsvLayout layout =
      plumbline::daemon::LayoutCsv(table->header, schema);
  plumbline::daemon::CsvRecordOptions options;
  options.new_id = [n = 0]() mutable { return absl::StrCat("fuzz-", ++n); };
  absl::StatusOr<std::vector<plumbline::v1::Record>> records =
      plumbline::daemon::CsvToRecords(*table, layout, "fuzz.csv", options);
  if (records.ok()) Check(records->size() == table->rows.size());
  return 0;
}
