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
  absl::StatusOr<HealthWindowOptions> w =
      HealthWindowOptions::FromConfig(window_config);
  if (!w.ok()) return w.status();

  v1::DriftPolicy policy_config;
  for (const v1::MetricThreshold& t : drift_policy.thresholds) {
    *policy_config.add_thresholds() = t;
  }
  policy_config.set_min_labelled(drift_policy.min_labelled);
  policy_config.set_min_scored(drift_policy.min_scored);
  policy_config.set_tick_seconds(Seconds(drift_policy.tick));
  absl::StatusOr<DriftPolicy> policy = DriftPolicy::FromConfig(policy_config);
  if (!policy.ok()) return policy.status();

  HealthMonitorOptions options;
  options.windows = *w;
  options.policy = *std::move(policy);
  return options;
}

}  // namespace plumbline::daemon
