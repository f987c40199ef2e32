// File: daemon/csv/outcomes.cc
#include "daemon/csv/outcomes.h"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <utility>

#include "absl/strings/ascii.h"
#include "absl/strings/numbers.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_join.h"
#include "daemon/csv/table.h"
#include "daemon/util/files.h"

namespace plumbline::daemon {
namespace {

constexpr char kRecordId[] = "record_id";
constexpr char kLabel[] = "label";
constexpr char kObservedAt[] = "observed_at";

// Refusals sorted by line; stable so equal lines keep their order.
void SortByLine(std::vector<OutcomeRefusal>& refusals) {
  std::stable_sort(refusals.begin(), refusals.end(),
                   [](const OutcomeRefusal& a, const OutcomeRefusal& b) {
                     return a.line < b.line;
                   });
}

}  // namespace

absl::StatusOr<absl::Time> ParseObservedAt(absl::string_view text) {
  const absl::string_view t = absl::StripAsciiWhitespace(text);
  absl::Time time;
  std::string error;
  if (absl::ParseTime(absl::RFC3339_full, t, &time, &error)) return time;
  int64_t seconds = 0;
  if (absl::SimpleAtoi(t, &seconds)) return absl::FromUnixSeconds(seconds);
  double fractional = 0;
  if (absl::SimpleAtod(t, &fractional) && std::isfinite(fractional)) {
    time = absl::UnixEpoch() + absl::Seconds(fractional);
    if (time != absl::InfiniteFuture() && time != absl::InfinitePast()) {
      return time;
    }
  }
  return absl::InvalidArgumentError(absl::StrCat(
      "observed_at '", text,
      "' is neither RFC 3339 (2026-12-01T08:30:00Z) nor unix seconds"));
}

absl::StatusOr<int> ParseLabel(absl::string_view text) {
  const absl::string_view t = absl::StripAsciiWhitespace(text);
  if (t == "0") return 0;
  if (t == "1") return 1;
  return absl::InvalidArgumentError(
      absl::StrCat("label '", text, "' is not 0 or 1"));
}

void SetObservedAt(absl::Time t, v1::Outcome* outcome) {
  const int64_t seconds = absl::ToUnixSeconds(t);  // rounds down
  const int64_t nanos =
      absl::ToInt64Nanoseconds(t - absl::FromUnixSeconds(seconds));
  outcome->mutable_observed_at()->set_seconds(seconds);
  outcome->mutable_observed_at()->set_nanos(static_cast<int32_t>(nanos));
}

absl::StatusOr<OutcomesCsv> ReadOutcomesCsv(const std::string& path) {
  absl::StatusOr<std::string> text = ReadFileToString(path);
  if (!text.ok()) return text.status();
  absl::StatusOr<CsvTable> table = ParseCsv(*text, path);
  if (!table.ok()) return table.status();

  int id_column = -1, label_column = -1, time_column = -1;
  std::vector<std::string> unexpected;
  for (size_t c = 0; c < table->header.size(); ++c) {
    const std::string& name = table->header[c];
    if (name == kRecordId) {
      id_column = static_cast<int>(c);
    } else if (name == kLabel) {
      label_column = static_cast<int>(c);
    } else if (name == kObservedAt) {
      time_column = static_cast<int>(c);
    } else {
      unexpected.push_back(absl::StrCat("'", name, "'"));
    }
  }
  constexpr char kShape[] =
      "an outcomes CSV has a header row and the columns record_id, label "
      "and optionally observed_at";
  if (!unexpected.empty()) {
    return absl::InvalidArgumentError(
        absl::StrCat(path, ": unexpected column(s) ",
                     absl::StrJoin(unexpected, ", "), "; ", kShape));
  }
  if (id_column < 0 || label_column < 0) {
    return absl::InvalidArgumentError(
        absl::StrCat(path, ": no '", id_column < 0 ? kRecordId : kLabel,
                     "' column; ", kShape));
  }

  OutcomesCsv csv;
  csv.path = path;
  for (size_t r = 0; r < table->rows.size(); ++r) {
    const std::vector<std::string>& row = table->rows[r];
    const int line = table->row_lines[r];
    const std::string& id = row[static_cast<size_t>(id_column)];
    auto refuse = [&](absl::string_view message) {
      csv.refused.push_back(OutcomeRefusal{
          id, line, absl::StatusCode::kInvalidArgument, std::string(message)});
    };
    if (absl::StripAsciiWhitespace(id).empty()) {
      refuse("record_id is empty");
      continue;
    }
    absl::StatusOr<int> label =
        ParseLabel(row[static_cast<size_t>(label_column)]);
    if (!label.ok()) {
      refuse(label.status().message());
      continue;
    }
    v1::Outcome outcome;
    outcome.set_record_id(id);
    outcome.set_label(*label);
    if (time_column >= 0 &&
        !absl::StripAsciiWhitespace(row[static_cast<size_t>(time_column)])
             .empty()) {
      absl::StatusOr<absl::Time> observed =
          ParseObservedAt(row[static_cast<size_t>(time_column)]);
      if (!observed.ok()) {
        refuse(observed.status().message());
        continue;
      }
      SetObservedAt(*observed, &outcome);
    }
    csv.outcomes.push_back(std::move(outcome));
    csv.lines.push_back(line);
  }
  return csv;
}

OutcomesCsvRun ReportOutcomesCsv(const OutcomesCsv& csv, int batch_size,
                                 const OutcomesSender& send) {
  OutcomesCsvRun run;
  run.refusals = csv.refused;
  const size_t total = csv.outcomes.size();
  const size_t step = static_cast<size_t>(batch_size);
  for (size_t start = 0; start < total; start += step) {
    const size_t end = std::min(total, start + step);
    v1::ReportOutcomesRequest request;
    request.mutable_outcomes()->Reserve(static_cast<int>(end - start));
    for (size_t i = start; i < end; ++i) {
      *request.add_outcomes() = csv.outcomes[i];
    }
    absl::StatusOr<v1::ReportOutcomesReply> reply = send(request);
    if (reply.ok() &&
        static_cast<size_t>(reply->results_size()) != end - start) {
      reply = absl::InternalError(
          absl::StrCat("ReportOutcomes returned ", reply->results_size(),
                       " results for ", end - start, " outcomes"));
    }
    if (!reply.ok()) {
      run.status = absl::Status(
          reply.status().code(),
          absl::StrCat(csv.path, ": lines ", csv.lines[start], "..",
                       csv.lines[end - 1], ": ", reply.status().message()));
      run.first_unsent_line = csv.lines[start];
      break;
    }
    ++run.batches;
    for (size_t i = start; i < end; ++i) {
      const v1::OutcomeResult& result =
          reply->results(static_cast<int>(i - start));
      if (result.code() == 0) {
        ++run.accepted;
        if (result.repeat()) ++run.repeats;
        continue;
      }
      run.refusals.push_back(OutcomeRefusal{
          csv.outcomes[i].record_id(), csv.lines[i],
          static_cast<absl::StatusCode>(result.code()), result.message()});
    }
  }
  SortByLine(run.refusals);
  return run;
}

std::string FormatRefusalsCsv(const std::vector<OutcomeRefusal>& refusals) {
  std::string out = FormatCsvRow({"record_id", "line", "code", "message"});
  for (const OutcomeRefusal& r : refusals) {
    out += FormatCsvRow({r.record_id, absl::StrCat(r.line),
                         absl::StatusCodeToString(r.code), r.message});
  }
  return out;
}

}  // namespace plumbline::daemon
