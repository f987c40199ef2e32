#include "tests/monitor/alarm_simulation.h"

#include <algorithm>
#include <memory>
#include <optional>
#include <random>
#include <utility>

#include "absl/status/status.h"
#include "monitor/drift_state.h"
#include "monitor/stability.h"
#include "monitor/stability_accumulators.h"
#include "monitor/stability_significance.h"
#include "monitor/window.h"
#include "scorer/logistic.h"

namespace plumbline::monitor::testing {
namespace {

// The scoring model: log-odds = -1.5 + 0.8 x0 - 0.5 x1 + 0.4 x2, features
// standard normal in the stable population (about 23% positives).
constexpr double kIntercept = -1.5;
constexpr std::array<double, 3> kBeta = {0.8, -0.5, 0.4};
constexpr int kQuantities = 4;  // score, x0, x1, x2
constexpr int kBins = 10;

struct Record {
  std::array<double, kQuantities> values;  // z, x0, x1, x2
  int label = 0;
};

Record Draw(std::mt19937_64& rng, const PopulationShift& shift) {
  std::normal_distribution<double> normal(0.0, 1.0);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  Record r;
  double z = kIntercept;
  for (int j = 0; j < 3; ++j) {
    const double x = normal(rng) + (j == 0 ? shift.feature_shift_sd : 0.0);
    r.values[j + 1] = x;
    z += kBeta[j] * x;
  }
  r.values[0] = z;
  const double q = Logistic(shift.outcome_slope * z + shift.outcome_shift);
  r.label = unit(rng) < q ? 1 : 0;
  return r;
}

using Baseline = std::array<std::shared_ptr<const BinnedBaseline>, kQuantities>;

// Decile edges and proportions of a fresh stable sample, per quantity.
Baseline DrawBaseline(std::mt19937_64& rng, int64_t n) {
  std::array<std::vector<double>, kQuantities> values;
  for (int64_t i = 0; i < n; ++i) {
    const Record r = Draw(rng, {});
    for (int q = 0; q < kQuantities; ++q) values[q].push_back(r.values[q]);
  }
  Baseline baseline;
  for (int q = 0; q < kQuantities; ++q) {
    std::vector<double>& v = values[q];
    std::sort(v.begin(), v.end());
    std::vector<double> edges;
    for (int k = 1; k < kBins; ++k) {
      edges.push_back(v[static_cast<size_t>(n * k / kBins)]);
    }
    std::vector<double> proportions(kBins, 0.0);
    absl::StatusOr<BinnedBaseline> probe =
        BinnedBaseline::Create(edges, std::vector<double>(kBins, 0.1));
    for (double x : v) {
      proportions[probe->BinOf(x)] += 1.0 / static_cast<double>(n);
    }
    absl::StatusOr<BinnedBaseline> b =
        BinnedBaseline::Create(edges, proportions);
    baseline[q] = std::make_shared<const BinnedBaseline>(*std::move(b));
  }
  return baseline;
}

using StabilityWindow = CountWindow<NumericStabilityAccumulator>;

// One policy instance: PSI windows, charts and the drift state.
class PolicyRun {
 public:
  PolicyRun(const AlarmSimulator& sim, const Baseline& baseline)
      : sim_(sim),
        state_(*DriftStateMachine::Create(
            {.release_evaluations = sim.options().release_evaluations})) {
    const AlarmPolicyOptions& o = sim.options();
    for (int q = 0; q < kQuantities; ++q) {
      windows_.push_back(*StabilityWindow::Create(
          int64_t{o.evaluation_records} * o.window_buckets, o.window_buckets,
          *NumericStabilityAccumulator::Create(baseline[q])));
    }
    ResetCharts();
  }

  void ResetCharts() {
    charts_.clear();
    for (int c = kUpper; c < kComponents; ++c) {
      if (sim_.has_component(c)) {
        charts_.push_back(
            *RiskAdjustedCusum::Create(sim_.alternative(c), sim_.limit(c)));
      } else {
        charts_.push_back(std::nullopt);
      }
    }
  }

  void AddToWindows(const Record& r) {
    for (int q = 0; q < kQuantities; ++q) {
      (void)windows_[q].Add(r.values[q]);
    }
  }

  // Adds a record to the charts; returns the first chart that alarmed.
  int AddToCharts(const Record& r) {
    int fired = -1;
    for (int c = kUpper; c < kComponents; ++c) {
      std::optional<RiskAdjustedCusum>& chart = charts_[c - kUpper];
      if (!chart) continue;
      absl::StatusOr<CusumStep> step = chart->Add(r.values[0], r.label);
      if (step.ok() && step->alarm) {
        alarmed_[c] = true;
        if (fired < 0) fired = c;
      }
    }
    return fired;
  }

  // The four PSI tests over the windows now; per-test significance.
  std::array<bool, kQuantities> PsiSignals() const {
    const AlarmPolicyOptions& o = sim_.options();
    std::array<bool, kQuantities> out{};
    for (int q = 0; q < kQuantities; ++q) {
      absl::StatusOr<StabilityFigures> f = windows_[q].Merged().Result();
      if (!f.ok() || !f->psi) continue;
      absl::StatusOr<PsiSignificance> s =
          TestPsi({.psi = *f->psi,
                   .baseline_count = o.baseline_records,
                   .window_count = f->count - f->missing,
                   .bins = kBins},
                  o.psi_alpha / kQuantities);
      out[q] = s.ok() && s->significant && *f->psi >= o.psi_effect_size;
    }
    return out;
  }

