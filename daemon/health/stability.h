// File: daemon/health/stability.h
//
// The stability side of a set version's windows: what one window bucket
// keeps of the records scored, namely the population stability of the
// predicted probability against the set's score_baseline and, per feature,
// the stability against the feature's baseline with its missing and
// out-of-range counts (monitor/stability_accumulators.h). HealthWindows
// holds a CountWindow and a TimeWindow of ScoredAccumulator.
//
//   auto layout = StabilityLayout::Create(*plan);
//   ScoredAccumulator acc(layout);
//   acc.Add(probability, row);            // per scored record
//   acc.Fill(&window_health);             // per tick, on the merged window
//
// Baselines (plumbline.v1.Distribution):
//   numeric, binned  edges/proportions; out of range = outside [min, max]
//                    (undefined when the baseline lacks min or max)
//   categorical      level_proportions, levels sorted by name; out of range
//                    = a level the baseline does not list
// A set or feature without a usable baseline reports its PSI as undefined
// ("no baseline") while its missing rate is still counted.
//
// Each PSI comes with its significance test at the window's counts
// (monitor/stability_significance.h, Yurdakul & Naranjo 2020): n is the
// baseline's non-missing records, count x (1 - missing_proportion) rounded
// (its proportions are among them), m the window's non-missing records, B
// the baseline bins with a proportion > 0. A baseline without a count (0: files
// written before the test) gets no test ("the baseline records no count"), and
// the drift policy then judges its PSI on the effect size alone.
//
// StabilityLayout is immutable and shared by every bucket; ScoredAccumulator
// is a value type and not thread-safe (its window's mutex guards it).
#ifndef PLUMBLINE_DAEMON_HEALTH_STABILITY_H_
#define PLUMBLINE_DAEMON_HEALTH_STABILITY_H_

#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <variant>
#include <vector>

#include "absl/status/status.h"
#include "absl/strings/string_view.h"
#include "absl/types/span.h"
#include "monitor/stability.h"
#include "monitor/stability_accumulators.h"
#include "plumbline/v1/monitor.pb.h"
#include "scorer/scoring_plan.h"

namespace plumbline::daemon {

// The baselines of one set version, compiled once.
class StabilityLayout {
 public:
  struct Feature {
    std::string name;
    enum class Mode { kNumeric, kCategorical, kNoBaseline };
    Mode mode = Mode::kNoBaseline;
    // kNumeric: the baseline bins and, when the baseline has min and max,
    // the in-range interval.
    std::shared_ptr<const monitor::BinnedBaseline> bins;
    std::optional<monitor::ValueRange> range;
    // kCategorical.
    std::shared_ptr<const monitor::CategoricalBaseline> levels;
    // kNoBaseline: why ("no baseline", "baseline unusable: ...").
    std::string no_baseline;
    // Categorical features of the plan: level value by index (dense codes).
    std::vector<absl::string_view> level_by_index;
    // The baseline's count n (0: not recorded) and its bins with a
    // proportion > 0.
    int64_t baseline_count = 0;
    int nonzero_bins = 0;
  };

  // Never fails: a baseline the monitor cannot use becomes kNoBaseline with
  // the reason. `plan` must outlive the layout (level names view into it).
  static std::shared_ptr<const StabilityLayout> Create(
      const scorer::ScoringPlan& plan);

  const std::vector<Feature>& features() const { return features_; }
  // Null when the set has no usable score_baseline; then score_note_ says why.
  const std::shared_ptr<const monitor::BinnedBaseline>& score() const {
    return score_;
  }
  const std::string& score_note() const { return score_note_; }
  int64_t score_baseline_count() const { return score_count_; }
  int score_nonzero_bins() const { return score_bins_; }

  // PSI tests one window runs: the score and each feature whose baseline
  // is usable, records a count and has at least 2 non-empty bins.
  int Testable() const;

  // The one-bin baseline that counts missing values of a feature without a
  // baseline.
  const std::shared_ptr<const monitor::BinnedBaseline>& counting() const {
    return counting_;
  }

 private:
  StabilityLayout() = default;
  std::vector<Feature> features_;
  std::shared_ptr<const monitor::BinnedBaseline> score_;
  std::string score_note_;
  int64_t score_count_ = 0;
  int score_bins_ = 0;
  std::shared_ptr<const monitor::BinnedBaseline> counting_;
};

class ScoredAccumulator {
 public:
  explicit ScoredAccumulator(std::shared_ptr<const StabilityLayout> layout);

  // One scored record: its probability and its raw values in the plan's
  // feature order. REQUIRES: values.size() == number of features.
  void Add(double probability, absl::Span<const scorer::RawValue> values);
  // INVALID_ARGUMENT unless both come from the same layout.
  absl::Status Merge(const ScoredAccumulator& other);
  int64_t count() const { return count_; }

  // Sets out's scored count, score_psi and features, each PSI with its test
  // at `test_alpha` (the level of one test, in (0, 1)).
  void Fill(v1::WindowHealth* out, double test_alpha) const;

  // The counts, for saving (daemon/health/window_state.h): the score's (null
  // when the set has no usable score baseline) and feature i's, in the
  // plan's order.
  const monitor::StabilityCounts* score_counts() const;
  size_t num_features() const { return features_.size(); }
  const monitor::StabilityCounts& feature_counts(size_t i) const;
  // Replaces the counts of an accumulator of the same layout.
  // INVALID_ARGUMENT naming the part, accumulator unchanged, when a part
  // refuses (monitor/stability_accumulators.h), the score's counts are
  // given without a score baseline or missing with one, the number of
  // features differs, or a part's records differ from `count`.
  absl::Status Restore(int64_t count,
                       std::optional<monitor::StabilityCounts> score,
                       std::vector<monitor::StabilityCounts> features);

 private:
  using FeatureAccumulator =
      std::variant<monitor::NumericStabilityAccumulator,
                   monitor::CategoricalStabilityAccumulator>;

  std::shared_ptr<const StabilityLayout> layout_;
  std::optional<monitor::NumericStabilityAccumulator> score_;
  std::vector<FeatureAccumulator> features_;
  int64_t count_ = 0;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_HEALTH_STABILITY_H_
