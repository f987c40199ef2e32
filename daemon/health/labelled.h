// File: daemon/health/labelled.h
//
// What one bucket of a set version's outcome windows keeps of its labelled
// records: the streaming figures (monitor::OutcomeAccumulator: log-loss,
// Brier score, mean predicted minus observed, the reliability table and
// ECE; O(bins) memory) and a bounded store of the records themselves
// (monitor::LabelledRecordStore) for the figures that need every record to
// be exact: AUC (Mann–Whitney, ties 1/2), the Hosmer–Lemeshow test over
// deciles of risk, the calibration intercept with the slope fixed at 1 and
// the calibration slope of the joint fit. HealthWindows holds a CountWindow
// and a TimeWindow of LabelledAccumulator (monitor/window.h).
//
//   absl::StatusOr<LabelledAccumulator> empty =
//       LabelledAccumulator::Create(/*store_capacity=*/250);
//   empty->Add(log_odds, label);                 // per labelled record
//   FillOutcome(window.Merged(), &window_health);  // per tick
//
// The store's capacity is per bucket. Past it a record still counts in the
// streaming figures but not in the exact ones; FillOutcome then reports the
// exact figures over the records kept (the earliest of each full bucket)
// with a note saying so, and WindowHealth.unstored_labelled counts the rest.
//
// Not thread-safe; a value type (the window's mutex guards it).
#ifndef PLUMBLINE_DAEMON_HEALTH_LABELLED_H_
#define PLUMBLINE_DAEMON_HEALTH_LABELLED_H_

#include <cstdint>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "monitor/labelled_record_store.h"
#include "monitor/outcome_accumulators.h"
#include "plumbline/v1/monitor.pb.h"

namespace plumbline::daemon {

class LabelledAccumulator {
 public:
  // INVALID_ARGUMENT unless 1 <= store_capacity <=
  // monitor::LabelledRecordStore::kMaxCapacity.
  static absl::StatusOr<LabelledAccumulator> Create(int64_t store_capacity);

  // INVALID_ARGUMENT (not counted) for a label other than 0/1 or a
  // non-finite log-odds. A full store is not an error: the record is
  // counted in the streaming figures and in the store's refused count.
  absl::Status Add(double log_odds, int label);
  // Always OK for accumulators of one window.
  absl::Status Merge(const LabelledAccumulator& other);

  int64_t count() const { return streaming_.count(); }
  const monitor::OutcomeAccumulator& streaming() const { return streaming_; }
  const monitor::LabelledRecordStore& store() const { return store_; }

  // Puts saved state back (daemon/health/window_state.h) into an
  // accumulator created with the same store capacity. INVALID_ARGUMENT
  // naming the field, accumulator unchanged, when a part refuses or the
  // store's records plus its refused count differ from the streaming count
  // (every valid record goes to both).
  absl::Status Restore(monitor::OutcomeAccumulator::State streaming,
                       monitor::LabelledRecordStore::State store);

 private:
  LabelledAccumulator(monitor::OutcomeAccumulator streaming,
                      monitor::LabelledRecordStore store)
      : streaming_(std::move(streaming)), store_(std::move(store)) {}

  monitor::OutcomeAccumulator streaming_;
  monitor::LabelledRecordStore store_;
};

// Sets out's labelled, positives and outcome figures from a window's merged
// accumulator.
void FillOutcome(const LabelledAccumulator& acc, v1::WindowHealth* out);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_HEALTH_LABELLED_H_
