// File: monitor/window.h
//
// Windows of records for the daemon's model-health figures: the last N
// records (CountWindow) or the last T seconds (TimeWindow). Both are rings of
// K buckets, each bucket an accumulator (monitor/outcome_accumulators.h,
// monitor/stability_accumulators.h or anything with the same shape); the
// window's figures are the Merge() of its buckets, and old records leave a
// whole bucket at a time:
//
//  - CountWindow(N, K): buckets of c = N / K records. Once full, the window
//    holds between N - c + 1 and N records: when a record arrives and the
//    newest bucket is full, the oldest bucket (c records) is dropped.
//  - TimeWindow(T, K): buckets of d = T / K, aligned on multiples of d since
//    the Unix epoch. At time `now` the window holds the records stamped in
//    the K buckets ending with the one containing `now`: a span between
//    T - d and T wide. A record older than the ring is refused (OUT_OF_RANGE);
//    out-of-order records within the ring go to their own bucket.
//
// The clock is never read here: Add() and Merged() take absl::Time, so the
// daemon passes its clock and tests pass fixed times.
//
//   absl::StatusOr<OutcomeAccumulator> empty = OutcomeAccumulator::Create({});
//   auto window = CountWindow<OutcomeAccumulator>::Create(10000, 10, *empty);
//   window->Add(log_odds, label);                       // per outcome
//   absl::StatusOr<OutcomeFigures> f = window->Merged().Result();  // per tick
//
// Accumulator requirements: copyable; `Add(args...)` returning void or
// absl::Status (a non-OK record is not counted); `absl::Status
// Merge(const Accumulator&)`; `int64_t count()`. Memory: K + 1
// accumulators. Merged() costs K merges. Not thread-safe: the daemon guards
// each window with its own mutex.
//
// Saving and restoring (daemon/health/window_state.h): bucket(i), fill(i),
// current() and bucket_number(i) read the ring slot by slot; Restore() puts
// a saved ring into a window created with the same shape, after checking
// that the ring is one the window could have reached (INVALID_ARGUMENT
// naming the slot, window unchanged, otherwise).
#ifndef PLUMBLINE_MONITOR_WINDOW_H_
#define PLUMBLINE_MONITOR_WINDOW_H_

#include <cstdint>
#include <limits>
#include <optional>
#include <type_traits>
#include <utility>
#include <vector>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/str_format.h"
#include "absl/strings/string_view.h"
#include "absl/time/time.h"

namespace plumbline::monitor {
namespace internal {

// Adds a record to `acc`, whatever Add() returns.
template <typename Accumulator, typename... Args>
absl::Status AddTo(Accumulator& acc, Args&&... args) {
  if constexpr (std::is_void_v<decltype(acc.Add(
                    std::forward<Args>(args)...))>) {
    acc.Add(std::forward<Args>(args)...);
    return absl::OkStatus();
  } else {
    return acc.Add(std::forward<Args>(args)...);
  }
}

template <typename Accumulator, typename... Args>
constexpr bool kAddCanFail =
    !std::is_void_v<decltype(std::declval<Accumulator&>().Add(
        std::declval<Args>()...))>;

// Starts bucket `slot` afresh with one record. A fallible record is tried on
// a copy of `empty` first, so a refused record leaves the old bucket intact.
template <typename Accumulator, typename... Args>
absl::Status StartBucket(const Accumulator& empty, Accumulator& slot,
                         Args&&... args) {
  if constexpr (kAddCanFail<Accumulator, Args...>) {
    Accumulator fresh = empty;
    if (absl::Status s = fresh.Add(std::forward<Args>(args)...); !s.ok()) {
      return s;
    }
    slot = std::move(fresh);
  } else {
    slot = empty;
    slot.Add(std::forward<Args>(args)...);
  }
  return absl::OkStatus();
}

// Checks a saved ring's slot: its accumulator holds `fill` records.
template <typename Accumulator>
absl::Status CheckSlot(absl::string_view window, size_t slot,
                       const Accumulator& acc, int64_t fill) {
  if (fill < 0) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "%s state: slot %d holds %d records", window, slot, fill));
  }
  if (acc.count() != fill) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "%s state: slot %d's bucket holds %d records but its fill is %d",
        window, slot, acc.count(), fill));
  }
  return absl::OkStatus();
}

}  // namespace internal

