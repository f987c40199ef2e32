// File: tests/bench/health_bench.cc
//
// What the model-health monitor adds to the request path, per record:
// ScoringPlan::Score alone against Score followed by HealthMonitor::OnScored
// (the scoring path with the sink), OnScored and OnLabelled on their own
// (OnLabelled includes the record store and the three CUSUM charts), OnScored
// from two threads at once (one version's windows share a mutex), and one
// evaluation (with the windows as the earlier benchmarks left them: the
// exact figures sort up to a million stored records). Built, never run by
// ctest:
//
//   build/tests/daemon/health_bench [--set FILE] [--benchmark_* flags]
//
// --set takes a coefficient-set file (e.g. sets/courier_first_attempt.json
// after ops/demo_data.py); records are drawn from its baselines' bins
// (numeric: the bin edges and midpoints; categorical: its levels). Without
// it the three-feature test set of tests/daemon/health_test_sets.h is used.
#include <cstring>
#include <memory>
#include <random>
#include <string>
#include <vector>

#include "absl/synchronization/mutex.h"
#include "absl/time/clock.h"
#include "benchmark/benchmark.h"
#include "daemon/health/monitor.h"
#include "scorer/coefficient_set.h"
#include "tests/testing/health_test_sets.h"

namespace plumbline::daemon {
namespace {

std::string g_set_file;

struct Fixture {
  std::shared_ptr<const scorer::ScoringPlan> plan;
  std::unique_ptr<HealthMonitor> monitor;
  // Rows of raw values, cycled through by the benchmarks.
  std::vector<std::vector<scorer::RawValue>> rows;
  std::vector<double> log_odds;
};

// Values a feature takes in the benchmark: around its baseline's edges, or
// its levels.
std::vector<scorer::RawValue> Candidates(const v1::Feature& f) {
  std::vector<scorer::RawValue> out;
  if (f.has_categorical()) {
    for (const auto& level : f.categorical().levels()) {
      out.push_back(scorer::RawValue::Text(level.value()));
    }
    return out;
  }
  std::vector<double> edges(f.baseline().edges().begin(),
                            f.baseline().edges().end());
  if (f.has_binned() && edges.empty()) {
    edges.assign(f.binned().edges().begin(), f.binned().edges().end());
  }
  if (edges.empty()) edges = {0.0, 1.0, 2.0};
  for (size_t i = 0; i < edges.size(); ++i) {
    out.push_back(scorer::RawValue::Number(edges[i]));
    if (i + 1 < edges.size()) {
      out.push_back(scorer::RawValue::Number((edges[i] + edges[i + 1]) / 2));
    }
  }
  return out;
}

Fixture& Get() {
  static Fixture* fixture = [] {
    auto* f = new Fixture;
    if (g_set_file.empty()) {
      f->plan = testing::CompilePlan(testing::BaselineSetJson("bench", "v1"));
    } else {
      auto set = scorer::ReadCoefficientSetFile(g_set_file);
      if (!set.ok()) {
        std::fprintf(stderr, "%s\n",
                     std::string(set.status().message()).c_str());
        std::exit(2);
      }
      f->plan = *scorer::ScoringPlan::Compile(*std::move(set), g_set_file);
    }
    f->monitor = *HealthMonitor::Create({});
    f->monitor->SyncPlans({f->plan});
    // The first evaluation chooses the CUSUM charts' control limits (a
    // fraction of a second per chart), which no later one repeats.
    f->monitor->Evaluate();
    std::mt19937_64 rng(20261202);
    std::vector<std::vector<scorer::RawValue>> candidates;
    for (const v1::Feature& feature : f->plan->set().features()) {
      candidates.push_back(Candidates(feature));
    }
    for (int r = 0; r < 4096; ++r) {
      std::vector<scorer::RawValue> row;
      for (const auto& c : candidates) row.push_back(c[rng() % c.size()]);
      absl::StatusOr<scorer::ScoreResult> s = f->plan->Score(row);
      if (!s.ok()) continue;  // a combination the set refuses
      f->rows.push_back(std::move(row));
      f->log_odds.push_back(s->log_odds);
    }
    return f;
  }();
  return *fixture;
}

void BM_ScoreOnly(benchmark::State& state) {
  Fixture& f = Get();
  size_t i = 0;
  for (auto _ : state) {
    benchmark::DoNotOptimize(f.plan->Score(f.rows[i]));
    i = (i + 1) % f.rows.size();
  }
}
BENCHMARK(BM_ScoreOnly);

void BM_ScoreThenOnScored(benchmark::State& state) {
  Fixture& f = Get();
  size_t i = 0;
  for (auto _ : state) {
    absl::StatusOr<scorer::ScoreResult> s = f.plan->Score(f.rows[i]);
    f.monitor->OnScored(*f.plan, f.rows[i], s->log_odds, absl::Now());
    i = (i + 1) % f.rows.size();
  }
}
BENCHMARK(BM_ScoreThenOnScored);

void BM_OnScored(benchmark::State& state) {
  Fixture& f = Get();
  size_t i = 0;
  const absl::Time now = absl::Now();
  for (auto _ : state) {
    f.monitor->OnScored(*f.plan, f.rows[i], f.log_odds[i], now);
    i = (i + 1) % f.rows.size();
  }
}
BENCHMARK(BM_OnScored)->Threads(1)->Threads(2);

void BM_OnLabelled(benchmark::State& state) {
  Fixture& f = Get();
  LabelledScore l;
  l.set_name = f.plan->name();
  l.set_version = f.plan->version();
  l.observed_at = absl::Now();
  size_t i = 0;
  for (auto _ : state) {
    l.log_odds = f.log_odds[i];
    l.label = static_cast<int>(i & 1);
    f.monitor->OnLabelled(l);
    i = (i + 1) % f.rows.size();
  }
}
BENCHMARK(BM_OnLabelled);

void BM_Evaluate(benchmark::State& state) {
  Fixture& f = Get();
  for (auto _ : state) f.monitor->Evaluate();
}
BENCHMARK(BM_Evaluate)->Unit(benchmark::kMillisecond);

}  // namespace
}  // namespace plumbline::daemon

int main(int argc, char** argv) {
  // As plumbd does: absl's deadlock detection (on in Debian's build) is a
  // debugging aid that costs every lock a graph lookup.
  absl::SetMutexDeadlockDetectionMode(absl::OnDeadlockCycle::kIgnore);
  std::vector<char*> rest;
  for (int i = 0; i < argc; ++i) {
    if (std::strcmp(argv[i], "--set") == 0 && i + 1 < argc) {
      plumbline::daemon::g_set_file = argv[++i];
    } else {
      rest.push_back(argv[i]);
    }
  }
  int rest_argc = static_cast<int>(rest.size());
  benchmark::Initialize(&rest_argc, rest.data());
  benchmark::RunSpecifiedBenchmarks();
  benchmark::Shutdown();
  return 0;
}
