// File: daemon/server/health_options.cc
#include "daemon/server/health_options.h"

#include <cstdint>
#include <limits>
#include <utility>

namespace plumbline::daemon {
namespace {

// Whole seconds of `d`, at least 1; an infinite duration is int64 max.
uint64_t Seconds(absl::Duration d) {
  if (d == absl::InfiniteDuration()) return std::numeric_limits<int64_t>::max();
  const int64_t s = absl::ToInt64Seconds(d);
  return s < 1 ? 1 : static_cast<uint64_t>(s);
}

}  // namespace

absl::StatusOr<HealthMonitorOptions> HealthMonitorOptionsFrom(
    const WindowOptions& windows, const DriftPolicyOptions& drift_policy) {
  // Through the config messages, so the checks and their messages are those
  // of the config file's fields.
  v1::WindowConfig window_config;
  window_config.set_labelled_count(windows.labelled_count);
  window_config.set_scored_count(windows.scored_count);
  window_config.set_time_seconds(Seconds(windows.time));
  window_config.set_buckets(windows.buckets);

  v1::DriftPolicy policy_config;
  for (const v1::MetricThreshold& t : drift_policy.thresholds) {
    *policy_config.add_thresholds() = t;
  }
  policy_config.set_min_labelled(drift_policy.min_labelled);
  policy_config.set_min_scored(drift_policy.min_scored);
  policy_config.set_tick_seconds(Seconds(drift_policy.tick));
  policy_config.set_alpha(drift_policy.alpha);
  policy_config.set_release_evaluations(drift_policy.release_evaluations);
  policy_config.set_release_ratio(drift_policy.release_ratio);
  v1::CusumPolicy* cusum = policy_config.mutable_cusum();
  cusum->set_upper_odds_ratio(drift_policy.cusum_upper_odds_ratio);
  cusum->set_lower_odds_ratio(drift_policy.cusum_lower_odds_ratio);
  cusum->set_slope_alternative(drift_policy.cusum_slope_alternative);
  cusum->set_in_control_arl_records(drift_policy.cusum_in_control_arl);
  cusum->set_disabled(drift_policy.cusum_disabled);
  policy_config.set_record_store_max_records(
      drift_policy.record_store_max_records);
  // 0 keeps "no horizon"; any other value at least 1 s.
  if (drift_policy.outcome_horizon > absl::ZeroDuration()) {
    policy_config.set_outcome_horizon_seconds(
        Seconds(drift_policy.outcome_horizon));
  }
  policy_config.set_max_immature_records(drift_policy.max_immature_records);

  absl::StatusOr<HealthWindowOptions> w =
      HealthWindowOptions::FromConfig(window_config, policy_config);
  if (!w.ok()) return w.status();
  absl::StatusOr<DriftPolicy> policy = DriftPolicy::FromConfig(policy_config);
  if (!policy.ok()) return policy.status();

  HealthMonitorOptions options;
  options.windows = *w;
  options.policy = *std::move(policy);
  return options;
}

}  // namespace plumbline::daemon