template <typename Accumulator>
class CountWindow {
 public:
  // `empty` is the accumulator every bucket starts from. INVALID_ARGUMENT
  // unless records >= 1, buckets >= 1 and buckets divides records.
  static absl::StatusOr<CountWindow> Create(int64_t records, int buckets,
                                            Accumulator empty) {
    if (records < 1 || buckets < 1 || records % buckets != 0) {
      return absl::InvalidArgumentError(absl::StrFormat(
          "count window: %d records in %d buckets; need records >= 1, "
          "buckets >= 1 and buckets dividing records",
          records, buckets));
    }
    return CountWindow(records / buckets, buckets, std::move(empty));
  }

  // Adds one record (the accumulator's Add arguments). The accumulator's
  // error, if any, is returned and the record not counted.
  template <typename... Args>
  absl::Status Add(Args&&... args) {
    if (fill_[current_] < bucket_records_) {
      absl::Status s =
          internal::AddTo(buckets_[current_], std::forward<Args>(args)...);
      if (s.ok()) ++fill_[current_];
      return s;
    }
    const size_t next = (current_ + 1) % buckets_.size();
    absl::Status s = internal::StartBucket(empty_, buckets_[next],
                                           std::forward<Args>(args)...);
    if (!s.ok()) return s;
    fill_[next] = 1;
    current_ = next;
    return absl::OkStatus();
  }

  // The merge of all buckets.
  Accumulator Merged() const {
    Accumulator total = empty_;
    for (size_t b = 0; b < buckets_.size(); ++b) {
      if (fill_[b] > 0) total.Merge(buckets_[b]).IgnoreError();  // same shape
    }
    return total;
  }

  // Records in the window now.
  int64_t size() const {
    int64_t n = 0;
    for (int64_t f : fill_) n += f;
    return n;
  }
  int64_t bucket_records() const { return bucket_records_; }

  // The ring, slot by slot (0 <= slot < buckets()): each bucket, the records
  // in it and the slot receiving records now.
  int buckets() const { return static_cast<int>(buckets_.size()); }
  const Accumulator& bucket(int slot) const { return buckets_[slot]; }
  int64_t fill(int slot) const { return fill_[slot]; }
  int current() const { return static_cast<int>(current_); }
  const Accumulator& empty() const { return empty_; }

  // Replaces the ring with a saved one: `buckets` and `fill` one entry per
  // slot (a slot with fill 0 is reset to the empty accumulator, whatever
  // its entry). INVALID_ARGUMENT, window unchanged, unless the sizes match,
  // 0 <= current < buckets(), every bucket holds its fill, and the fills
  // are those of a ring filled in order: slots before `current` full,
  // `current` partly filled (empty only when the window is), slots after it
  // all empty (first lap) or all full.
  absl::Status Restore(std::vector<Accumulator> buckets,
                       std::vector<int64_t> fill, int current) {
    const size_t k = buckets_.size();
    if (buckets.size() != k || fill.size() != k) {
      return absl::InvalidArgumentError(absl::StrFormat(
          "count window state: %d buckets and %d fills; the window has %d",
          buckets.size(), fill.size(), k));
    }
    if (current < 0 || static_cast<size_t>(current) >= k) {
      return absl::InvalidArgumentError(absl::StrFormat(
          "count window state: current slot %d is outside [0, %d)", current,
          k));
    }
    const size_t now = static_cast<size_t>(current);
    const bool wrapped = now + 1 < k && fill[now + 1] != 0;
    for (size_t b = 0; b < k; ++b) {
      int64_t lo = bucket_records_, hi = bucket_records_;
      if (b == now) {
        lo = (now == 0 && !wrapped) ? 0 : 1;
      } else if (b > now && !wrapped) {
        lo = hi = 0;
      }
      if (fill[b] < lo || fill[b] > hi) {
        return absl::InvalidArgumentError(absl::StrFormat(
            "count window state: slot %d holds %d records; with current "
            "slot %d it must hold between %d and %d",
            b, fill[b], current, lo, hi));
      }
      if (fill[b] == 0) {
        buckets[b] = empty_;
      } else if (absl::Status s = internal::CheckSlot("count window", b,
                                                      buckets[b], fill[b]);
                 !s.ok()) {
        return s;
      }
    }
    buckets_ = std::move(buckets);
    fill_ = std::move(fill);
    current_ = now;
    return absl::OkStatus();
  }

