// File: daemon/metrics/shadows.cc
#include "daemon/metrics/shadows.h"

#include <string>
#include <utility>

#include "prometheus/client_metric.h"

namespace plumbline::daemon {
namespace {

prometheus::MetricFamily Family(const char* name, const char* help,
                                prometheus::MetricType type) {
  prometheus::MetricFamily f;
  f.name = name;
  f.help = help;
  f.type = type;
  return f;
}

prometheus::ClientMetric Sample(const SetVersion& key, double value,
                                prometheus::MetricType type,
                                const std::string& reason = "") {
  prometheus::ClientMetric m;
  m.label = {{"set", key.set}, {"version", key.version}};
  if (!reason.empty()) m.label.push_back({"reason", reason});
  if (type == prometheus::MetricType::Counter) {
    m.counter.value = value;
  } else {
    m.gauge.value = value;
  }
  return m;
}

}  // namespace

std::vector<prometheus::MetricFamily> ShadowMetrics::Collect() const {
  using prometheus::MetricType;
  prometheus::MetricFamily scored =
      Family("plumbline_shadow_scored_calls_total",
             "Calls a shadow version scored (its scores are recorded, never "
             "returned).",
             MetricType::Counter);
  prometheus::MetricFamily failed =
      Family("plumbline_shadow_failed_calls_total",
             "Calls a shadow version could not score (no shadow score is "
             "recorded), by reason.",
             MetricType::Counter);
  prometheus::MetricFamily stopped =
      Family("plumbline_shadow_stopped",
             "1 once a shadow version was retired for failing "
             "shadow_failure_limit calls in a row.",
             MetricType::Gauge);
  for (const auto& [key, s] : tracker_->Snapshot()) {
    scored.metric.push_back(
        Sample(key, static_cast<double>(s.scored_calls), MetricType::Counter));
    for (const auto& [reason, n] : s.failures) {
      failed.metric.push_back(
          Sample(key, static_cast<double>(n), MetricType::Counter, reason));
    }
    stopped.metric.push_back(
        Sample(key, s.stopped ? 1.0 : 0.0, MetricType::Gauge));
  }
  std::vector<prometheus::MetricFamily> out;
  for (prometheus::MetricFamily* f : {&scored, &failed, &stopped}) {
    if (!f->metric.empty()) out.push_back(std::move(*f));
  }
  return out;
}

}  // namespace plumbline::daemon
