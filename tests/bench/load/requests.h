// File: tests/bench/load/requests.h
//
// What the gRPC load generator sends: the coefficient sets it writes for
// plumbd to load (the courier test set with every transform, and wide
// all-numeric parcel sets with synthetic coefficients), requests built from
// a set's schema as ListSets reports it, and fresh record ids per call so
// every score is a new ledger row (a repeated id would be a retry, which
// writes nothing).
//
//   ASSIGN_OR_RETURN(v1::SetSummary schema, FetchSchema(stub,
//   "courier_mixed")); v1::ScoreBatchRequest dense = DenseBatch(schema,
//   "courier_mixed", 1000); RecordIds ids("run7-dense"); BatchFiller fill =
//   FreshBatchIds(&ids);
//
// Thread-safety: free functions are thread-safe; a RecordIds (and the
// fillers that borrow it) is used by one thread at a time.
#ifndef PLUMBLINE_TESTS_BENCH_LOAD_REQUESTS_H_
#define PLUMBLINE_TESTS_BENCH_LOAD_REQUESTS_H_

#include <cstdint>
#include <string>
#include <utility>
#include <vector>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "plumbline/v1/scoring.grpc.pb.h"
#include "tests/bench/load/driver.h"

namespace plumbline::bench {

// The set every transform goes through (tests/testing/test_sets.h).
inline constexpr char kMixedSet[] = "courier_mixed";

// "parcel_wide_<features>".
std::string WideSetName(int features);

// Set-file JSON of an all-numeric set of `features` features named
// route_signal_000, ... with small synthetic coefficients (a fixed pattern,
// no randomness), centre 0, scale 1.
std::string WideSetJson(int features);

// Writes courier_mixed.json and parcel_wide_<N>.json for each N of `widths`
// into `dir` (created if needed).
absl::Status WriteBenchSets(const std::string& dir,
                            const std::vector<int>& widths);

// The schema of `set` from Scoring.ListSets; NOT_FOUND if plumbd has no such
// set loaded.
absl::StatusOr<v1::SetSummary> FetchSchema(v1::Scoring::Stub* stub,
                                           absl::string_view set);

// Requests addressed to `target` (the schema's set, or an unknown name for
// the floor) carrying values for every feature of `schema`: numbers vary
// across records, categorical features cycle through their levels (by name
// in named records, by level index in dense rows). Record ids are left
// empty; a filler sets them per call.
v1::ScoreRequest UnaryRequest(const v1::SetSummary& schema,
                              absl::string_view target);
v1::ScoreBatchRequest NamedBatch(const v1::SetSummary& schema,
                                 absl::string_view target, int records);
v1::ScoreBatchRequest DenseBatch(const v1::SetSummary& schema,
                                 absl::string_view target, int records);

// Record ids "<prefix>-<n>", n counting from 0.
class RecordIds {
 public:
  explicit RecordIds(std::string prefix) : prefix_(std::move(prefix)) {}
  void Next(std::string* id);

 private:
  std::string prefix_;
  int64_t next_ = 0;
};

// Fillers giving every record of the next call a fresh id from `ids`, which
// must outlive them.
ScoreFiller FreshScoreIds(RecordIds* ids);
BatchFiller FreshBatchIds(RecordIds* ids);

}  // namespace plumbline::bench

#endif  // PLUMBLINE_TESTS_BENCH_LOAD_REQUESTS_H_