 private:
  CountWindow(int64_t bucket_records, int buckets, Accumulator empty)
      : empty_(std::move(empty)),
        buckets_(buckets, empty_),
        fill_(buckets, 0),
        bucket_records_(bucket_records) {}

  Accumulator empty_;
  std::vector<Accumulator> buckets_;
  std::vector<int64_t> fill_;
  size_t current_ = 0;
  int64_t bucket_records_;
};

template <typename Accumulator>
class TimeWindow {
 public:
  // INVALID_ARGUMENT unless span > 0, buckets >= 1 and span / buckets > 0.
  static absl::StatusOr<TimeWindow> Create(absl::Duration span, int buckets,
                                           Accumulator empty) {
    if (buckets < 1 || span <= absl::ZeroDuration() ||
        span == absl::InfiniteDuration() ||
        span / buckets <= absl::ZeroDuration()) {
      return absl::InvalidArgumentError(absl::StrFormat(
          "time window: span %s in %d buckets; need a finite span > 0 and "
          "buckets >= 1",
          absl::FormatDuration(span), buckets));
    }
    return TimeWindow(span / buckets, buckets, std::move(empty));
  }

  // Adds one record stamped `at`. OUT_OF_RANGE (not counted) if `at` is
  // older than the oldest bucket of the ring; INVALID_ARGUMENT if infinite.
  template <typename... Args>
  absl::Status Add(absl::Time at, Args&&... args) {
    if (at == absl::InfiniteFuture() || at == absl::InfinitePast()) {
      return absl::InvalidArgumentError("time window: record time is infinite");
    }
    const int64_t bucket = BucketOf(at);
    const int64_t k = static_cast<int64_t>(buckets_.size());
    if (newest_ && bucket <= *newest_ - k) {
      return absl::OutOfRangeError(absl::StrFormat(
          "time window: record at %s is older than the window, whose oldest "
          "bucket starts at %s",
          absl::FormatTime(at), absl::FormatTime(StartOf(*newest_ - k + 1))));
    }
    const size_t slot = static_cast<size_t>(((bucket % k) + k) % k);
    if (index_[slot] == bucket) {
      absl::Status s =
          internal::AddTo(buckets_[slot], std::forward<Args>(args)...);
      if (s.ok()) ++fill_[slot];
      return s;
    }
    absl::Status s = internal::StartBucket(empty_, buckets_[slot],
                                           std::forward<Args>(args)...);
    if (!s.ok()) return s;
    index_[slot] = bucket;
    fill_[slot] = 1;
    if (!newest_ || bucket > *newest_) newest_ = bucket;
    return absl::OkStatus();
  }

  // The merge of the K buckets ending with the one that contains `now`.
  Accumulator Merged(absl::Time now) const {
    Accumulator total = empty_;
    const int64_t last = BucketOf(now);
    for (size_t s = 0; s < buckets_.size(); ++s) {
      if (InWindow(s, last)) total.Merge(buckets_[s]).IgnoreError();
    }
    return total;
  }

  // Records in the window at `now`.
  int64_t size(absl::Time now) const {
    const int64_t last = BucketOf(now);
    int64_t n = 0;
    for (size_t s = 0; s < buckets_.size(); ++s) {
      if (InWindow(s, last)) n += fill_[s];
    }
    return n;
  }
  absl::Duration bucket_span() const { return bucket_span_; }

