// File: daemon/csv/scoring.cc
#include "daemon/csv/scoring.h"

#include <algorithm>
#include <cstdio>
#include <filesystem>

#include "absl/status/status.h"
#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "absl/time/clock.h"
#include "absl/time/time.h"
#include "daemon/csv/records.h"
#include "daemon/csv/table.h"
#include "daemon/util/files.h"
#include "daemon/util/record_ids.h"

namespace plumbline::daemon {
namespace {

absl::Status WriteOutput(const std::string& path, const std::string& text) {
  if (!path.empty()) return WriteFileAtomically(path, text);
  if (std::fwrite(text.data(), 1, text.size(), stdout) != text.size() ||
      std::fflush(stdout) != 0) {
    return absl::DataLossError("cannot write the scored CSV to stdout");
  }
  return absl::OkStatus();
}

// The refusals of a run whose batch of rows [start, end) failed with
// `failure`: that batch's rows and every later one (0-based rows).
std::vector<std::string> RefusalErrors(const std::vector<v1::Record>& records,
                                       size_t start, size_t end,
                                       const absl::Status& failure) {
  const std::string reason = absl::StrCat(
      absl::StatusCodeToString(failure.code()), ": ", failure.message());
  // plumbd names the record it refused by its id in quotes
  // ("records[3] (id 'p-7'): ...", "record id 'p-7' was already scored").
  size_t culprit = end;
  for (size_t r = start; r < end; ++r) {
    if (absl::StrContains(failure.message(),
                          absl::StrCat("'", records[r].record_id(), "'"))) {
      culprit = r;
      break;
    }
  }
  const std::string batch = absl::StrCat("rows ", start + 1, "..", end);
  std::vector<std::string> errors;
  for (size_t r = start; r < records.size(); ++r) {
    if (r == culprit) {
      errors.push_back(reason);
    } else if (r >= end) {
      errors.push_back(absl::StrCat("not sent: the run stopped at ", batch));
    } else if (culprit < end) {
      errors.push_back(absl::StrCat("not recorded: the batch of ", batch,
                                    " was refused because of row ",
                                    culprit + 1));
    } else {
      errors.push_back(
          absl::StrCat("the batch of ", batch, " failed (", reason,
                       "); sending the row again with its record_id is safe"));
    }
  }
  return errors;
}

}  // namespace

std::string RefusalsPath(const CsvScoringOptions& options) {
  return absl::StrCat(
      options.out_path.empty() ? options.csv_path : options.out_path,
      ".refused.csv");
}

absl::StatusOr<CsvScoringResult> ScoreCsvFile(const CsvScoringOptions& options,
                                              const v1::SetSummary& schema,
                                              const BatchScorer& scorer) {
  // Everything the schema can decide, for the whole file, before any call.
  absl::StatusOr<std::string> text = ReadFileToString(options.csv_path);
  if (!text.ok()) return text.status();
  absl::StatusOr<CsvTable> table = ParseCsv(*text, options.csv_path);
  if (!table.ok()) return table.status();
  const CsvLayout layout = LayoutCsv(table->header, schema);
  if (absl::Status st = CheckLayout(layout, schema, table->header,
                                    options.strict, options.csv_path);
      !st.ok()) {
    return st;
  }
  RecordIdGenerator ids;
  const std::string id_prefix =
      std::filesystem::path(options.csv_path).stem().string();
  const absl::Time run_start = absl::Now();
  CsvRecordOptions record_options;
  record_options.missing = options.missing;
  record_options.new_id = [&] { return ids.Next(id_prefix, run_start); };
  absl::StatusOr<std::vector<v1::Record>> records =
      CsvToRecords(*table, layout, options.csv_path, record_options);
  if (!records.ok()) return records.status();

  CsvScoringResult result;
  result.absent_features = layout.absent_features;
  std::vector<v1::Scored> scores;
  scores.reserve(records->size());
  const size_t batch_size = static_cast<size_t>(options.batch_size);
  const int reasons = static_cast<int>(options.reasons.top());
  for (size_t start = 0; start < records->size(); start += batch_size) {
    const size_t end = std::min(records->size(), start + batch_size);
    v1::ScoreBatchRequest request;
    request.set_set(schema.name());
    *request.mutable_reasons() = options.reasons;
    for (size_t r = start; r < end; ++r) {
      *request.add_records() = (*records)[r];
    }
    absl::StatusOr<v1::ScoreBatchReply> reply = scorer(request);
    if (reply.ok() &&
        static_cast<size_t>(reply->scores_size()) != end - start) {
      reply = absl::InternalError(
          absl::StrCat("ScoreBatch returned ", reply->scores_size(),
                       " scores for ", end - start, " records"));
    }
    if (!reply.ok()) {
      // Resumable: keep what was scored, list the rest with the reason.
      const std::string refused_path = RefusalsPath(options);
      const std::vector<std::string> errors =
          RefusalErrors(*records, start, end, reply.status());
      absl::Status wrote = WriteOutput(
          options.out_path,
          FormatScoredCsv(*table, layout, *records, scores, reasons));
      if (wrote.ok()) {
        wrote = WriteFileAtomically(
            refused_path,
            FormatRefusedCsv(*table, layout, *records, start, errors));
      }
      return absl::Status(
          reply.status().code(),
          absl::StrCat(
              options.csv_path, ": rows ", start + 1, "..", end, ": ",
              reply.status().message(), "; ",
              wrote.ok()
                  ? absl::StrCat(
                        "wrote the ", start, " rows scored before them to ",
                        options.out_path.empty() ? "stdout" : options.out_path,
                        " and the ", records->size() - start, " rows from row ",
                        start + 1, " on to ", refused_path,
                        " (row, record_id, error, your columns): fix the "
                        "refused rows and score that file to resume; the "
                        "record ids are kept, so a row plumbd recorded "
                        "already comes back as a repeat, never twice")
                  : absl::StrCat("and writing what was scored failed too: ",
                                 wrote.message())));
    }
    for (v1::Scored& scored : *reply->mutable_scores()) {
      if (scored.repeat()) ++result.repeats;
      scores.push_back(std::move(scored));
    }
    ++result.batches;
  }
  result.records = static_cast<int>(records->size());
  if (absl::Status st = WriteOutput(
          options.out_path,
          FormatScoredCsv(*table, layout, *records, scores, reasons));
      !st.ok()) {
    return st;
  }
  return result;
}

}  // namespace plumbline::daemon
