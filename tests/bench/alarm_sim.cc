// File: tests/bench/alarm_sim.cc
//
// False-alarm rates and detection delays of the monitor's alarm pieces
// (PSI significance, risk-adjusted CUSUMs, the drift state machine) on
// simulated streams (tests/monitor/alarm_simulation.h). Built, not run by
// ctest; tests/bench/run_alarm_sim builds and runs it. Prints:
//  1. Stable streams: per component, the stated false-alarm rate per
//     evaluation and per 10,000 records next to the measured one.
//  2. Shifts (outcome log-odds +0.2 and +0.5, feature 0 mean +0.25 and
//     +0.5 SD, calibration slope 0.8): share detected and median records
//     from the onset to the first signal, and which component fired first;
//     plus the Markov-chain ARL of each chart under the outcome shifts.
// The stated rates: a PSI test per evaluation at psi_alpha / 4 each
// (Bonferroni bound psi_alpha for the four); a CUSUM 10,000 / ARL0 alarms
// per 10,000 records, and per evaluation 1 - exp(-E / ARL0) (geometric run
// lengths: an approximation).
#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <string>
#include <vector>

#include "absl/flags/flag.h"
#include "absl/flags/parse.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "tests/monitor/alarm_simulation.h"

ABSL_FLAG(int, stable_streams, 100, "stable streams, each its own baseline");
ABSL_FLAG(int64_t, stable_records, 200000, "records per stable stream");
ABSL_FLAG(int, shift_runs, 200, "streams per shift");
ABSL_FLAG(int64_t, max_records, 200000,
          "records after the onset before a shift counts as undetected");
ABSL_FLAG(int, evaluation_records, 1000, "records between evaluations");
ABSL_FLAG(int, window_buckets, 5, "PSI window, in evaluations");
ABSL_FLAG(int64_t, baseline_records, 20000, "baseline count n");
ABSL_FLAG(double, psi_alpha, 0.01, "PSI level per evaluation (4 tests)");
ABSL_FLAG(double, psi_effect_size, 0, "PSI must also reach this (0: off)");
ABSL_FLAG(double, cusum_arl, 100000, "in-control ARL of each CUSUM");
ABSL_FLAG(double, odds_ratio, 1.5, "upper chart's R_A (lower: 1/R_A)");
ABSL_FLAG(double, slope_alternative, 0.75, "slope chart (0: none)");
ABSL_FLAG(uint64_t, seed, 20240917, "seed");

