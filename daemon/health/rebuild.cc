// File: daemon/health/rebuild.cc
#include "daemon/health/rebuild.h"

#include <algorithm>
#include <cstdint>
#include <functional>
#include <string>
#include <vector>

#include "absl/strings/str_cat.h"
#include "daemon/scoring/packed_row.h"
#include "daemon/util/event_log.h"
#include "google/protobuf/struct.pb.h"

namespace plumbline::daemon {
namespace {

// A time window is rebuilt from at most this many of the newest records of
// each kind, so a busy day cannot make startup arbitrarily slow.
constexpr int64_t kRebuildTimeLimit = 1'000'000;

// The newest `wanted` rows `keep` accepts, newest first. The ledger selects
// by set name only, so rows of other versions take part in its limit: the
// limit doubles until enough rows are kept or the set has no more rows.
template <typename Entry>
absl::StatusOr<std::vector<Entry>> NewestRows(
    int64_t wanted,
    const std::function<
        absl::Status(int64_t, const std::function<void(const Entry&)>&)>& query,
    const std::function<bool(const Entry&)>& keep) {
  for (int64_t limit = wanted;; limit *= 2) {
    std::vector<Entry> kept;
    int64_t seen = 0;
    absl::Status s = query(limit, [&](const Entry& e) {
      ++seen;
      if (static_cast<int64_t>(kept.size()) < wanted && keep(e))
        kept.push_back(e);
    });
    if (!s.ok()) return s;
    if (static_cast<int64_t>(kept.size()) >= wanted || seen < limit ||
        limit >= kRebuildTimeLimit) {
      return kept;
    }
  }
}

}  // namespace

absl::Status RebuildWindows(Ledger& ledger, HealthWindows& windows,
                            absl::Time now, const LedgerMarks* upto) {
  const scorer::ScoringPlan& plan = *windows.plan();
  const std::string& version = plan.version();
  const HealthWindowOptions& o = windows.options();
  const absl::Time since = windows.TimeWindowStart(now);
  const absl::Time labelled_since = windows.LabelledReadStart(now);
  const absl::Time coverage_since = windows.CoverageStart(now);
  int64_t labelled = 0, scored = 0, skipped = 0;
  StoredFeatureReader reader;
  std::vector<scorer::RawValue> row;
  auto parses = [&](const ScoreEntry& e) {
    return reader.Read(plan, e.layout.get(), e.features, &row).ok();
  };

  // Count windows: the newest N rows of the version, fed oldest first.
  absl::StatusOr<std::vector<LabelledScore>> newest_labelled =
      NewestRows<LabelledScore>(
          o.labelled_count,
          [&](int64_t limit,
              const std::function<void(const LabelledScore&)>& fn) {
            return ledger.ForEachLabelled(plan.name(), limit,
                                          absl::InfinitePast(), fn, upto);
          },
          [&](const LabelledScore& l) { return l.set_version == version; });
  if (!newest_labelled.ok()) return newest_labelled.status();
  for (auto it = newest_labelled->rbegin(); it != newest_labelled->rend();
       ++it) {
    windows.AddLabelledTo(WindowKind::kCount, it->log_odds, it->label,
                          it->scored_at, now, now);
  }
  labelled += static_cast<int64_t>(newest_labelled->size());

  absl::StatusOr<std::vector<ScoreEntry>> newest_scored =
      NewestRows<ScoreEntry>(
          o.scored_count,
          [&](int64_t limit, const std::function<void(const ScoreEntry&)>& fn) {
            return ledger.ForEachScore(plan.name(), limit, absl::InfinitePast(),
                                       fn, upto);
          },
          [&](const ScoreEntry& e) { return e.set_version == version; });
  if (!newest_scored.ok()) return newest_scored.status();
  for (auto it = newest_scored->rbegin(); it != newest_scored->rend(); ++it) {
    if (!parses(*it)) {
      ++skipped;
      continue;
    }
    windows.AddScoredTo(WindowKind::kCount, it->log_odds, row, now, now);
    ++scored;
  }

  // Time windows (and the records waiting for their outcome horizon): every
  // row inside the span, in any order; the coverage's rows on the way.
  const bool by_score_time = windows.outcome_horizon() > absl::ZeroDuration();
  const absl::Time labelled_window_start =
      windows.TimeWindowStart(now - windows.outcome_horizon());
  absl::Status s = ledger.ForEachLabelled(
      plan.name(), kRebuildTimeLimit, std::min(labelled_since, coverage_since),
      [&](const LabelledScore& l) {
        if (l.set_version != version) return;
        if (l.scored_at >= coverage_since) {
          windows.AddCoverage(l.scored_at, /*labelled=*/true, now);
        }
        const bool in_window = by_score_time
                                   ? l.scored_at >= labelled_window_start
                                   : l.observed_at >= labelled_since;
        if (!in_window) return;
        windows.AddLabelledTo(WindowKind::kTime, l.log_odds, l.label,
                              l.scored_at, l.observed_at, now);
        ++labelled;
      },
      upto);
  if (!s.ok()) return s;
  s = ledger.ForEachScore(
      plan.name(), kRebuildTimeLimit, std::min(since, coverage_since),
      [&](const ScoreEntry& e) {
        if (e.set_version != version) return;
        if (e.scored_at >= coverage_since) {
          windows.AddCoverage(e.scored_at, /*labelled=*/false, now);
        }
        if (e.scored_at < since) return;
        if (!parses(e)) {
          ++skipped;
          return;
        }
        windows.AddScoredTo(WindowKind::kTime, e.log_odds, row, e.scored_at,
                            now);
        ++scored;
      },
      upto);
  if (!s.ok()) return s;
  LogEvent(skipped > 0 ? LogLevel::kWarning : LogLevel::kInfo, "health_rebuilt",
           {{"set", plan.name()},
            {"version", version},
            {"labelled_rows", absl::StrCat(labelled)},
            {"scored_rows", absl::StrCat(scored)},
            {"skipped_unparseable", absl::StrCat(skipped)}});
  return absl::OkStatus();
}

}  // namespace plumbline::daemon
