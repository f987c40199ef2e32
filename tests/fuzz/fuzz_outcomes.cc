// File: tests/fuzz/fuzz_outcomes.cc
//
// libFuzzer target: outcomes as they arrive, a ReportOutcomes request in
// protobuf bytes, through the per-outcome checks of the Outcomes service
// (record id, label 0/1, observed_at within what a Timestamp may hold);
// and the text parsers of plumbctl's outcomes CSV (labels, observed_at in
// RFC 3339 or unix seconds) on every string of the request.
//
// Checked properties, besides "no crash, no sanitizer report": an accepted
// outcome has a non-empty id and a label of 0 or 1; a parsed label is 0 or
// 1.
#include <cstdint>
#include <string>

#include "daemon/csv/outcomes.h"
#include "daemon/services/outcomes.h"
#include "google/protobuf/stubs/logging.h"
#include "plumbline/v1/outcomes.pb.h"

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
  plumbline::v1::ReportOutcomesRequest request;
  if (!request.ParseFromArray(bytes, static_cast<int>(size))) return 0;
  for (int i = 0; i < request.outcomes_size(); ++i) {
    const plumbline::v1::Outcome& outcome = request.outcomes(i);
    absl::StatusOr<plumbline::daemon::OutcomeEntry> entry =
        plumbline::daemon::CheckOutcome(outcome, "outcomes[i]");
    if (entry.ok()) {
      Check(!entry->record_id.empty());
      Check(entry->label == 0 || entry->label == 1);
    }
    // The CSV side reads the same kind of text.
    absl::StatusOr<int> label =
        plumbline::daemon::ParseLabel(outcome.record_id());
    if (label.ok()) Check(*label == 0 || *label == 1);
    plumbline::daemon::ParseObservedAt(outcome.record_id()).IgnoreError();
  }
  return 0;
}
