// File: daemon/metrics/exporter.h
//
// plumbd's Prometheus endpoint: an HTTP server (prometheus-cpp's Exposer)
// answering GET /metrics in the text exposition format, with one registry
// for the metrics the daemon updates as it goes (requests, ledger commits)
// and any number of collectables computed at scrape time (the health
// figures, the ledger queue).
//
//   auto exporter = MetricsExporter::Start("127.0.0.1:7391");
//   RequestMetrics requests((*exporter)->registry());
//   (*exporter)->Add(std::make_shared<HealthMetrics>(monitor));
//   LogEvent(..., {{"addr", (*exporter)->bound_address()}});
//
// With a MetricsAuthConfig whose username is set, /metrics asks for HTTP
// basic auth: the user must match and the password must match the stored
// salted hash (daemon/token_hash.h). Refused attempts are counted in
// plumbline_auth_failures_total{reason="metrics_password"} and logged
// (event=auth_refused endpoint=metrics), without the password.
//
//   auto exporter = MetricsExporter::Start(options.metrics_listen,
//                                          options.security.metrics_auth());
//
// Thread-safe: the registry is; Add may be called while scrapes run.
// Collectables are scraped on the exporter's own threads until it is
// destroyed, so whatever they read must outlive the exporter.
#ifndef PLUMBLINE_DAEMON_METRICS_EXPORTER_H_
#define PLUMBLINE_DAEMON_METRICS_EXPORTER_H_

#include <memory>
#include <string>
#include <vector>

#include "absl/base/thread_annotations.h"
#include "absl/status/statusor.h"
#include "absl/synchronization/mutex.h"
#include "daemon/access/auth_metrics.h"
#include "daemon/security/token_hash.h"
#include "plumbline/v1/security.pb.h"
#include "prometheus/collectable.h"
#include "prometheus/exposer.h"
#include "prometheus/registry.h"

namespace plumbline::daemon {

class MetricsExporter {
 public:
  // Serves /metrics on `listen` (HOST:PORT; port 0 picks a free port),
  // behind basic auth if auth.username() is set. UNAVAILABLE naming the
  // address when it cannot be bound; INVALID_ARGUMENT naming
  // security.metrics_auth.password_hash if it does not parse.
  static absl::StatusOr<std::unique_ptr<MetricsExporter>> Start(
      const std::string& listen, const v1::MetricsAuthConfig& auth = {});

  // Stops the HTTP server (waits for scrapes in flight).
  ~MetricsExporter();
  MetricsExporter(const MetricsExporter&) = delete;
  MetricsExporter& operator=(const MetricsExporter&) = delete;

  // HOST:PORT actually bound.
  const std::string& bound_address() const { return bound_address_; }

  prometheus::Registry& registry() { return *registry_; }
  // The same registry, for callers that update its metrics after the
  // exporter is gone (the ledger's last commits at shutdown).
  std::shared_ptr<prometheus::Registry> shared_registry() { return registry_; }

  // Adds `collectable` to every later scrape; the exporter keeps it alive.
  void Add(std::shared_ptr<prometheus::Collectable> collectable);

 private:
  MetricsExporter() = default;

  // Whether a scrape's basic-auth user and password are right.
  bool Authorize(const std::string& user, const std::string& password) const;

  // Constant after Start; declared before exposer_ so the HTTP threads that
  // call Authorize stop before these go.
  std::string auth_user_;
  std::unique_ptr<SecretCheck> auth_password_;
  std::unique_ptr<AuthFailureCounters> auth_failures_;

  std::unique_ptr<prometheus::Exposer> exposer_;
  std::shared_ptr<prometheus::Registry> registry_;
  std::string bound_address_;
  absl::Mutex mu_;
  std::vector<std::shared_ptr<prometheus::Collectable>> owned_
      ABSL_GUARDED_BY(mu_);
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_METRICS_EXPORTER_H_
