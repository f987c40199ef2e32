// File: tests/bench/load/requests.cc
#include "tests/bench/load/requests.h"

#include <filesystem>
#include <system_error>
#include <utility>

#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "tests/testing/process.h"
#include "tests/testing/test_sets.h"

namespace plumbline::bench {
namespace {

// Row r's raw value of column f: 1.0 to 10.6 in steps of 0.1, different
// across rows and columns, inside every clip range of the courier set.
double Value(int r, int f) { return 1.0 + ((r * 31 + f * 7) % 97) / 10.0; }

int LevelIndex(const v1::FeatureSummary& feature, int r, int f) {
  return (r + f) % feature.levels_size();
}

void FillStruct(const v1::SetSummary& schema, int r,
                google::protobuf::Struct* features) {
  auto& fields = *features->mutable_fields();
  for (int f = 0; f < schema.features_size(); ++f) {
    const v1::FeatureSummary& feature = schema.features(f);
    if (feature.kind() == v1::FeatureSummary::CATEGORICAL) {
      fields[feature.name()].set_string_value(
          feature.levels(LevelIndex(feature, r, f)));
    } else {
      fields[feature.name()].set_number_value(Value(r, f));
    }
  }
}

}  // namespace

std::string WideSetName(int features) {
  return absl::StrCat("parcel_wide_", features);
}

std::string WideSetJson(int features) {
  std::string json = absl::StrFormat(
      R"json({"name": "%s", "version": "v1",
 "description": "synthetic wide parcel set for tests/bench (coefficients are a fixed pattern)",
 "intercept": -1.2,
 "features": [)json",
      WideSetName(features));
  for (int f = 0; f < features; ++f) {
    // Coefficients -0.03 .. 0.03 so the log-odds stay moderate at any width.
    absl::StrAppendFormat(&json,
                          R"json(%s
  {"name": "route_signal_%03d", "numeric": {"center": 5, "scale": 3, "coefficient": %.2f}})json",
                          f == 0 ? "" : ",", f, ((f % 7) - 3) * 0.01);
  }
  absl::StrAppend(&json, "\n]}\n");
  return json;
}

absl::Status WriteBenchSets(const std::string& dir,
                            const std::vector<int>& widths) {
  std::error_code error;
  std::filesystem::create_directories(dir, error);
  if (error) {
    return absl::UnavailableError(
        absl::StrCat("cannot create sets dir ", dir, ": ", error.message()));
  }
  if (absl::Status s = daemon::testing::WriteTextFile(
          absl::StrCat(dir, "/", kMixedSet, ".json"),
          daemon::testing::CourierSetJson(kMixedSet, "v1"));
      !s.ok()) {
    return s;
  }
  for (int width : widths) {
    if (absl::Status s = daemon::testing::WriteTextFile(
            absl::StrCat(dir, "/", WideSetName(width), ".json"),
            WideSetJson(width));
        !s.ok()) {
      return s;
    }
  }
  return absl::OkStatus();
}

absl::StatusOr<v1::SetSummary> FetchSchema(v1::Scoring::Stub* stub,
                                           absl::string_view set) {
  grpc::ClientContext context;
  context.set_deadline(absl::ToChronoTime(absl::Now() + absl::Seconds(10)));
  v1::ListSetsReply reply;
  const grpc::Status status =
      stub->ListSets(&context, v1::ListSetsRequest(), &reply);
  if (!status.ok()) {
    return absl::UnavailableError(
        absl::StrCat("ListSets failed: ", status.error_message()));
  }
  for (const v1::SetSummary& summary : reply.sets()) {
    if (summary.name() == set) return summary;
  }
  return absl::NotFoundError(
      absl::StrCat("plumbd has no set '", set, "' loaded"));
}

v1::ScoreRequest UnaryRequest(const v1::SetSummary& schema,
                              absl::string_view target) {
  v1::ScoreRequest request;
  request.set_set(std::string(target));
  FillStruct(schema, 0, request.mutable_record()->mutable_features());
  return request;
}

v1::ScoreBatchRequest NamedBatch(const v1::SetSummary& schema,
                                 absl::string_view target, int records) {
  v1::ScoreBatchRequest request;
  request.set_set(std::string(target));
  for (int r = 0; r < records; ++r) {
    FillStruct(schema, r, request.add_records()->mutable_features());
  }
  return request;
}

v1::ScoreBatchRequest DenseBatch(const v1::SetSummary& schema,
                                 absl::string_view target, int records) {
  v1::ScoreBatchRequest request;
  request.set_set(std::string(target));
  // No column names: every feature of the set in the set's order.
  for (int r = 0; r < records; ++r) {
    v1::DenseRows::Row* row = request.mutable_dense()->add_rows();
    for (int f = 0; f < schema.features_size(); ++f) {
      const v1::FeatureSummary& feature = schema.features(f);
      row->add_values(feature.kind() == v1::FeatureSummary::CATEGORICAL
                          ? LevelIndex(feature, r, f)
                          : Value(r, f));
    }
  }
  return request;
}

void RecordIds::Next(std::string* id) {
  id->assign(prefix_);
  absl::StrAppend(id, "-", next_++);
}

ScoreFiller FreshScoreIds(RecordIds* ids) {
  return [ids](v1::ScoreRequest* request) {
    ids->Next(request->mutable_record()->mutable_record_id());
  };
}

BatchFiller FreshBatchIds(RecordIds* ids) {
  return [ids](v1::ScoreBatchRequest* request) {
    for (v1::Record& record : *request->mutable_records()) {
      ids->Next(record.mutable_record_id());
    }
    for (v1::DenseRows::Row& row : *request->mutable_dense()->mutable_rows()) {
      ids->Next(row.mutable_record_id());
    }
  };
}

}  // namespace plumbline::bench
