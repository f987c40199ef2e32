// File: tests/fuzz/fuzz_coefficient_set.cc
//
// libFuzzer target: the coefficient-set loader, validator and plan compiler,
// then scoring with the compiled plan.
//
// Input: set-file JSON, optionally followed by a NUL byte and bytes that
// choose one record (per feature: missing, a number or a level) and a dense
// row. Checked properties, besides "no crash, no sanitizer report":
//  - a set that validates compiles (ScoringPlan::Compile accepts what
//    ParseCoefficientSet accepts);
//  - its JSON form (CoefficientSetToJson) parses back to an equal message;
//  - every score of a valid plan, named or dense, is a probability in
//    [0, 1] (never NaN) and at most `top` reason codes.
#include <fuzzer/FuzzedDataProvider.h>

#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <string>
#include <vector>

#include "google/protobuf/stubs/logging.h"
#include "google/protobuf/util/message_differencer.h"
#include "scorer/coefficient_set.h"
#include "scorer/scoring_plan.h"

namespace {

using plumbline::scorer::FeatureKind;
using plumbline::scorer::RawValue;

void Check(bool condition) {
  if (!condition) __builtin_trap();
}

void ScoreOne(const plumbline::scorer::ScoringPlan& plan,
              FuzzedDataProvider& data) {
  const int n = plan.num_features();
  std::vector<RawValue> named(static_cast<size_t>(n), RawValue::Missing());
  std::vector<std::string> texts(static_cast<size_t>(n));
  Eigen::Matrix<double, 1, Eigen::Dynamic, Eigen::RowMajor> dense(1, n);
  std::vector<int> columns(static_cast<size_t>(n));
  for (int f = 0; f < n; ++f) {
    const size_t i = static_cast<size_t>(f);
    columns[i] = f;
    const int choice = data.ConsumeIntegralInRange<int>(0, 3);
    if (choice == 0) {  // missing
      columns[i] = -1;
      dense(0, f) = 0;
      continue;
    }
    const double x = data.ConsumeFloatingPoint<double>();
    if (plan.feature_kind(f) == FeatureKind::kCategorical) {
      const int levels = plan.set().features(f).categorical().levels_size();
      if (choice == 3) {  // a text the set may not know
        texts[i] = data.ConsumeRandomLengthString(16);
        named[i] = RawValue::Text(texts[i]);
        dense(0, f) = plan.LevelIndex(f, texts[i]);
        if (dense(0, f) < 0) dense(0, f) = x;
      } else {
        const int level = static_cast<int>(
            data.ConsumeIntegralInRange<uint32_t>(0, levels - 1));
        texts[i] = plan.set().features(f).categorical().levels(level).value();
        named[i] = RawValue::Text(texts[i]);
        dense(0, f) = level;
      }
    } else {
      named[i] = RawValue::Number(x);
      dense(0, f) = x;
    }
  }
  plumbline::scorer::ReasonOptions reasons;
  reasons.top = data.ConsumeIntegralInRange<int>(0, 5);
  reasons.order = static_cast<plumbline::scorer::ReasonOrder>(
      data.ConsumeIntegralInRange<int>(0, 2));
  absl::StatusOr<plumbline::scorer::ScoreResult> result =
      plan.Score(named, reasons);
  if (result.ok()) {
    Check(result->probability >= 0 && result->probability <= 1);
    Check(result->reasons.size() <= static_cast<size_t>(reasons.top));
  }
  plumbline::scorer::DenseOptions options;
  options.nan_is_missing = data.ConsumeBool();
  Eigen::VectorXd log_odds(1), probability(1);
  const absl::Status dense_status =
      plan.ScoreDense(dense, columns, options, log_odds, probability);
  if (dense_status.ok()) {
    Check(probability[0] >= 0 && probability[0] <= 1);
  }
}

}  // namespace

// protobuf logs every string that is not UTF-8 it meets while parsing;
// thousands of lines a second would only slow the fuzzer down.
extern "C" int LLVMFuzzerInitialize(int* /*argc*/, char*** /*argv*/) {
  google::protobuf::SetLogHandler(nullptr);
  return 0;
}

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* bytes, size_t size) {
  const std::string input(reinterpret_cast<const char*>(bytes), size);
  const size_t nul = input.find('\0');
  const std::string json = input.substr(0, nul);
  absl::StatusOr<plumbline::v1::CoefficientSet> set =
      plumbline::scorer::ParseCoefficientSet(json, "fuzz.json");
  if (!set.ok()) return 0;

  absl::StatusOr<std::string> written =
      plumbline::scorer::CoefficientSetToJson(*set);
  Check(written.ok());
  absl::StatusOr<plumbline::v1::CoefficientSet> again =
      plumbline::scorer::ParseCoefficientSet(*written, "written.json");
  Check(again.ok());
  Check(google::protobuf::util::MessageDifferencer::Equals(*set, *again));

  absl::StatusOr<std::shared_ptr<const plumbline::scorer::ScoringPlan>> plan =
      plumbline::scorer::ScoringPlan::Compile(*set, "fuzz.json");
  Check(plan.ok());
  if (nul == std::string::npos) return 0;
  FuzzedDataProvider data(bytes + nul + 1, size - nul - 1);
  while (data.remaining_bytes() > 0) ScoreOne(**plan, data);
  return 0;
}