  // Signals of every component since the last call; feeds the state.
  std::array<bool, kComponents> Evaluate(bool* entered_drifting) {
    std::array<bool, kComponents> signals = alarmed_;
    const std::array<bool, kQuantities> psi = PsiSignals();
    signals[kPsi] =
        std::any_of(psi.begin(), psi.end(), [](bool b) { return b; });
    last_psi_ = psi;
    alarmed_ = {};
    const bool any =
        std::any_of(signals.begin(), signals.end(), [](bool b) { return b; });
    DriftConditions conditions;
    conditions.watch.released = true;
    conditions.drifting = {.entered = any, .released = !any, .reason = ""};
    std::optional<DriftTransition> t = state_.Evaluate(conditions);
    *entered_drifting = t && t->to == DriftState::kDrifting;
    return signals;
  }

  const std::array<bool, kQuantities>& last_psi() const { return last_psi_; }
  int64_t alarms(int c) const {
    const std::optional<RiskAdjustedCusum>& chart = charts_[c - kUpper];
    return chart ? chart->alarms() : 0;
  }

 private:
  const AlarmSimulator& sim_;
  std::vector<StabilityWindow> windows_;
  std::vector<std::optional<RiskAdjustedCusum>> charts_;
  std::array<bool, kComponents> alarmed_{};
  std::array<bool, kQuantities> last_psi_{};
  DriftStateMachine state_;
};

}  // namespace

const char* ComponentName(int component) {
  switch (component) {
    case kPsi:
      return "psi";
    case kUpper:
      return "cusum_upper";
    case kLower:
      return "cusum_lower";
    case kSlope:
      return "cusum_slope";
  }
  return "none";
}

LogOddsChange AlarmSimulator::alternative(int component) const {
  switch (component) {
    case kUpper:
      return LogOddsChange::OddsRatio(options_.odds_ratio);
    case kLower:
      return LogOddsChange::OddsRatio(1 / options_.odds_ratio);
    case kSlope:
      return {.shift = 0, .slope = options_.slope_alternative};
  }
  return {};
}

absl::StatusOr<AlarmSimulator> AlarmSimulator::Create(
    const AlarmPolicyOptions& options, uint64_t seed) {
  AlarmSimulator sim(options);
  // The charts' risk distribution: the log-odds of a stable sample of
  // baseline size (what a set's score baseline would give).
  std::mt19937_64 rng(seed);
  std::vector<double> z;
  for (int64_t i = 0; i < options.baseline_records; ++i) {
    z.push_back(Draw(rng, {}).values[0]);
  }
  absl::StatusOr<RiskDistribution> risks = RiskDistribution::FromLogOdds(z);
  if (!risks.ok()) return risks.status();
  sim.risk_log_odds_ = z;
  for (int c = kUpper; c < kComponents; ++c) {
    if (c == kSlope && options.slope_alternative <= 0) continue;
    absl::StatusOr<ControlLimit> h =
        ChooseControlLimit(sim.alternative(c), options.cusum_arl, *risks);
    if (!h.ok()) return h.status();
    sim.limits_[c] = h->limit;
    sim.arls_[c] = h->arl;
  }
  return sim;
}

StableCounts AlarmSimulator::RunStable(int streams, int64_t records,
                                       uint64_t seed) const {
  StableCounts counts;
  const int64_t window =
      int64_t{options_.evaluation_records} * options_.window_buckets;
  for (int s = 0; s < streams; ++s) {
    std::mt19937_64 rng(seed + static_cast<uint64_t>(s) * 7919);
    const Baseline baseline = DrawBaseline(rng, options_.baseline_records);
    PolicyRun run(*this, baseline);
    for (int64_t t = 1; t <= records; ++t) {
      const Record r = Draw(rng, {});
      run.AddToWindows(r);
      run.AddToCharts(r);
      if (t % options_.evaluation_records != 0) continue;
      bool entered = false;
      const std::array<bool, kComponents> signals = run.Evaluate(&entered);
      if (t < window) continue;  // the PSI window is not full yet
      ++counts.evaluations;
      for (int q = 0; q < kQuantities; ++q) {
        counts.psi_test_signals[q] += run.last_psi()[q] ? 1 : 0;
      }
      bool any = false;
      for (int c = 0; c < kComponents; ++c) {
        counts.evaluation_signals[c] += signals[c] ? 1 : 0;
        any = any || signals[c];
      }
      counts.any_signal += any ? 1 : 0;
      counts.drifting_entries += entered ? 1 : 0;
    }
    counts.records += records;
    for (int c = kUpper; c < kComponents; ++c)
      counts.alarms[c] += run.alarms(c);
  }
  return counts;
}

DetectionResult AlarmSimulator::RunShift(const PopulationShift& shift,
                                         int64_t max_records,
                                         uint64_t seed) const {
  std::mt19937_64 rng(seed);
  const Baseline baseline = DrawBaseline(rng, options_.baseline_records);
  PolicyRun run(*this, baseline);
  const int64_t window =
      int64_t{options_.evaluation_records} * options_.window_buckets;
  for (int64_t t = 0; t < window; ++t) run.AddToWindows(Draw(rng, {}));
  DetectionResult result;
  for (int64_t t = 1; t <= max_records; ++t) {
    const Record r = Draw(rng, shift);
    run.AddToWindows(r);
    const int fired = run.AddToCharts(r);
    if (fired >= 0) return {t, fired};
    if (t % options_.evaluation_records == 0) {
      const std::array<bool, kQuantities> psi = run.PsiSignals();
      if (std::any_of(psi.begin(), psi.end(), [](bool b) { return b; })) {
        return {t, kPsi};
      }
    }
  }
  return result;
}

}  // namespace plumbline::monitor::testing
