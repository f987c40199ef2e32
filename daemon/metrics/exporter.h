// File: daemon/metrics/exporter.h
//
// plumbd's metrics listener: an HTTP server (Debian's civetweb) answering
// GET /metrics in the Prometheus text exposition format, with one registry
// for the metrics the daemon updates as it goes (requests, ledger commits)
// and any number of collectables computed at scrape time (the health
// figures, the ledger queue); and, once pages are attached, every other
// path from an HttpPages object (the model-health page, daemon/web).
//
//   auto exporter = MetricsExporter::Start("127.0.0.1:7391");
//   RequestMetrics requests((*exporter)->registry());
//   (*exporter)->Add(std::make_shared<HealthMetrics>(monitor));
//   (*exporter)->AttachPages(&pages);   // ... DetachPages() before it goes
//   LogEvent(..., {{"addr", (*exporter)->bound_address()}});
//
// /metrics answers byte for byte as prometheus-cpp's pull Exposer did
// before plumbd served the page (same status lines and headers, gzip when
// the scraper accepts it, the exposer_* families of the Exposer first, then
// the registry, then the collectables in the order added), so scrapers,
// alert rules and dashboards see no change; tests/daemon/metrics compares
// the two on one registry. The Exposer embeds civetweb's server but cannot
// serve other paths, hence the server of our own; /metrics is serialised
// by prometheus-cpp core's TextSerializer as before.
//
// With a MetricsAuthConfig whose username is set, every path asks for HTTP
// basic auth: the user must match and the password must match the stored
// salted hash (daemon/security/token_hash.h). Refused attempts are counted
// in plumbline_auth_failures_total{reason="metrics_password"} and logged
// (event=auth_refused endpoint=metrics|pages), without the password.
//
//   auto exporter = MetricsExporter::Start(options.metrics_listen,
//                                          options.security.metrics_auth());
//
// GET /serving is the readiness probe a proxy in front of several plumbd
// replicas checks (haproxy's `option httpchk GET /serving`): 200 `serving`
// once plumbd serves, 503 `draining` from the start of its drain, 503
// `starting` before. It is never behind the basic auth above: a balancer's
// probe carries no password, and the answer reveals one bit.
//
//   (*exporter)->SetServing(ServingState::kServing);   // plumbd is up
//   (*exporter)->SetServing(ServingState::kDraining);  // SIGTERM, drain
//
// Thread-safe: the registry is; Add, AttachPages, DetachPages and
// SetServing may be called while requests run. Collectables are scraped on the
// listener's own threads until it is destroyed, so whatever they read must
// outlive the exporter.
#ifndef PLUMBLINE_DAEMON_METRICS_EXPORTER_H_
#define PLUMBLINE_DAEMON_METRICS_EXPORTER_H_

#include <atomic>
#include <memory>
#include <string>
#include <utility>
#include <vector>

#include "absl/base/thread_annotations.h"
#include "absl/status/statusor.h"
#include "absl/synchronization/mutex.h"
#include "daemon/access/auth_metrics.h"
#include "daemon/security/token_hash.h"
#include "plumbline/v1/security.pb.h"
#include "prometheus/collectable.h"
#include "prometheus/counter.h"
#include "prometheus/registry.h"
#include "prometheus/summary.h"

struct mg_connection;
struct mg_context;

namespace plumbline::daemon {

// One answer of an HttpPages object.
struct HttpReply {
  int status = 200;  // 200, 404, ...
  std::string content_type = "text/html; charset=utf-8";
  std::string body;
  // Further headers, e.g. {"Content-Disposition", "..."}.
  std::vector<std::pair<std::string, std::string>> headers;
};

// What the metrics listener serves besides /metrics. Get is called on the
// listener's threads, several at once: implementations are thread-safe.
class HttpPages {
 public:
  virtual ~HttpPages() = default;
  // GET `path` (percent-decoded, e.g. "/sets/courier") with the raw query
  // string ("" when none).
  virtual HttpReply Get(const std::string& path, const std::string& query) = 0;
};

// What GET /serving answers.
enum class ServingState {
  kStarting,  // 503 "starting": plumbd is not taking calls yet
  kServing,   // 200 "serving"
  kDraining,  // 503 "draining": shutting down, send new calls elsewhere
};

class MetricsExporter {
 public:
  // Serves /metrics on `listen` (HOST:PORT; port 0 picks a free port),
  // behind basic auth if auth.username() is set. UNAVAILABLE naming the
  // address when it cannot be bound; INVALID_ARGUMENT naming
  // security.metrics_auth.password_hash if it does not parse.
  static absl::StatusOr<std::unique_ptr<MetricsExporter>> Start(
      const std::string& listen, const v1::MetricsAuthConfig& auth = {});

  // Stops the HTTP server (waits for requests in flight).
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

  // Serves every path other than /metrics from `pages` (404 before, and
  // after DetachPages). `pages` must stay valid until DetachPages returns;
  // DetachPages waits for the page requests in flight.
  void AttachPages(HttpPages* pages);
  void DetachPages();

  // What GET /serving answers from now on (kStarting until first called).
  void SetServing(ServingState state) { serving_.store(state); }

 private:
  MetricsExporter() = default;

  // civetweb request handlers; `cbdata` is the exporter.
  static int HandleMetrics(mg_connection* conn, void* cbdata);
  static int HandlePage(mg_connection* conn, void* cbdata);
  static int HandleServing(mg_connection* conn, void* cbdata);

  // Whether the request's basic-auth user and password are right (true
  // without auth); writes the 401 answer when not.
  bool Admit(mg_connection* conn, const char* endpoint);
  bool Authorize(const std::string& user, const std::string& password,
                 const char* endpoint) const;
  void ServeMetrics(mg_connection* conn);

  // Constant after Start; declared before the server so the HTTP threads
  // that use them stop before these go.
  std::string auth_user_;
  std::unique_ptr<SecretCheck> auth_password_;
  std::unique_ptr<AuthFailureCounters> auth_failures_;
  std::shared_ptr<prometheus::Registry> registry_;
  // The families prometheus-cpp's Exposer exported about itself, kept so
  // /metrics keeps every family it had (values: this server's).
  std::shared_ptr<prometheus::Registry> exposer_registry_;
  prometheus::Counter* bytes_transferred_ = nullptr;
  prometheus::Counter* scrapes_ = nullptr;
  prometheus::Summary* request_latencies_ = nullptr;
  std::string bound_address_;

  std::atomic<ServingState> serving_{ServingState::kStarting};

  absl::Mutex mu_;
  std::vector<std::shared_ptr<prometheus::Collectable>> owned_
      ABSL_GUARDED_BY(mu_);

  // Held shared by a page request for its whole answer; exclusively by
  // AttachPages / DetachPages.
  absl::Mutex pages_mu_;
  HttpPages* pages_ ABSL_GUARDED_BY(pages_mu_) = nullptr;

  // Last: stopped first (mg_stop waits for the requests in flight).
  mg_context* server_ = nullptr;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_METRICS_EXPORTER_H_
