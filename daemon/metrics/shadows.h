// File: daemon/metrics/shadows.h
//
// How shadow versions fare, as Prometheus metrics built at scrape time from
// the ShadowTracker (daemon/scoring/shadow_tracker.h):
//
//   plumbline_shadow_scored_calls_total{set,version}          counter
//   plumbline_shadow_failed_calls_total{set,version,reason}   counter
//   plumbline_shadow_stopped{set,version}       gauge: 1 once retired for
//                                               failing, else 0
//
// A shadow appears once it has scored or failed a call.
//
// Thread-safe. The tracker must outlive the exporter this is added to.
#ifndef PLUMBLINE_DAEMON_METRICS_SHADOWS_H_
#define PLUMBLINE_DAEMON_METRICS_SHADOWS_H_

#include <vector>

#include "daemon/scoring/shadow_tracker.h"
#include "prometheus/collectable.h"
#include "prometheus/metric_family.h"

namespace plumbline::daemon {

class ShadowMetrics final : public prometheus::Collectable {
 public:
  explicit ShadowMetrics(const ShadowTracker* tracker) : tracker_(tracker) {}

  std::vector<prometheus::MetricFamily> Collect() const override;

 private:
  const ShadowTracker* const tracker_;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_METRICS_SHADOWS_H_
