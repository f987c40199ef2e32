#include "monitor/labelled_record_store.h"

#include <cmath>
#include <utility>
#include <vector>

#include "absl/strings/str_format.h"
#include "monitor/auc.h"
#include "monitor/input_check.h"
#include "scorer/logistic.h"

namespace plumbline::monitor {

absl::StatusOr<LabelledRecordStore> LabelledRecordStore::Create(
    int64_t capacity) {
  if (capacity < 1 || capacity > kMaxCapacity) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "labelled record store: capacity is %d; it must lie in [1, %d]",
        capacity, kMaxCapacity));
  }
  return LabelledRecordStore(capacity);
}

absl::Status LabelledRecordStore::Add(double log_odds, int label) {
  if (absl::Status s =
          internal::CheckRecord("labelled record store", log_odds, label);
      !s.ok()) {
    return s;
  }
  if (size() >= capacity_) {
    ++refused_;
    return absl::ResourceExhaustedError(absl::StrFormat(
        "labelled record store: full at its capacity of %d records; the "
        "exact figures leave this record out (%d refused so far)",
        capacity_, refused_));
  }
  log_odds_.push_back(log_odds);
  labels_.push_back(static_cast<int8_t>(label));
  return absl::OkStatus();
}

absl::Status LabelledRecordStore::Merge(const LabelledRecordStore& other) {
  if (capacity_ > kMaxCapacity - other.capacity_) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "labelled record store: merging capacities %d and %d passes the "
        "maximum of %d records",
        capacity_, other.capacity_, kMaxCapacity));
  }
  capacity_ += other.capacity_;
  refused_ += other.refused_;
  log_odds_.insert(log_odds_.end(), other.log_odds_.begin(),
                   other.log_odds_.end());
  labels_.insert(labels_.end(), other.labels_.begin(), other.labels_.end());
  return absl::OkStatus();
}

absl::Status LabelledRecordStore::Restore(State state) {
  constexpr absl::string_view kWhat = "labelled record store state";
  if (state.log_odds.size() != state.labels.size()) {
    return absl::InvalidArgumentError(
        absl::StrFormat("%s: %d log-odds but %d labels", kWhat,
                        state.log_odds.size(), state.labels.size()));
  }
  if (static_cast<int64_t>(state.labels.size()) > capacity_) {
    return absl::InvalidArgumentError(
        absl::StrFormat("%s: %d records; the store's capacity is %d", kWhat,
                        state.labels.size(), capacity_));
  }
  if (absl::Status s =
          internal::CheckStateCount(kWhat, "refused", state.refused);
      !s.ok()) {
    return s;
  }
  for (size_t i = 0; i < state.labels.size(); ++i) {
    // The message is built only for a bad record (a million are checked).
    const int8_t label = state.labels[i];
    if ((label != 0 && label != 1) || !std::isfinite(state.log_odds[i])) {
      return internal::CheckRecord(absl::StrFormat("%s: record %d", kWhat, i),
                                   state.log_odds[i], label);
    }
  }
  refused_ = state.refused;
  log_odds_ = std::move(state.log_odds);
  labels_ = std::move(state.labels);
  return absl::OkStatus();
}

absl::StatusOr<ExactOutcomeFigures> LabelledRecordStore::Result(
    int hosmer_lemeshow_groups) const {
  if (absl::Status s = internal::CheckBinCount("labelled record store",
                                               "hosmer_lemeshow_groups",
                                               hosmer_lemeshow_groups, 3);
      !s.ok()) {
    return s;
  }
  if (labels_.empty()) {
    return absl::FailedPreconditionError(absl::StrFormat(
        "labelled record store: no records (%d refused for capacity)",
        refused_));
  }
  const std::vector<int> labels(labels_.begin(), labels_.end());
  std::vector<double> probabilities;
  probabilities.reserve(log_odds_.size());
  for (double z : log_odds_) probabilities.push_back(Logistic(z));

  ExactOutcomeFigures figures;
  figures.count = size();
  for (int y : labels) figures.positives += y;
  figures.refused = refused_;
  // On the log-odds: Logistic() rounds to exactly 1 above about 37, which
  // would tie scores that the log-odds still order.
  figures.auc = Auc(log_odds_, labels);
  figures.hosmer_lemeshow = HosmerLemeshowDecilesOfRisk(probabilities, labels,
                                                        hosmer_lemeshow_groups);
  figures.calibration_intercept = CalibrationIntercept(log_odds_, labels);
  figures.calibration_slope = CalibrationInterceptSlope(log_odds_, labels);
  return figures;
}

}  // namespace plumbline::monitor
