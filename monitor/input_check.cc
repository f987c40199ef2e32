#include "monitor/input_check.h"

#include <cmath>

#include "absl/strings/str_format.h"

namespace plumbline::monitor::internal {
namespace {

absl::string_view ArrayName(ScoreKind kind) {
  switch (kind) {
    case ScoreKind::kProbability:
      return "probabilities";
    case ScoreKind::kLogOdds:
    case ScoreKind::kFiniteLogOdds:
      return "log_odds";
    case ScoreKind::kOrderable:
      return "scores";
  }
  return "scores";
}

absl::Status CheckScore(absl::string_view figure, ScoreKind kind, size_t i,
                        double v) {
  const absl::string_view array = ArrayName(kind);
  switch (kind) {
    case ScoreKind::kProbability:
      if (!(v >= 0.0 && v <= 1.0)) {  // also refuses NaN
        return absl::InvalidArgumentError(absl::StrFormat(
            "%s: %s[%d] is %g; probabilities must lie in [0, 1]", figure, array,
            i, v));
      }
      break;
    case ScoreKind::kFiniteLogOdds:
      if (!std::isfinite(v)) {
        return absl::InvalidArgumentError(absl::StrFormat(
            "%s: %s[%d] is %g; log-odds must be finite", figure, array, i, v));
      }
      break;
    case ScoreKind::kLogOdds:
    case ScoreKind::kOrderable:
      if (std::isnan(v)) {
        return absl::InvalidArgumentError(absl::StrFormat(
            "%s: %s[%d] is NaN; scores must be numbers", figure, array, i));
      }
      break;
  }
  return absl::OkStatus();
}

}  // namespace

absl::Status CheckLabelledScores(absl::string_view figure,
                                 absl::Span<const double> scores,
                                 absl::Span<const int> labels, ScoreKind kind) {
  if (scores.size() != labels.size()) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "%s: %d scores but %d labels", figure, scores.size(), labels.size()));
  }
  if (scores.empty()) {
    return absl::InvalidArgumentError(
        absl::StrFormat("%s: no labelled records", figure));
  }
  for (size_t i = 0; i < scores.size(); ++i) {
    if (labels[i] != 0 && labels[i] != 1) {
      return absl::InvalidArgumentError(absl::StrFormat(
          "%s: labels[%d] is %d; labels must be 0 or 1", figure, i, labels[i]));
    }
    if (absl::Status s = CheckScore(figure, kind, i, scores[i]); !s.ok()) {
      return s;
    }
  }
  return absl::OkStatus();
}

absl::Status CheckRecord(absl::string_view figure, double log_odds, int label) {
  if (label != 0 && label != 1) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "%s: label is %d; labels must be 0 or 1", figure, label));
  }
  if (!std::isfinite(log_odds)) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "%s: log-odds is %g; log-odds must be finite", figure, log_odds));
  }
  return absl::OkStatus();
}

absl::Status CheckBinCount(absl::string_view figure, absl::string_view what,
                           int bins, int minimum) {
  if (bins < minimum) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "%s: %s is %d; it must be at least %d", figure, what, bins, minimum));
  }
  return absl::OkStatus();
}

absl::Status CheckStateCount(absl::string_view what, absl::string_view field,
                             int64_t n) {
  if (n < 0 || n > kMaxStateCount) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "%s: %s is %d; a saved count must lie in [0, 2^40]", what, field, n));
  }
  return absl::OkStatus();
}

absl::Status CheckStateSum(absl::string_view what, absl::string_view field,
                           double sum, double compensation) {
  if (!std::isfinite(sum) || !std::isfinite(compensation)) {
    return absl::InvalidArgumentError(
        absl::StrFormat("%s: %s is %g + %g; a saved sum must be finite", what,
                        field, sum, compensation));
  }
  return absl::OkStatus();
}

}  // namespace plumbline::monitor::internal
