// File: tests/bench/load/driver.h
//
// The engine of the gRPC load generator (tests/bench/grpc_load.cc): keeps
// calls in flight against a plumbd and times every reply.
//
//   std::unique_ptr<CallSource> calls = MakeBatchCalls(stub, request, fill);
//   LoadResult r = RunClosedLoop(calls.get(), /*callers=*/4,
//                                absl::Seconds(2));
//
// Why the async API (one CompletionQueue) and not a thread per caller with
// sync stubs: the bench runs on a 2-core machine that plumbd shares with
// its callers. Sixteen blocking caller threads would cost the generator
// sixteen stacks and a context switch per reply, taken from plumbd's two
// cores; one thread that keeps N calls in flight is N closed-loop callers
// (each starts its next call the moment its reply arrives) for a fraction
// of the CPU. The open loop needs the async API anyway: calls must leave at
// their scheduled times whether or not earlier replies came back, and their
// latency is measured from the scheduled time, so a stalled server shows as
// latency and not as a quietly lower offered rate.
//
// Thread-safety: a CallSource is used by one thread at a time (the driver
// guarantees it). RunClosedLoop runs on the calling thread; RunOpenLoop adds
// one pacing thread for the duration of the call.
#ifndef PLUMBLINE_TESTS_BENCH_LOAD_DRIVER_H_
#define PLUMBLINE_TESTS_BENCH_LOAD_DRIVER_H_

#include <grpcpp/grpcpp.h>

#include <cstdint>
#include <functional>
#include <map>
#include <memory>
#include <vector>

#include "absl/time/time.h"
#include "plumbline/v1/scoring.grpc.pb.h"

namespace plumbline::bench {

// One call in flight: the queue's tag, deleted by the driver on reply.
class PendingCall {
 public:
  virtual ~PendingCall() = default;

  grpc::ClientContext context;
  grpc::Status status;
  absl::Time start;  // scheduled (open loop) or actual (closed loop) start
  int records = 0;   // records the request carried
};

// Starts calls of one request shape. Not thread-safe: one thread at a time.
class CallSource {
 public:
  virtual ~CallSource() = default;
  // Starts one call whose completion is queued on `cq`; its tag is the
  // PendingCall, owned from then on by whoever takes it off the queue.
  // `start` is the time its latency counts from. The request is serialized
  // before this returns, so the source may change it for the next call.
  virtual void Start(grpc::CompletionQueue* cq, absl::Time start) = 0;
};

// Fills the next request in place (fresh record ids); called once per call.
using ScoreFiller = std::function<void(v1::ScoreRequest*)>;
using BatchFiller = std::function<void(v1::ScoreBatchRequest*)>;

// Unary Score calls. `stub` must outlive the source.
std::unique_ptr<CallSource> MakeScoreCalls(v1::Scoring::Stub* stub,
                                           v1::ScoreRequest request,
                                           ScoreFiller fill);
// ScoreBatch calls (named records or dense rows, as `request` has them).
std::unique_ptr<CallSource> MakeBatchCalls(v1::Scoring::Stub* stub,
                                           v1::ScoreBatchRequest request,
                                           BatchFiller fill);

// What one phase of load saw.
struct LoadResult {
  absl::Duration elapsed;  // first start to last reply
  int64_t calls = 0;       // replies received, whatever their code
  int64_t ok_calls = 0;
  int64_t records = 0;     // records in the calls replied to
  int64_t ok_records = 0;  // records in OK replies
  // Open loop only: calls not started because max_in_flight were
  // outstanding (the server fell that far behind); never hidden.
  int64_t not_sent = 0;
  std::map<grpc::StatusCode, int64_t> codes;  // every reply's code
  std::vector<double> latency_us;             // every reply, sorted
  double Percentile(double q) const;          // of latency_us; 0 if empty
};

// Closed loop: `callers` calls in flight, each replaced by the next as soon
// as its reply arrives, until `duration` has passed; then waits for the
// last replies.
LoadResult RunClosedLoop(CallSource* source, int callers,
                         absl::Duration duration);

// Open loop: starts calls at `rate` per second, evenly spaced, for
// `duration`; latency counts from each call's scheduled time. At most
// `max_in_flight` calls are outstanding; a call due beyond that is counted
// in not_sent.
LoadResult RunOpenLoop(CallSource* source, double rate, absl::Duration duration,
                       int max_in_flight = 20000);

// Every call gets this deadline, so a stuck server ends a phase with
// DEADLINE_EXCEEDED counts instead of hanging the bench.
inline constexpr absl::Duration kCallDeadline = absl::Seconds(30);

}  // namespace plumbline::bench

#endif  // PLUMBLINE_TESTS_BENCH_LOAD_DRIVER_H_