namespace plumbline::monitor::testing {
namespace {

// 95% Wilson interval of k successes in n trials (z = 1.959964, scipy
// norm.isf(0.025)).
std::string Interval(int64_t k, int64_t n) {
  const double z = 1.959964;
  const double nn = static_cast<double>(n);
  const double p = static_cast<double>(k) / nn;
  const double centre = (p + z * z / (2 * nn)) / (1 + z * z / nn);
  const double half = z * std::sqrt(p * (1 - p) / nn + z * z / (4 * nn * nn)) /
                      (1 + z * z / nn);
  return absl::StrFormat("[%.4f, %.4f]", std::max(0.0, centre - half),
                         centre + half);
}

int Main() {
  AlarmPolicyOptions o;
  o.evaluation_records = absl::GetFlag(FLAGS_evaluation_records);
  o.window_buckets = absl::GetFlag(FLAGS_window_buckets);
  o.baseline_records = absl::GetFlag(FLAGS_baseline_records);
  o.psi_alpha = absl::GetFlag(FLAGS_psi_alpha);
  o.psi_effect_size = absl::GetFlag(FLAGS_psi_effect_size);
  o.cusum_arl = absl::GetFlag(FLAGS_cusum_arl);
  o.odds_ratio = absl::GetFlag(FLAGS_odds_ratio);
  o.slope_alternative = absl::GetFlag(FLAGS_slope_alternative);
  const uint64_t seed = absl::GetFlag(FLAGS_seed);
  absl::StatusOr<AlarmSimulator> sim = AlarmSimulator::Create(o, seed);
  if (!sim.ok()) {
    std::fprintf(stderr, "alarm_sim: %s\n", sim.status().ToString().c_str());
    return 1;
  }
  const double e = o.evaluation_records;
  std::printf(
      "Policy: evaluation every %d records; PSI of score + 3 features over "
      "%d records vs a baseline of %lld, alpha %.4g per evaluation (%.4g per "
      "test)%s; CUSUMs with in-control ARL %.0f records:\n",
      o.evaluation_records, o.evaluation_records * o.window_buckets,
      static_cast<long long>(o.baseline_records), o.psi_alpha, o.psi_alpha / 4,
      o.psi_effect_size > 0
          ? absl::StrFormat(" and PSI >= %.3g", o.psi_effect_size).c_str()
          : "",
      o.cusum_arl);
  for (int c = kUpper; c < kComponents; ++c) {
    if (!sim->has_component(c)) continue;
    const LogOddsChange a = sim->alternative(c);
    std::printf(
        "  %-12s alternative shift %+.4f slope %.2f: h = %.4f (chain "
        "ARL %.0f, stated error %.0f)\n",
        ComponentName(c), a.shift, a.slope, sim->limit(c),
        sim->in_control_arl(c).value,
        sim->in_control_arl(c).discretisation_error);
  }

  const int streams = absl::GetFlag(FLAGS_stable_streams);
  const int64_t records = absl::GetFlag(FLAGS_stable_records);
  const StableCounts s = sim->RunStable(streams, records, seed + 1);
  std::printf(
      "\nStable: %d streams x %lld records (%lld records, %lld evaluations "
      "with a full window; each stream its own baseline)\n\n",
      streams, static_cast<long long>(records),
      static_cast<long long>(s.records), static_cast<long long>(s.evaluations));
  std::printf(
      "| component | stated / evaluation | measured / evaluation "
      "[95%% CI] | stated / 10k records | measured / 10k records |\n");
  std::printf("|---|---|---|---|---|\n");
  const double evals = static_cast<double>(s.evaluations);
  const double per_10k_evals = 10000.0 / e;
  double stated_any = 0;
  for (int c = 0; c < kComponents; ++c) {
    if (!sim->has_component(c)) continue;
    const double measured =
        static_cast<double>(s.evaluation_signals[c]) / evals;
    if (c == kPsi) {
      stated_any += o.psi_alpha;
      std::printf(
          "| psi (4 tests, any) | <= %.4f | %.4f %s | <= %.3f | %.3f |\n",
          o.psi_alpha, measured,
          Interval(s.evaluation_signals[c], s.evaluations).c_str(),
          o.psi_alpha * per_10k_evals, measured * per_10k_evals);
      for (int q = 0; q < 4; ++q) {
        const double m = static_cast<double>(s.psi_test_signals[q]) / evals;
        std::printf("| psi test %s | %.4f | %.4f %s | %.3f | %.3f |\n",
                    q == 0 ? "score" : absl::StrFormat("x%d", q - 1).c_str(),
                    o.psi_alpha / 4, m,
                    Interval(s.psi_test_signals[q], s.evaluations).c_str(),
                    o.psi_alpha / 4 * per_10k_evals, m * per_10k_evals);
      }
      continue;
    }
    const double arl = sim->in_control_arl(c).value;
    const double stated_eval = 1 - std::exp(-e / arl);
    stated_any += stated_eval;
    const double alarms_10k = static_cast<double>(s.alarms[c]) * 10000 /
                              static_cast<double>(s.records);
    std::printf("| %s | %.4f | %.4f %s | %.3f | %.3f (%lld alarms) |\n",
                ComponentName(c), stated_eval, measured,
                Interval(s.evaluation_signals[c], s.evaluations).c_str(),
                10000 / arl, alarms_10k, static_cast<long long>(s.alarms[c]));
  }
  const double any = static_cast<double>(s.any_signal) / evals;
  std::printf("| any signal | <= %.4f | %.4f %s | <= %.3f | %.3f |\n",
              stated_any, any, Interval(s.any_signal, s.evaluations).c_str(),
              stated_any * per_10k_evals, any * per_10k_evals);
  std::printf(
      "| entries into drifting (release after %d quiet evaluations) "
      "| | | | %.3f |\n",
      o.release_evaluations,
      static_cast<double>(s.drifting_entries) * 10000 /
          static_cast<double>(s.records));
  std::printf(
      "\nIntervals treat evaluations as independent; PSI windows "
      "overlap (%d evaluations each), so the true intervals of the "
      "PSI rows are wider.\n",
      o.window_buckets);

  const std::vector<PopulationShift> shifts = {
      {"outcome +0.2 log-odds", 0.2, 1, 0},
      {"outcome +0.5 log-odds", 0.5, 1, 0},
      {"feature x0 +0.25 SD", 0, 1, 0.25},
      {"feature x0 +0.5 SD", 0, 1, 0.5},
      {"calibration slope 0.8", 0, 0.8, 0},
  };
  const int runs = absl::GetFlag(FLAGS_shift_runs);
  const int64_t cap = absl::GetFlag(FLAGS_max_records);
  std::printf(
      "\nShifts: %d streams each, the change from record 1 after "
      "the onset (charts fresh, PSI window full of stable records); "
      "undetected after %lld records counts as > %lld.\n\n",
      runs, static_cast<long long>(cap), static_cast<long long>(cap));
  std::printf(
      "| shift | detected | median records to detection | quartiles "
      "| first signal: psi / upper / lower / slope |\n");
  std::printf("|---|---|---|---|---|\n");
  for (size_t k = 0; k < shifts.size(); ++k) {
    std::vector<int64_t> delays;
    std::vector<int> first(kComponents, 0);
    int detected = 0;
    for (int r = 0; r < runs; ++r) {
      const DetectionResult d = sim->RunShift(
          shifts[k], cap, seed + 1000003 * (k + 1) + static_cast<uint64_t>(r));
      if (d.records >= 0) {
        ++detected;
        ++first[d.component];
        delays.push_back(d.records);
      } else {
        delays.push_back(cap + 1);
      }
    }
    std::sort(delays.begin(), delays.end());
    auto quantile = [&](double q) {
      const int64_t v = delays[static_cast<size_t>(
          q * static_cast<double>(delays.size() - 1))];
      return v > cap ? absl::StrCat(">", cap) : absl::StrCat(v);
    };
    std::printf("| %s | %d / %d | %s | %s - %s | %d / %d / %d / %d |\n",
                shifts[k].name.c_str(), detected, runs, quantile(0.5).c_str(),
                quantile(0.25).c_str(), quantile(0.75).c_str(), first[kPsi],
                first[kUpper], first[kLower], first[kSlope]);
  }
  // The chain's zero-state ARL of each chart under the outcome changes
  // (the charts do not see feature shifts: the model stays right).
  absl::StatusOr<RiskDistribution> risks = sim->risks();
  std::printf(
      "\nMarkov-chain ARL (records from a fresh chart to its alarm) "
      "under the outcome changes:\n\n| shift |");
  for (int c = kUpper; c < kComponents; ++c) {
    if (sim->has_component(c)) std::printf(" %s |", ComponentName(c));
  }
  std::printf("\n|---|---|---|---|\n");
  for (const PopulationShift& shift : shifts) {
    if (shift.feature_shift_sd != 0) continue;
    std::printf("| %s |", shift.name.c_str());
    for (int c = kUpper; c < kComponents; ++c) {
      if (!sim->has_component(c)) continue;
      absl::StatusOr<RunLengthEstimate> arl = AverageRunLength(
          sim->alternative(c), sim->limit(c), *risks,
          {.shift = shift.outcome_shift, .slope = shift.outcome_slope});
      std::printf(" %s |", arl.ok()
                               ? absl::StrFormat("%.0f", arl->value).c_str()
                               : "error");
    }
    std::printf("\n");
  }
  return 0;
}

}  // namespace
}  // namespace plumbline::monitor::testing

int main(int argc, char** argv) {
  absl::ParseCommandLine(argc, argv);
  return plumbline::monitor::testing::Main();
}
