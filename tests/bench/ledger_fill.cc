// File: tests/bench/ledger_fill.cc
//
// Writes a ledger of many scored records (and outcomes for a share of
// them) of one coefficient set, straight through daemon/ledger/ledger.h,
// for tests/bench/run_restart_bench: how long plumbd takes to be ready on a
// big ledger, with and without the monitor's snapshot. The records are
// spread evenly over the last --span_hours ending now, so they fall inside
// the default time window; each has random feature values (numbers from a
// normal distribution, levels drawn uniformly), is scored by the set's
// plan, and is packed as plumbd packs it; an outcome (drawn from the
// record's own probability) is observed a minute after the score.
//
//   ledger_fill --set sets/parcel.json --ledger var/ledger.db \
//       --scores 10000000 --labelled_share 0.5
//
// Prints rows written and rows/s. Not a test; nothing here is timed
// against a threshold.
#include <cmath>
#include <cstdio>
#include <random>
#include <string>
#include <vector>

#include "absl/flags/flag.h"
#include "absl/flags/parse.h"
#include "absl/strings/str_cat.h"
#include "absl/time/clock.h"
#include "daemon/ledger/sqlite_ledger.h"
#include "daemon/scoring/packed_row.h"
#include "daemon/scoring/set_registry.h"

ABSL_FLAG(std::string, set, "", "the coefficient set file (JSON)");
ABSL_FLAG(std::string, ledger, "", "the ledger to write (created if absent)");
ABSL_FLAG(int64_t, scores, 1'000'000, "records to score");
ABSL_FLAG(double, labelled_share, 0.5, "share of records given an outcome");
ABSL_FLAG(double, span_hours, 23.0, "records spread over this many hours");
ABSL_FLAG(uint64_t, seed, 20261203, "random seed");

namespace plumbline::bench {
namespace {

using daemon::Ledger;
using daemon::LedgerOptions;
using daemon::OutcomeEntry;
using daemon::ScoreEntry;
using daemon::SqliteLedger;
using scorer::RawValue;

int Run() {
  absl::StatusOr<daemon::PlanPtr> plan =
      daemon::LoadSetFile(absl::GetFlag(FLAGS_set));
  if (!plan.ok()) {
    std::fprintf(stderr, "%s\n", plan.status().ToString().c_str());
    return 1;
  }
  LedgerOptions options;
  options.path = absl::GetFlag(FLAGS_ledger);
  options.durable_commits = false;  // a fill, not a durability test
  options.queue_capacity_rows = 1'000'000;
  options.max_group_rows = 50'000;
  absl::StatusOr<std::unique_ptr<Ledger>> ledger = SqliteLedger::Open(options);
  if (!ledger.ok()) {
    std::fprintf(stderr, "%s\n", ledger.status().ToString().c_str());
    return 1;
  }
  const auto layout =
      std::make_shared<const v1::RowLayout>(daemon::LayoutOf(**plan));
  const int64_t n = absl::GetFlag(FLAGS_scores);
  const double share = absl::GetFlag(FLAGS_labelled_share);
  const absl::Time end = absl::Now() - absl::Minutes(2);
  const absl::Duration step =
      absl::Hours(absl::GetFlag(FLAGS_span_hours)) / std::max<int64_t>(n, 1);
  std::mt19937_64 rng(absl::GetFlag(FLAGS_seed));
  std::normal_distribution<double> z(0, 1);
  std::uniform_real_distribution<double> u(0, 1);
  const int k = (*plan)->num_features();
  std::vector<RawValue> values(k);
  const std::vector<uint8_t> sent(k, 1);
  constexpr int64_t kBatch = 10'000;
  const absl::Time start = absl::Now();
  int64_t outcomes_written = 0;
  for (int64_t first = 0; first < n; first += kBatch) {
    std::vector<ScoreEntry> scores;
    std::vector<OutcomeEntry> outcomes;
    for (int64_t i = first; i < std::min(n, first + kBatch); ++i) {
      for (int f = 0; f < k; ++f) {
        const v1::RowLayout::Column& c = layout->columns(f);
        if (c.categorical() && c.levels_size() > 0) {
          values[f] = RawValue::Text(c.levels(
              static_cast<int>(u(rng) * c.levels_size()) % c.levels_size()));
        } else {
          values[f] = RawValue::Number(5 + 3 * z(rng));
        }
      }
      absl::StatusOr<scorer::ScoreResult> scored = (*plan)->Score(values);
      if (!scored.ok()) {
        std::fprintf(stderr, "record %lld: %s\n", static_cast<long long>(i),
                     scored.status().ToString().c_str());
        return 1;
      }
      ScoreEntry& e = scores.emplace_back();
      e.record_id = absl::StrCat("fill-", i);
      e.set_name = (*plan)->name();
      e.set_version = (*plan)->version();
      e.scored_at = end - step * static_cast<double>(n - i);
      e.log_odds = scored->log_odds;
      e.probability = scored->probability;
      daemon::PackFeatures(**plan, values, sent, &e.features);
      e.layout = layout;
      if (u(rng) < share) {
        outcomes.push_back(OutcomeEntry{e.record_id,
                                        u(rng) < e.probability ? 1 : 0,
                                        e.scored_at + absl::Minutes(1)});
      }
    }
    if (auto s = (*ledger)->AppendScores(std::move(scores)); !s.ok()) {
      std::fprintf(stderr, "%s\n", s.status().ToString().c_str());
      return 1;
    }
    outcomes_written += static_cast<int64_t>(outcomes.size());
    if (auto s = (*ledger)->ReportOutcomes(std::move(outcomes)); !s.ok()) {
      std::fprintf(stderr, "%s\n", s.status().ToString().c_str());
      return 1;
    }
  }
  const double seconds = absl::ToDoubleSeconds(absl::Now() - start);
  std::printf(
      "ledger_fill: %lld scores and %lld outcomes of %s %s in %.1f s "
      "(%.0f rows/s)\n",
      static_cast<long long>(n), static_cast<long long>(outcomes_written),
      (*plan)->name().c_str(), (*plan)->version().c_str(), seconds,
      static_cast<double>(n + outcomes_written) / seconds);
  return 0;
}

}  // namespace
}  // namespace plumbline::bench

int main(int argc, char** argv) {
  absl::ParseCommandLine(argc, argv);
  if (absl::GetFlag(FLAGS_set).empty() || absl::GetFlag(FLAGS_ledger).empty()) {
    std::fprintf(stderr,
                 "usage: ledger_fill --set FILE --ledger PATH "
                 "[--scores N] [--labelled_share P]\n");
    return 2;
  }
  return plumbline::bench::Run();
}
