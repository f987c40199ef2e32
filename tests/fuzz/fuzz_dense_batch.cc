// File: tests/fuzz/fuzz_dense_batch.cc
//
// libFuzzer target: a ScoreBatch request as it arrives on the wire
// (protobuf bytes), named records or the dense form (column names, rows of
// doubles, level indices, nan_is_missing), scored all-or-nothing against
// the fuzz plan with reason codes.
//
// Checked properties, besides "no crash, no sanitizer report": an accepted
// batch has one score per record, each with a probability in [0, 1], and
// the inputs kept for the ledger cover every record.
#include <cstdint>

#include "daemon/scoring/core.h"
#include "google/protobuf/stubs/logging.h"
#include "plumbline/v1/scoring.pb.h"
#include "tests/fuzz/fuzz_plan.h"

namespace {

void Check(bool condition) {
  if (!condition) __builtin_trap();
}

}  // namespace

// protobuf logs every string that is not UTF-8 it meets while parsing;
// thousands of lines a second would only slow the fuzzer down.
extern "C" int LLVMFuzzerInitialize(int* /*argc*/, char*** /*argv*/) {
  google::protobuf::SetLogHandler(nullptr);
  return 0;
}

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* bytes, size_t size) {
  plumbline::v1::ScoreBatchRequest request;
  if (!request.ParseFromArray(bytes, static_cast<int>(size))) return 0;
  const plumbline::scorer::ScoringPlan& plan = plumbline::fuzz::FuzzPlan();
  plumbline::daemon::ScoringLimits limits;
  limits.max_batch_records = 1000;
  limits.max_reasons = 5;
  plumbline::daemon::RecordInputs inputs;
  absl::StatusOr<plumbline::v1::ScoreBatchReply> reply =
      plumbline::daemon::ScoreBatchWithPlan(plan, request, limits, &inputs);
  if (!reply.ok()) return 0;
  const int records = request.records_size() + request.dense().rows_size();
  Check(reply->scores_size() == records);
  Check(inputs.values.size() == static_cast<size_t>(records) *
                                    static_cast<size_t>(plan.num_features()));
  for (const plumbline::v1::Scored& scored : reply->scores()) {
    Check(scored.probability() >= 0 && scored.probability() <= 1);
    Check(scored.reasons_size() <= 5);
  }
  return 0;
}
