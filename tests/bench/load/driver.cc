// File: tests/bench/load/driver.cc
#include "tests/bench/load/driver.h"

#include <algorithm>
#include <atomic>
#include <cmath>
#include <thread>
#include <utility>

namespace plumbline::bench {
namespace {

template <typename Reply>
class TypedCall final : public PendingCall {
 public:
  Reply reply;
  std::unique_ptr<grpc::ClientAsyncResponseReader<Reply>> reader;
};

// Arms `call` (its reader already started) and hands it to the queue: from
// here the queue's tag owns it and the driver deletes it on reply.
template <typename Reply>
void Arm(std::unique_ptr<TypedCall<Reply>> call) {
  TypedCall<Reply>* raw = call.release();
  raw->reader->StartCall();
  raw->reader->Finish(&raw->reply, &raw->status, raw);
}

void Prepare(PendingCall* call, absl::Time start, int records) {
  call->start = start;
  call->records = records;
  call->context.set_deadline(absl::ToChronoTime(absl::Now() + kCallDeadline));
}

class ScoreCalls final : public CallSource {
 public:
  ScoreCalls(v1::Scoring::Stub* stub, v1::ScoreRequest request,
             ScoreFiller fill)
      : stub_(stub), request_(std::move(request)), fill_(std::move(fill)) {}

  void Start(grpc::CompletionQueue* cq, absl::Time start) override {
    if (fill_) fill_(&request_);
    auto call = std::make_unique<TypedCall<v1::ScoreReply>>();
    Prepare(call.get(), start, 1);
    call->reader = stub_->PrepareAsyncScore(&call->context, request_, cq);
    Arm(std::move(call));
  }

 private:
  v1::Scoring::Stub* const stub_;
  v1::ScoreRequest request_;
  ScoreFiller fill_;
};

class BatchCalls final : public CallSource {
 public:
  BatchCalls(v1::Scoring::Stub* stub, v1::ScoreBatchRequest request,
             BatchFiller fill)
      : stub_(stub),
        request_(std::move(request)),
        fill_(std::move(fill)),
        records_(request_.records_size() + request_.dense().rows_size()) {}

  void Start(grpc::CompletionQueue* cq, absl::Time start) override {
    if (fill_) fill_(&request_);
    auto call = std::make_unique<TypedCall<v1::ScoreBatchReply>>();
    Prepare(call.get(), start, records_);
    call->reader = stub_->PrepareAsyncScoreBatch(&call->context, request_, cq);
    Arm(std::move(call));
  }

 private:
  v1::Scoring::Stub* const stub_;
  v1::ScoreBatchRequest request_;
  BatchFiller fill_;
  const int records_;
};

// Takes ownership of a finished call and adds it to `result`.
void Count(void* tag, absl::Time now, LoadResult* result) {
  std::unique_ptr<PendingCall> call(static_cast<PendingCall*>(tag));
  ++result->calls;
  result->records += call->records;
  ++result->codes[call->status.error_code()];
  if (call->status.ok()) {
    ++result->ok_calls;
    result->ok_records += call->records;
  }
  result->latency_us.push_back(absl::ToDoubleMicroseconds(now - call->start));
}

void Finish(absl::Time first, absl::Time last, LoadResult* result) {
  result->elapsed = last - first;
  std::sort(result->latency_us.begin(), result->latency_us.end());
}

void Drain(grpc::CompletionQueue* cq) {
  cq->Shutdown();
  void* tag = nullptr;
  bool ok = false;
  while (cq->Next(&tag, &ok)) {
    delete static_cast<PendingCall*>(tag);
  }
}

}  // namespace

std::unique_ptr<CallSource> MakeScoreCalls(v1::Scoring::Stub* stub,
                                           v1::ScoreRequest request,
                                           ScoreFiller fill) {
  return std::make_unique<ScoreCalls>(stub, std::move(request),
                                      std::move(fill));
}

std::unique_ptr<CallSource> MakeBatchCalls(v1::Scoring::Stub* stub,
                                           v1::ScoreBatchRequest request,
                                           BatchFiller fill) {
  return std::make_unique<BatchCalls>(stub, std::move(request),
                                      std::move(fill));
}

double LoadResult::Percentile(double q) const {
  if (latency_us.empty()) return 0;
  const size_t at =
      std::min(latency_us.size() - 1,
               static_cast<size_t>(
                   std::ceil(q * static_cast<double>(latency_us.size())) - 1));
  return latency_us[at];
}

LoadResult RunClosedLoop(CallSource* source, int callers,
                         absl::Duration duration) {
  LoadResult result;
  grpc::CompletionQueue cq;
  const absl::Time first = absl::Now();
  const absl::Time end = first + duration;
  int in_flight = 0;
  for (int i = 0; i < callers; ++i, ++in_flight) source->Start(&cq, first);
  absl::Time last = first;
  void* tag = nullptr;
  bool ok = false;
  while (in_flight > 0 && cq.Next(&tag, &ok)) {
    last = absl::Now();
    --in_flight;
    Count(tag, last, &result);
    if (last < end) {
      source->Start(&cq, absl::Now());
      ++in_flight;
    }
  }
  Drain(&cq);
  Finish(first, last, &result);
  return result;
}

LoadResult RunOpenLoop(CallSource* source, double rate, absl::Duration duration,
                       int max_in_flight) {
  LoadResult result;
  grpc::CompletionQueue cq;
  std::atomic<int> in_flight{0};
  std::atomic<bool> pacing{true};
  int64_t not_sent = 0;
  const absl::Time first = absl::Now();
  const absl::Duration gap = absl::Seconds(1) / rate;
  // The pacer is the only thread that touches `source`.
  std::thread pacer([&] {
    for (int64_t i = 0;; ++i) {
      const absl::Time due = first + gap * i;
      if (due - first >= duration) break;
      const absl::Duration wait = due - absl::Now();
      if (wait > absl::ZeroDuration()) absl::SleepFor(wait);
      if (in_flight.load() >= max_in_flight) {
        ++not_sent;
        continue;
      }
      in_flight.fetch_add(1);
      source->Start(&cq, due);
    }
    pacing.store(false);
  });
  absl::Time last = first;
  void* tag = nullptr;
  bool ok = false;
  while (pacing.load() || in_flight.load() > 0) {
    const auto deadline =
        absl::ToChronoTime(absl::Now() + absl::Milliseconds(20));
    if (cq.AsyncNext(&tag, &ok, deadline) != grpc::CompletionQueue::GOT_EVENT) {
      continue;
    }
    last = absl::Now();
    Count(tag, last, &result);
    in_flight.fetch_sub(1);
  }
  pacer.join();
  result.not_sent = not_sent;
  Drain(&cq);
  Finish(first, last, &result);
  return result;
}

}  // namespace plumbline::bench
