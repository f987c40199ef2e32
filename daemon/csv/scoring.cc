// File: daemon/csv/scoring.cc
#include "daemon/csv/scoring.h"

#include <algorithm>
#include <cstdio>
#include <filesystem>

#include "absl/status/status.h"
#include "absl/strings/str_cat.h"
#include "absl/time/clock.h"
#include "absl/time/time.h"
#include "daemon/csv/records.h"
#include "daemon/csv/table.h"
#include "daemon/util/files.h"

namespace plumbline::daemon {

absl::StatusOr<CsvScoringResult> ScoreCsvFile(const CsvScoringOptions& options,
                                              const v1::SetSummary& schema,
                                              const BatchScorer& scorer) {
  absl::StatusOr<std::string> text = ReadFileToString(options.csv_path);
  if (!text.ok()) return text.status();
  absl::StatusOr<CsvTable> table = ParseCsv(*text, options.csv_path);
  if (!table.ok()) return table.status();
  const CsvLayout layout = LayoutCsv(table->header, schema);
  const std::string id_prefix =
      absl::StrCat(std::filesystem::path(options.csv_path).stem().string(), "-",
                   absl::ToUnixSeconds(absl::Now()));
  absl::StatusOr<std::vector<v1::Record>> records =
      CsvToRecords(*table, layout, options.csv_path, id_prefix);
  if (!records.ok()) return records.status();

  CsvScoringResult result;
  result.absent_features = layout.absent_features;
  std::vector<v1::Scored> scores;
  scores.reserve(records->size());
  const size_t batch_size = static_cast<size_t>(options.batch_size);
  for (size_t start = 0; start < records->size(); start += batch_size) {
    const size_t end = std::min(records->size(), start + batch_size);
    v1::ScoreBatchRequest request;
    request.set_set(schema.name());
    *request.mutable_reasons() = options.reasons;
    for (size_t r = start; r < end; ++r) {
      *request.add_records() = (*records)[r];
    }
    absl::StatusOr<v1::ScoreBatchReply> reply = scorer(request);
    if (!reply.ok()) {
      return absl::Status(
          reply.status().code(),
          absl::StrCat(options.csv_path, ": rows ", start + 1, "..", end, ": ",
                       reply.status().message()));
    }
    if (static_cast<size_t>(reply->scores_size()) != end - start) {
      return absl::InternalError(
          absl::StrCat("ScoreBatch returned ", reply->scores_size(),
                       " scores for ", end - start, " records"));
    }
    for (v1::Scored& scored : *reply->mutable_scores()) {
      scores.push_back(std::move(scored));
    }
    ++result.batches;
  }
  result.records = static_cast<int>(records->size());

  const std::string out =
      FormatScoredCsv(*table, layout, *records, scores,
                      static_cast<int>(options.reasons.top()));
  if (options.out_path.empty()) {
    if (std::fwrite(out.data(), 1, out.size(), stdout) != out.size() ||
        std::fflush(stdout) != 0) {
      return absl::DataLossError("cannot write the scored CSV to stdout");
    }
  } else if (absl::Status s = WriteFileAtomically(options.out_path, out);
             !s.ok()) {
    return s;
  }
  return result;
}

}  // namespace plumbline::daemon
