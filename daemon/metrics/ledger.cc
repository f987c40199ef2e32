// File: daemon/metrics/ledger.cc
#include "daemon/metrics/ledger.h"

#include <memory>
#include <vector>

#include "prometheus/client_metric.h"
#include "prometheus/counter.h"
#include "prometheus/histogram.h"
#include "prometheus/metric_family.h"

namespace plumbline::daemon {
namespace {

prometheus::MetricFamily Gauge(const char* name, const char* help,
                               double value) {
  prometheus::MetricFamily family;
  family.name = name;
  family.help = help;
  family.type = prometheus::MetricType::Gauge;
  prometheus::ClientMetric metric;
  metric.gauge.value = value;
  family.metric.push_back(metric);
  return family;
}

prometheus::MetricFamily Counter(const char* name, const char* help,
                                 double value) {
  prometheus::MetricFamily family;
  family.name = name;
  family.help = help;
  family.type = prometheus::MetricType::Counter;
  prometheus::ClientMetric metric;
  metric.counter.value = value;
  family.metric.push_back(metric);
  return family;
}

// The queue's depth and capacity, read at scrape time.
class LedgerQueueGauge final : public prometheus::Collectable {
 public:
  explicit LedgerQueueGauge(const Ledger* ledger) : ledger_(ledger) {}

  std::vector<prometheus::MetricFamily> Collect() const override {
    const LedgerStats stats = ledger_->stats();
    prometheus::MetricFamily failures;
    failures.name = "plumbline_ledger_write_failures_total";
    failures.help =
        "Ledger groups that failed to commit or to sync, by reason "
        "(disk_full, unavailable, corrupt, other); their calls got the error "
        "and nothing of them was acknowledged.";
    failures.type = prometheus::MetricType::Counter;
    // Every reason from the start, so an alert on the rate sees the first.
    for (const char* reason :
         {"disk_full", "unavailable", "corrupt", "other"}) {
      prometheus::ClientMetric m;
      m.label = {{"reason", reason}};
      auto it = stats.write_failures.find(reason);
      m.counter.value = it == stats.write_failures.end()
                            ? 0
                            : static_cast<double>(it->second);
      failures.metric.push_back(m);
    }
    return {
        failures,
        Gauge("plumbline_ledger_failed",
              "1 once the ledger has stopped taking writes (a failed fsync, "
              "its file deleted or replaced): restart plumbd on a healthy "
              "ledger.",
              stats.failed ? 1.0 : 0.0),
        Counter(
            "plumbline_ledger_retention_failures_total",
            "Retention passes that failed (rows past retention stay "
            "until a later pass succeeds; see event=ledger_retention_failed).",
            static_cast<double>(stats.retention_failures)),
        Counter("plumbline_ledger_repeated_records_total",
                "Scores not recorded again because their set had recorded "
                "the record id with the same features (retries); the stored "
                "score was returned.",
                static_cast<double>(stats.repeated_records)),
        Counter("plumbline_ledger_conflicting_records_total",
                "Score calls refused (ALREADY_EXISTS) because a record id had "
                "been recorded by the set with other features.",
                static_cast<double>(stats.conflicting_records)),
        Gauge("plumbline_ledger_queue_rows",
              "Rows (scores and outcomes) waiting for the ledger writer.",
              static_cast<double>(stats.queued_rows)),
        Gauge(
            "plumbline_ledger_queue_capacity_rows",
            "Rows the ledger queue holds at most (ledger.queue_capacity_rows); "
            "beyond it writes are refused with RESOURCE_EXHAUSTED.",
            static_cast<double>(ledger_->queue_capacity_rows())),
    };
  }

 private:
  const Ledger* const ledger_;
};

}  // namespace

void ExportLedgerMetrics(Ledger* ledger, MetricsExporter* exporter) {
  prometheus::Registry& registry = exporter->registry();
  prometheus::Histogram* commit =
      &prometheus::BuildHistogram()
           .Name("plumbline_ledger_commit_duration_seconds")
           .Help(
               "Time one ledger transaction (a group of queued writes) took "
               "to commit.")
           .Register(registry)
           .Add({}, prometheus::Histogram::BucketBoundaries{
                        0.0005, 0.001, 0.0025, 0.005, 0.01, 0.025, 0.05, 0.1,
                        0.25, 0.5, 1, 2.5, 5});
  prometheus::Counter* rows =
      &prometheus::BuildCounter()
           .Name("plumbline_ledger_committed_rows_total")
           .Help("Rows (scores and outcomes) committed to the ledger.")
           .Register(registry)
           .Add({});
  // The observer keeps the registry alive: the ledger's last commits at
  // shutdown come after the exporter has stopped.
  ledger->set_commit_observer(
      [commit, rows, keep = exporter->shared_registry()](absl::Duration latency,
                                                         size_t committed) {
        commit->Observe(absl::ToDoubleSeconds(latency));
        rows->Increment(static_cast<double>(committed));
      });
  exporter->Add(std::make_shared<LedgerQueueGauge>(ledger));
}

}  // namespace plumbline::daemon
