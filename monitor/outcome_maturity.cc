#include "monitor/outcome_maturity.h"

#include <algorithm>
#include <cstddef>

#include "absl/status/status.h"
#include "absl/strings/str_format.h"

namespace plumbline::monitor {

absl::StatusOr<std::vector<AgeCoverage>> OutcomeCoverageByAge(
    absl::Span<const ScoredRecord> records, absl::Time now,
    absl::Span<const absl::Duration> age_edges, absl::Duration horizon) {
  if (horizon < absl::ZeroDuration() || horizon == absl::InfiniteDuration()) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "outcome coverage: horizon is %s; it must be finite and >= 0",
        absl::FormatDuration(horizon)));
  }
  if (now == absl::InfiniteFuture() || now == absl::InfinitePast()) {
    return absl::InvalidArgumentError("outcome coverage: now is infinite");
  }
  std::vector<AgeCoverage> buckets(age_edges.size() + 1);
  absl::Duration lower = absl::ZeroDuration();
  for (size_t i = 0; i < age_edges.size(); ++i) {
    if (!(age_edges[i] > lower) || age_edges[i] == absl::InfiniteDuration()) {
      return absl::InvalidArgumentError(absl::StrFormat(
          "outcome coverage: age_edges[%d] is %s; edges must be finite, > 0 "
          "and increasing",
          i, absl::FormatDuration(age_edges[i])));
    }
    buckets[i].min_age = lower;
    buckets[i].max_age = age_edges[i];
    lower = age_edges[i];
  }
  buckets.back().min_age = lower;
  buckets.back().max_age = absl::InfiniteDuration();
  for (size_t r = 0; r < records.size(); ++r) {
    const absl::Time t = records[r].scored_at;
    if (t == absl::InfiniteFuture() || t == absl::InfinitePast()) {
      return absl::InvalidArgumentError(absl::StrFormat(
          "outcome coverage: records[%d].scored_at is infinite", r));
    }
    const absl::Duration age = std::max(now - t, absl::ZeroDuration());
    // Bucket i holds ages in [min_age, max_age): the number of edges <= age.
    const size_t b = static_cast<size_t>(
        std::upper_bound(age_edges.begin(), age_edges.end(), age) -
        age_edges.begin());
    ++buckets[b].scored;
    if (records[r].has_outcome) ++buckets[b].with_outcome;
  }
  for (AgeCoverage& b : buckets) {
    if (b.scored > 0) {
      b.coverage =
          static_cast<double>(b.with_outcome) / static_cast<double>(b.scored);
    }
    b.mature = b.min_age >= horizon;
  }
  return buckets;
}

}  // namespace plumbline::monitor
