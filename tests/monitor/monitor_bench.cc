// File: tests/monitor/monitor_bench.cc
//
// Per-record cost of updating the monitor's accumulators, as the daemon does
// for each labelled outcome and each scored record: the OutcomeAccumulator
// (log-loss, Brier, equal-width reliability, score grid) and the stability
// accumulators of the score and of a numeric and a categorical feature.
// Reported as ns per record (items_per_second inverted). Built with the
// project, never run by ctest: timing belongs to benchmarks, never to tests.
//
//   build-*/tests/monitor/monitor_bench [--benchmark_* flags]
#include <cstddef>
#include <memory>
#include <optional>
#include <random>
#include <vector>

#include "absl/strings/string_view.h"
#include "benchmark/benchmark.h"
#include "monitor/outcome_accumulators.h"
#include "monitor/stability_accumulators.h"
#include "monitor/window.h"
#include "scorer/logistic.h"

namespace plumbline::monitor {
namespace {

constexpr size_t kRecords = 1 << 16;

struct Records {
  std::vector<double> log_odds, probability, distance_km;
  std::vector<int> labels;
  std::vector<std::optional<absl::string_view>> vehicle;
};

const Records& Data() {
  static const Records* const records = [] {
    auto* r = new Records;
    std::mt19937_64 rng(7);
    std::normal_distribution<double> score(-1.5, 1.5);
    std::lognormal_distribution<double> distance(1.5, 0.6);
    std::uniform_real_distribution<double> unit(0, 1);
    static const char* const kVehicles[] = {"van", "cargo_bike", "car",
                                            "drone"};
    for (size_t i = 0; i < kRecords; ++i) {
      const double z = score(rng);
      r->log_odds.push_back(z);
      r->probability.push_back(Logistic(z));
      r->labels.push_back(unit(rng) < Logistic(z) ? 1 : 0);
      r->distance_km.push_back(unit(rng) < 0.02 ? std::nan("") : distance(rng));
      const double u = unit(rng);
      r->vehicle.push_back(u < 0.03 ? std::nullopt
                                    : std::optional<absl::string_view>(
                                          kVehicles[static_cast<int>(u * 4)]));
    }
    return r;
  }();
  return *records;
}

void BM_OutcomeAccumulatorAdd(benchmark::State& state) {
  const Records& d = Data();
  OutcomeAccumulator acc = *OutcomeAccumulator::Create({});
  size_t i = 0;
  for (auto _ : state) {
    benchmark::DoNotOptimize(acc.Add(d.log_odds[i], d.labels[i]));
    i = (i + 1) % kRecords;
  }
  state.SetItemsProcessed(state.iterations());
}
BENCHMARK(BM_OutcomeAccumulatorAdd);

struct StabilitySet {
  NumericStabilityAccumulator score, distance;
  CategoricalStabilityAccumulator vehicle;
};

StabilitySet MakeStabilitySet() {
  auto score_base =
      std::make_shared<const BinnedBaseline>(*BinnedBaseline::Create(
          {0.05, 0.1, 0.15, 0.2, 0.3, 0.4, 0.5, 0.6, 0.8},
          {0.1, 0.1, 0.1, 0.1, 0.1, 0.1, 0.1, 0.1, 0.1, 0.1}));
  auto distance_base =
      std::make_shared<const BinnedBaseline>(*BinnedBaseline::Create(
          {2, 3, 4.5, 6, 9}, {0.1, 0.15, 0.25, 0.25, 0.15, 0.1}));
  auto vehicle_base =
      std::make_shared<const CategoricalBaseline>(*CategoricalBaseline::Create(
          {{"van", 0.5}, {"cargo_bike", 0.3}, {"car", 0.2}}));
  return {
      *NumericStabilityAccumulator::Create(score_base),
      *NumericStabilityAccumulator::Create(distance_base, ValueRange{0, 80}),
      *CategoricalStabilityAccumulator::Create(vehicle_base)};
}

// Score PSI plus one numeric and one categorical feature.
void BM_StabilityAccumulatorsAdd(benchmark::State& state) {
  const Records& d = Data();
  StabilitySet set = MakeStabilitySet();
  size_t i = 0;
  for (auto _ : state) {
    set.score.Add(d.probability[i]);
    set.distance.Add(d.distance_km[i]);
    set.vehicle.Add(d.vehicle[i]);
    i = (i + 1) % kRecords;
  }
  benchmark::DoNotOptimize(set.score.count() + set.distance.count() +
                           set.vehicle.count());
  state.SetItemsProcessed(state.iterations());
}
BENCHMARK(BM_StabilityAccumulatorsAdd);

// Everything a labelled record touches: the outcome accumulators and the
// three stability accumulators above.
void BM_AllAccumulatorsAdd(benchmark::State& state) {
  const Records& d = Data();
  OutcomeAccumulator outcome = *OutcomeAccumulator::Create({});
  StabilitySet set = MakeStabilitySet();
  size_t i = 0;
  for (auto _ : state) {
    benchmark::DoNotOptimize(outcome.Add(d.log_odds[i], d.labels[i]));
    set.score.Add(d.probability[i]);
    set.distance.Add(d.distance_km[i]);
    set.vehicle.Add(d.vehicle[i]);
    i = (i + 1) % kRecords;
  }
  benchmark::DoNotOptimize(set.score.count() + set.distance.count() +
                           set.vehicle.count());
  state.SetItemsProcessed(state.iterations());
}
BENCHMARK(BM_AllAccumulatorsAdd);

// The daemon's path: through a count window of 100000 records in 20 buckets.
void BM_OutcomeWindowAdd(benchmark::State& state) {
  const Records& d = Data();
  auto window = *CountWindow<OutcomeAccumulator>::Create(
      100000, 20, *OutcomeAccumulator::Create({}));
  size_t i = 0;
  for (auto _ : state) {
    benchmark::DoNotOptimize(window.Add(d.log_odds[i], d.labels[i]));
    i = (i + 1) % kRecords;
  }
  state.SetItemsProcessed(state.iterations());
}
BENCHMARK(BM_OutcomeWindowAdd);

// Reading a window's figures, as the daemon's tick does.
void BM_OutcomeWindowResult(benchmark::State& state) {
  const Records& d = Data();
  auto window = *CountWindow<OutcomeAccumulator>::Create(
      100000, 20, *OutcomeAccumulator::Create({}));
  for (size_t i = 0; i < 100000; ++i) {
    (void)window.Add(d.log_odds[i % kRecords], d.labels[i % kRecords]);
  }
  for (auto _ : state) {
    benchmark::DoNotOptimize(window.Merged().Result());
  }
}
BENCHMARK(BM_OutcomeWindowResult)->Unit(benchmark::kMillisecond);

}  // namespace
}  // namespace plumbline::monitor

BENCHMARK_MAIN();
