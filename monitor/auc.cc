#include "monitor/auc.h"

#include <algorithm>
#include <cstddef>
#include <utility>
#include <vector>

#include "absl/numeric/int128.h"
#include "absl/status/status.h"
#include "absl/strings/str_format.h"
#include "monitor/input_check.h"

namespace plumbline::monitor {

absl::StatusOr<double> Auc(absl::Span<const double> scores,
                           absl::Span<const int> labels) {
  if (absl::Status s = internal::CheckLabelledScores(
          "AUC", scores, labels, internal::ScoreKind::kOrderable);
      !s.ok()) {
    return s;
  }
  std::vector<std::pair<double, int>> sorted(scores.size());
  for (size_t i = 0; i < scores.size(); ++i) sorted[i] = {scores[i], labels[i]};
  std::sort(sorted.begin(), sorted.end());
  std::vector<int64_t> positives, negatives;
  for (size_t i = 0; i < sorted.size();) {
    int64_t pos = 0, neg = 0;
    const double score = sorted[i].first;
    for (; i < sorted.size() && sorted[i].first == score; ++i) {
      (sorted[i].second == 1 ? pos : neg) += 1;
    }
    positives.push_back(pos);
    negatives.push_back(neg);
  }
  return AucFromGroups(positives, negatives);
}

absl::StatusOr<double> AucFromGroups(absl::Span<const int64_t> positives,
                                     absl::Span<const int64_t> negatives) {
  // Twice the Mann–Whitney U of the positives: each positive beats the
  // negatives of lower groups (2 each) and ties those of its own group (1
  // each).
  absl::uint128 twice_u = 0;
  absl::uint128 negatives_below = 0;
  absl::uint128 total_positives = 0;
  for (size_t g = 0; g < positives.size(); ++g) {
    const absl::uint128 pos = static_cast<uint64_t>(positives[g]);
    const absl::uint128 neg = static_cast<uint64_t>(negatives[g]);
    twice_u += pos * (2 * negatives_below + neg);
    negatives_below += neg;
    total_positives += pos;
  }
  if (total_positives == 0 && negatives_below == 0) {
    return absl::FailedPreconditionError(
        "AUC is undefined: no labelled records");
  }
  if (total_positives == 0 || negatives_below == 0) {
    return absl::FailedPreconditionError(absl::StrFormat(
        "AUC is undefined: all %d labelled records are %s",
        static_cast<uint64_t>(total_positives + negatives_below),
        total_positives == 0 ? "negatives (label 0)" : "positives (label 1)"));
  }
  const absl::uint128 twice_pairs = 2 * total_positives * negatives_below;
  return static_cast<double>(twice_u) / static_cast<double>(twice_pairs);
}

}  // namespace plumbline::monitor
