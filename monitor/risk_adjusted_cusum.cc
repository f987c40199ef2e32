#include "monitor/risk_adjusted_cusum.h"

#include <algorithm>
#include <cmath>

#include "absl/strings/str_format.h"
#include "monitor/input_check.h"
#include "scorer/logistic.h"

namespace plumbline::monitor {
namespace {

// log(1 + e^x) without overflow.
double Softplus(double x) {
  return std::max(x, 0.0) + std::log1p(std::exp(-std::abs(x)));
}

}  // namespace

absl::Status CheckAlternative(const LogOddsChange& alternative) {
  if (!std::isfinite(alternative.shift)) {
    return absl::InvalidArgumentError(
        absl::StrFormat("CUSUM alternative: shift is %g; it must be finite",
                        alternative.shift));
  }
  if (!(alternative.slope > 0) || std::isinf(alternative.slope)) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "CUSUM alternative: slope is %g; it must be finite and > 0",
        alternative.slope));
  }
  if (alternative.IsIdentity()) {
    return absl::InvalidArgumentError(
        "CUSUM alternative: shift 0 and slope 1 is the model itself; the "
        "chart needs a change to look for");
  }
  return absl::OkStatus();
}

double CusumWeight(const LogOddsChange& alternative, double log_odds,
                   int label) {
  const double changed = alternative.Apply(log_odds);
  // log((1 + e^z_A) / (1 + e^z)). For an odds ratio it is
  // log(1 - p + R p) = log1p((R - 1) p), which keeps full relative accuracy
  // when R is near 1 or p is small.
  const double log_normaliser =
      alternative.slope == 1
          ? std::log1p(std::expm1(alternative.shift) * Logistic(log_odds))
          : Softplus(changed) - Softplus(log_odds);
  return (label == 1 ? changed - log_odds : 0.0) - log_normaliser;
}

absl::StatusOr<RiskAdjustedCusum> RiskAdjustedCusum::Create(
    LogOddsChange alternative, double limit) {
  if (absl::Status s = CheckAlternative(alternative); !s.ok()) return s;
  if (!(limit > 0) || std::isinf(limit)) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "CUSUM: limit is %g; it must be finite and > 0", limit));
  }
  return RiskAdjustedCusum(alternative, limit);
}

absl::StatusOr<CusumStep> RiskAdjustedCusum::Add(double log_odds, int label) {
  if (absl::Status s = internal::CheckRecord("CUSUM", log_odds, label);
      !s.ok()) {
    return s;
  }
  CusumStep step;
  step.weight = CusumWeight(alternative_, log_odds, label);
  step.value = std::max(0.0, value_ + step.weight);
  step.alarm = step.value >= limit_;
  ++records_;
  ++records_since_alarm_;
  if (step.alarm) {
    ++alarms_;
    records_since_alarm_ = 0;
    value_ = 0;
  } else {
    value_ = step.value;
  }
  return step;
}

absl::Status RiskAdjustedCusum::Restore(const State& state) {
  if (!(state.value >= 0 && state.value < limit_)) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "CUSUM state: value is %g; it must lie in [0, limit = %g)", state.value,
        limit_));
  }
  // A chart counts every record it is fed: bounded like any saved count,
  // with room to go on counting.
  constexpr int64_t kMaxRecords = int64_t{1} << 62;
  if (state.records < 0 || state.records > kMaxRecords) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "CUSUM state: records is %d; it must lie in [0, 2^62]", state.records));
  }
  if (state.alarms < 0 || state.alarms > state.records) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "CUSUM state: alarms is %d; it must lie in [0, records = %d]",
        state.alarms, state.records));
  }
  if (state.records_since_alarm < 0 ||
      state.records_since_alarm > state.records) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "CUSUM state: records_since_alarm is %d; it must lie in [0, records "
        "= %d]",
        state.records_since_alarm, state.records));
  }
  value_ = state.value;
  records_ = state.records;
  alarms_ = state.alarms;
  records_since_alarm_ = state.records_since_alarm;
  return absl::OkStatus();
}

}  // namespace plumbline::monitor