  // The ring, slot by slot (0 <= slot < buckets()): each bucket, the
  // records in it and the number of the bucket it holds,
  // floor((t - epoch) / bucket_span()); nullopt for a slot never used.
  int buckets() const { return static_cast<int>(buckets_.size()); }
  const Accumulator& bucket(int slot) const { return buckets_[slot]; }
  int64_t fill(int slot) const { return fill_[slot]; }
  std::optional<int64_t> bucket_number(int slot) const {
    if (index_[slot] == kNoBucket) return std::nullopt;
    return index_[slot];
  }
  const Accumulator& empty() const { return empty_; }

  // Replaces the ring with a saved one, one entry per slot. A slot without
  // a bucket number is reset to the empty accumulator. INVALID_ARGUMENT,
  // window unchanged, unless the sizes match, a slot has a bucket number
  // exactly when its fill is > 0, each bucket number n sits in slot
  // n mod buckets() and lies in [-2^53, 2^53], and every bucket holds its
  // fill.
  absl::Status Restore(std::vector<Accumulator> buckets,
                       std::vector<int64_t> fill,
                       std::vector<std::optional<int64_t>> numbers) {
    const size_t k = buckets_.size();
    if (buckets.size() != k || fill.size() != k || numbers.size() != k) {
      return absl::InvalidArgumentError(absl::StrFormat(
          "time window state: %d buckets, %d fills and %d bucket numbers; "
          "the window has %d",
          buckets.size(), fill.size(), numbers.size(), k));
    }
    constexpr int64_t kMaxNumber = int64_t{1} << 53;
    const int64_t kk = static_cast<int64_t>(k);
    std::vector<int64_t> index(k, kNoBucket);
    std::optional<int64_t> newest;
    for (size_t s = 0; s < k; ++s) {
      if (numbers[s].has_value() != (fill[s] > 0)) {
        return absl::InvalidArgumentError(absl::StrFormat(
            "time window state: slot %d holds %d records and %s bucket "
            "number; a slot has one exactly when it holds records",
            s, fill[s], numbers[s] ? "a" : "no"));
      }
      if (!numbers[s]) {
        buckets[s] = empty_;
        continue;
      }
      const int64_t n = *numbers[s];
      if (n < -kMaxNumber || n > kMaxNumber ||
          static_cast<size_t>(((n % kk) + kk) % kk) != s) {
        return absl::InvalidArgumentError(absl::StrFormat(
            "time window state: slot %d holds bucket number %d, which "
            "belongs in slot %d (or is out of range)",
            s, n, ((n % kk) + kk) % kk));
      }
      if (absl::Status st =
              internal::CheckSlot("time window", s, buckets[s], fill[s]);
          !st.ok()) {
        return st;
      }
      index[s] = n;
      if (!newest || n > *newest) newest = n;
    }
    buckets_ = std::move(buckets);
    fill_ = std::move(fill);
    index_ = std::move(index);
    newest_ = newest;
    return absl::OkStatus();
  }

 private:
  TimeWindow(absl::Duration bucket_span, int buckets, Accumulator empty)
      : empty_(std::move(empty)),
        buckets_(buckets, empty_),
        index_(buckets, kNoBucket),
        fill_(buckets, 0),
        bucket_span_(bucket_span) {}

  static constexpr int64_t kNoBucket = std::numeric_limits<int64_t>::min();

  // floor((at - epoch) / bucket_span).
  int64_t BucketOf(absl::Time at) const {
    absl::Duration rem;
    int64_t q = absl::IDivDuration(at - absl::UnixEpoch(), bucket_span_, &rem);
    if (rem < absl::ZeroDuration()) --q;
    return q;
  }
  absl::Time StartOf(int64_t bucket) const {
    return absl::UnixEpoch() + bucket * bucket_span_;
  }
  bool InWindow(size_t slot, int64_t last) const {
    const int64_t k = static_cast<int64_t>(buckets_.size());
    return index_[slot] != kNoBucket && index_[slot] <= last &&
           index_[slot] > last - k;
  }

  Accumulator empty_;
  std::vector<Accumulator> buckets_;
  std::vector<int64_t> index_;  // bucket number held by each slot
  std::vector<int64_t> fill_;
  absl::Duration bucket_span_;
  std::optional<int64_t> newest_;
};

}  // namespace plumbline::monitor

#endif  // PLUMBLINE_MONITOR_WINDOW_H_
