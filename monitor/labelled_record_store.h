// File: monitor/labelled_record_store.h
//
// The exact path for the outcome figures that need every record of a
// window: a bounded store of (log-odds, label) pairs from which Result()
// computes, with no quantisation,
//   - the AUC: the Mann–Whitney statistic, tied scores counting 1/2
//     (monitor/auc.h), equal to scikit-learn's roc_auc_score;
//   - the Hosmer–Lemeshow test over deciles of risk (g groups of sorted
//     predicted probability, g - 2 degrees of freedom; tie rule in
//     monitor/hosmer_lemeshow.h);
//   - the calibration intercept with the slope fixed at 1 (log-odds as an
//     offset: the "calibration-in-the-large" intercept) and the calibration
//     slope of the joint fit (monitor/calibration_fit.h).
// The streaming ScoreGridAccumulator (monitor/score_grid.h) keeps O(cells)
// memory and approximates these on a log-odds grid; this store is exact and
// costs memory per record. The daemon keeps both and reports the exact
// figure when the store holds the whole window.
//
// Window model (monitor/window.h): the store is an accumulator of the same
// shape, one per window bucket. Capacity is per store and is set by the
// caller:
//   - CountWindow(N, K): give every bucket capacity N / K (the bucket's
//     record count); a bucket can then never overflow and the window's
//     Merged() store holds exactly the window's records.
//   - TimeWindow(T, K): give every bucket the most records a bucket of T / K
//     may hold at the planned peak rate. Past it a bucket refuses records.
// Merge() appends the other store's records and adds its capacity and its
// refused count, so the merged store of a window has capacity K + 1 times
// the bucket capacity (the window's empty starting store included) and
// never refuses in a merge.
//
// Past capacity: Add() returns RESOURCE_EXHAUSTED and counts the record in
// refused(); the record is not kept, and Result() reports `refused`, so the
// figures are then over the records kept (the earliest of each full
// bucket), not the whole window. The caller decides whether to report them
// or fall back to the grid figures; nothing is dropped silently.
//
// Memory: 9 bytes per kept record (a double and a byte), plus the
// std::vector growth slack (up to 2x); storage grows with the records, it
// is not reserved up front. kMaxCapacity = 100,000,000 records (about
// 0.9-1.8 GB) bounds a single store. Result() copies and sorts: O(n log n)
// time and O(n) extra memory.
//
//   absl::StatusOr<LabelledRecordStore> empty =
//       LabelledRecordStore::Create(/*capacity=*/1000);
//   auto window = CountWindow<LabelledRecordStore>::Create(10000, 10, *empty);
//   absl::Status s = window->Add(log_odds, label);                  // per
//   outcome absl::StatusOr<ExactOutcomeFigures> f = window->Merged().Result();
//   // per tick
//
// Not thread-safe; a value type that copies (copies hold all records).
#ifndef PLUMBLINE_MONITOR_LABELLED_RECORD_STORE_H_
#define PLUMBLINE_MONITOR_LABELLED_RECORD_STORE_H_

#include <cstdint>
#include <vector>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "monitor/calibration_fit.h"
#include "monitor/hosmer_lemeshow.h"

namespace plumbline::monitor {

struct ExactOutcomeFigures {
  int64_t count = 0;      // records the figures are computed over
  int64_t positives = 0;  // of which label 1
  int64_t refused = 0;    // records refused for capacity (0: exact window)
  // FAILED_PRECONDITION when undefined (one class only, too few groups...).
  absl::StatusOr<double> auc;
  absl::StatusOr<HosmerLemeshowResult> hosmer_lemeshow;  // deciles of risk
  // Slope fixed at 1: the calibration-in-the-large intercept.
  absl::StatusOr<CalibrationInterceptFit> calibration_intercept;
  // The joint intercept + slope fit; report its `slope` as the calibration
  // slope (its intercept is not the calibration-in-the-large intercept).
  absl::StatusOr<CalibrationFit> calibration_slope;
};

class LabelledRecordStore {
 public:
  static constexpr int64_t kMaxCapacity = 100'000'000;

  // INVALID_ARGUMENT unless 1 <= capacity <= kMaxCapacity.
  static absl::StatusOr<LabelledRecordStore> Create(int64_t capacity);

  // INVALID_ARGUMENT (not counted anywhere) for a label other than 0/1 or a
  // non-finite log-odds; RESOURCE_EXHAUSTED (counted in refused()) when the
  // store already holds `capacity` records.
  absl::Status Add(double log_odds, int label);
  // Appends `other`'s records; capacities and refused counts add. Always OK
  // (INVALID_ARGUMENT only if the sum would pass kMaxCapacity).
  absl::Status Merge(const LabelledRecordStore& other);

  int64_t size() const { return static_cast<int64_t>(labels_.size()); }
  int64_t capacity() const { return capacity_; }
  int64_t refused() const { return refused_; }

  // The records kept, in the order they came (for saving the store).
  const std::vector<double>& log_odds() const { return log_odds_; }
  const std::vector<int8_t>& labels() const { return labels_; }

  // What Restore takes: the refused count and the records.
  struct State {
    int64_t refused = 0;
    std::vector<double> log_odds;
    std::vector<int8_t> labels;
  };
  // Replaces the records and the refused count; the capacity stays.
  // INVALID_ARGUMENT naming the field (store unchanged) unless the arrays
  // have one entry per record, no more than the capacity, every log-odds
  // finite, every label 0 or 1 and refused in [0, 2^40].
  absl::Status Restore(State state);

  // The figures over the kept records. FAILED_PRECONDITION when the store
  // is empty; INVALID_ARGUMENT if hosmer_lemeshow_groups < 3.
  absl::StatusOr<ExactOutcomeFigures> Result(
      int hosmer_lemeshow_groups = 10) const;

 private:
  explicit LabelledRecordStore(int64_t capacity) : capacity_(capacity) {}

  int64_t capacity_;
  int64_t refused_ = 0;
  std::vector<double> log_odds_;
  std::vector<int8_t> labels_;
};

}  // namespace plumbline::monitor

#endif  // PLUMBLINE_MONITOR_LABELLED_RECORD_STORE_H_
