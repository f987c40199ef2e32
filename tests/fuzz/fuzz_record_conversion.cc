// File: tests/fuzz/fuzz_record_conversion.cc
//
// libFuzzer target: a Score request as it arrives on the wire (protobuf
// bytes) through the conversion of its google.protobuf.Struct of named
// feature values into the scorer's row, scoring with reason codes, the
// ledger's packed row of the features (and the JSON of schema < 7) read
// back as the health monitor's rebuild reads them.
//
// Checked properties, besides "no crash, no sanitizer report": a scored
// probability is in [0, 1]; the features the ledger stores read back to the
// values that were scored.
#include <cstdint>
#include <cstdlib>
#include <string>
#include <vector>

#include "daemon/scoring/core.h"
#include "daemon/scoring/features_json.h"
#include "daemon/scoring/packed_row.h"
#include "google/protobuf/stubs/logging.h"
#include "plumbline/v1/scoring.pb.h"
#include "tests/fuzz/fuzz_plan.h"

namespace {

void Check(bool condition) {
  if (!condition) __builtin_trap();
}

bool SameValue(const plumbline::scorer::RawValue& a,
               const plumbline::scorer::RawValue& b) {
  using Kind = plumbline::scorer::RawValue::Kind;
  if (a.kind != b.kind) return false;
  if (a.kind == Kind::kNumber) return a.number == b.number;
  if (a.kind == Kind::kText) return a.text == b.text;
  return true;
}

}  // namespace

// protobuf logs every string that is not UTF-8 it meets while parsing;
// thousands of lines a second would only slow the fuzzer down.
extern "C" int LLVMFuzzerInitialize(int* /*argc*/, char*** /*argv*/) {
  google::protobuf::SetLogHandler(nullptr);
  return 0;
}

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* bytes, size_t size) {
  plumbline::v1::ScoreRequest request;
  if (!request.ParseFromArray(bytes, static_cast<int>(size))) return 0;
  const plumbline::scorer::ScoringPlan& plan = plumbline::fuzz::FuzzPlan();
  plumbline::daemon::ScoringLimits limits;
  limits.max_reasons = 5;
  plumbline::daemon::RecordInputs inputs;
  absl::StatusOr<plumbline::v1::ScoreReply> reply =
      plumbline::daemon::ScoreWithPlan(plan, request, limits, &inputs);
  if (!reply.ok()) return 0;
  const double p = reply->score().probability();
  Check(p >= 0 && p <= 1);
  Check(reply->score().reasons_size() <= 5);

  const std::string json =
      plumbline::daemon::FeaturesJson(plan, inputs.Values(0), inputs.Sent(0));
  google::protobuf::Struct holder;
  std::vector<plumbline::scorer::RawValue> back;
  const absl::Status parsed =
      plumbline::daemon::ParseFeaturesJson(plan, json, &holder, &back);
  Check(parsed.ok());
  const auto values = inputs.Values(0);
  Check(back.size() == values.size());
  for (size_t f = 0; f < back.size(); ++f) Check(SameValue(back[f], values[f]));

  // The packed row (schema 7) reads back to the same values, and its JSON
  // view is the JSON above.
  std::string packed;
  plumbline::daemon::PackFeatures(plan, values, inputs.Sent(0), &packed);
  const plumbline::v1::RowLayout layout = plumbline::daemon::LayoutOf(plan);
  plumbline::daemon::StoredFeatureReader reader;
  Check(reader.Read(plan, &layout, packed, &back).ok());
  Check(back.size() == values.size());
  for (size_t f = 0; f < back.size(); ++f) {
    if (inputs.Sent(0)[f] != 0) Check(SameValue(back[f], values[f]));
  }
  const absl::StatusOr<std::string> view =
      plumbline::daemon::StoredFeaturesJson(&layout, packed);
  Check(view.ok() && *view == json);
  return 0;
}
