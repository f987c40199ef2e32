// File: daemon/metrics/health.h
//
// The model-health figures as Prometheus metrics, built at scrape time from
// HealthMonitor's last evaluation (so they match GetSetHealth and `plumbctl
// health` number for number). Labels: set, version, window ("count" or
// "time"), and feature for per-feature figures.
//
//   plumbline_drift_state{set,version}       gauge: 0 steady, 1 watch,
//                                            2 drifting
//   plumbline_health_evaluated_timestamp_seconds{set,version}
//   plumbline_window_records{set,version,window,kind}   kind: labelled,
//                                            scored
//   plumbline_log_loss, plumbline_brier_score, plumbline_auc,
//   plumbline_expected_calibration_error,
//   plumbline_mean_predicted_minus_observed,
//   plumbline_calibration_intercept, plumbline_calibration_slope,
//   plumbline_hosmer_lemeshow_statistic, plumbline_hosmer_lemeshow_p_value,
//   plumbline_score_psi, plumbline_score_psi_p_value,
//   plumbline_score_psi_critical,
//   plumbline_window_unstored_labelled_records   {set,version,window}
//   plumbline_feature_psi, plumbline_feature_psi_p_value,
//   plumbline_feature_psi_critical, plumbline_feature_missing_ratio,
//   plumbline_feature_out_of_range_ratio     {set,version,window,feature}
//   plumbline_stability_test_alpha, plumbline_outcome_horizon_seconds,
//   plumbline_immature_labelled_records      {set,version}
//   plumbline_cusum_value, plumbline_cusum_limit,
//   plumbline_cusum_in_control_arl_records   {set,version,chart}
//   plumbline_cusum_alarms_total{set,version,chart}                 counter
//   plumbline_outcome_coverage_ratio{set,version,min_age_seconds,
//                                    max_age_seconds,mature}
//   plumbline_drift_transitions_total{set,version,from,to,trigger}  counter
//   plumbline_window_refused_records_total{set,version,window,kind} counter
//   plumbline_unmonitored_records_total{set,version,kind}           counter
//
// A figure that is undefined (no baseline, one class, no record) has no
// sample at all: never NaN, never a stand-in value. A version that is no
// longer loaded disappears with its windows. A version not yet evaluated
// (just loaded, activated or approved) has plumbline_drift_state 0 and
// plumbline_window_records 0 at once, so an alert never sees a gap.
//
// Thread-safe. The monitor must outlive the exporter the collectable is
// added to.
#ifndef PLUMBLINE_DAEMON_METRICS_HEALTH_H_
#define PLUMBLINE_DAEMON_METRICS_HEALTH_H_

#include <vector>

#include "daemon/health/monitor.h"
#include "prometheus/collectable.h"
#include "prometheus/metric_family.h"

namespace plumbline::daemon {

class HealthMetrics final : public prometheus::Collectable {
 public:
  explicit HealthMetrics(const HealthMonitor* monitor) : monitor_(monitor) {}

  std::vector<prometheus::MetricFamily> Collect() const override;

 private:
  const HealthMonitor* const monitor_;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_METRICS_HEALTH_H_
