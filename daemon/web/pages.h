// File: daemon/web/pages.h
//
// plumbd's model-health page, served read-only on the metrics listener
// (daemon/metrics/exporter.h, behind the same basic auth as /metrics):
//
//   /                           every monitored set version: drift state,
//                               reasons, last evaluation, volumes, outcome
//                               coverage, headline figures
//   /sets/<set>                 one set: state, reasons and notes; per
//                               window the reliability diagram, the score
//                               histogram against the baseline, stability
//                               bars per feature and each feature's
//                               distribution; the history of log-loss,
//                               calibration and stability over the last
//                               days; every figure; versions; audit trail;
//                               the refit dossiers
//   /sets/<set>/dossiers/<job>  a refit job's dossier, drawn again with the
//                               approval trail as it stands
//
// Every number comes from the monitor's last evaluation (the one
// Monitor.GetSetHealth and the gauges report), the history store, the
// lifecycle's versions and audit, and the dossier store. Pages reload
// themselves every `refresh` seconds (a meta refresh: no script) and load
// nothing from anywhere (daemon/charts/html.h); every name and reason is
// escaped.
//
//   ModelHealthPages pages(parts, options);
//   exporter->AttachPages(&pages);
//
// Thread-safe: Get may run on several listener threads at once; every part
// it reads is thread-safe. The parts must outlive the pages.
#ifndef PLUMBLINE_DAEMON_WEB_PAGES_H_
#define PLUMBLINE_DAEMON_WEB_PAGES_H_

#include <functional>
#include <string>

#include "absl/time/time.h"
#include "daemon/health/monitor.h"
#include "daemon/history/history_store.h"
#include "daemon/metrics/exporter.h"
#include "daemon/policy/drift_policy.h"
#include "daemon/registry/lifecycle.h"
#include "daemon/review/dossier_store.h"

namespace plumbline::daemon {

struct PagesOptions {
  // Seconds between the browser's reloads.
  int refresh_seconds = 30;
  // The span of the history charts.
  absl::Duration chart_span = absl::Hours(72);
  // The monitor's evaluation interval, for people.
  absl::Duration tick = absl::Seconds(15);
  std::function<absl::Time()> now = [] { return absl::Now(); };
};

// What the pages read. `history` and `dossiers` may be null (not kept).
struct PagesParts {
  HealthMonitor* monitor = nullptr;
  Lifecycle* lifecycle = nullptr;
  HistoryStore* history = nullptr;
  const DossierStore* dossiers = nullptr;
  const DriftPolicy* policy = nullptr;
};

class ModelHealthPages final : public HttpPages {
 public:
  ModelHealthPages(PagesParts parts, PagesOptions options);

  HttpReply Get(const std::string& path, const std::string& query) override;

 private:
  HttpReply Overview();
  HttpReply SetPage(const std::string& set);
  HttpReply Dossier(const std::string& set, const std::string& job);
  HttpReply NotFound(absl::string_view what);

  const PagesParts parts_;
  const PagesOptions options_;
};

// The chart ids of a set page that has figures in both windows (tests look
// for them in the browser's DOM).
inline constexpr const char* kSetPageChartIds[] = {
    "reliability-count",  "reliability-time",    "score-count",
    "score-time",         "stability-count",     "stability-time",
    "history-log-loss",   "history-calibration", "history-score-psi",
    "history-feature-psi"};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_WEB_PAGES_H_
