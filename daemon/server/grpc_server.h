// File: daemon/server/grpc_server.h
//
// plumbd's gRPC server: the Scoring and Outcomes services (both writing to
// the ledger), the standard gRPC health service and the wiring between the
// set registry and health. Health names:
//   ""                       SERVING while the server is up
//   "plumbline.v1.Scoring"   SERVING while the server is up
//   "plumbline.v1.Outcomes"  SERVING while the server is up
//   <extra service names>    SERVING while the server is up (attachments)
//   <set name>               SERVING while that set is loaded, NOT_SERVING
//                            after a reload unloads it
// Shutdown turns every name NOT_SERVING before the server stops taking calls.
// The transport follows options.security (daemon/transport_security.h: TLS,
// mutual TLS, or plain text only on loopback unless allowed) and the server
// settings options.grpc (daemon/server_settings.h: keepalive, reflection);
// Start logs event=grpc_transport with the mode. Access control is not set
// here: the handlers call Admit (daemon/access_control.h).
//
//   auto server = DaemonServer::Start(options, &registry, ledger.get());
//   ... (*server)->Reload(); ... (*server)->Shutdown(absl::Seconds(5));
//   (*server)->Wait();
//
// Thread-safe: Reload and Shutdown may be called from any thread (plumbd calls
// them from its signal thread) while Wait blocks in another.
#ifndef PLUMBLINE_DAEMON_SERVER_GRPC_SERVER_H_
#define PLUMBLINE_DAEMON_SERVER_GRPC_SERVER_H_

#include <grpcpp/server.h>
#include <grpcpp/support/server_interceptor.h>

#include <memory>
#include <string>
#include <utility>
#include <vector>

#include "absl/base/thread_annotations.h"
#include "absl/status/statusor.h"
#include "absl/synchronization/mutex.h"
#include "absl/time/time.h"
#include "daemon/ledger/ledger.h"
#include "daemon/scoring/set_registry.h"
#include "daemon/server/options.h"
#include "daemon/services/outcomes.h"
#include "daemon/services/scoring.h"

namespace plumbline::daemon {

// Health service names of the scoring and outcomes services.
inline constexpr char kScoringServiceName[] = "plumbline.v1.Scoring";
inline constexpr char kOutcomesServiceName[] = "plumbline.v1.Outcomes";

// What plumbd attaches to the server besides its own two services.
struct ServerAttachments {
  // How the scoring service accounts for shadows (daemon/services/scoring.h).
  ShadowOptions shadows;
  // More services to register, each with the health name that is SERVING
  // while the server is up. Must outlive the server.
  std::vector<std::pair<grpc::Service*, std::string>> services;
  // Server interceptors (e.g. request metrics), in call order.
  std::vector<
      std::unique_ptr<grpc::experimental::ServerInterceptorFactoryInterface>>
      interceptors;
};

class DaemonServer {
 public:
  // Builds and starts the server on options.listen. `registry` must already
  // be loaded; `registry` and `ledger` must outlive the server. UNAVAILABLE
  // if the address cannot be bound; INVALID_ARGUMENT or NOT_FOUND naming the
  // config field if options.security's TLS files are wrong or plain text
  // is refused on a non-loopback address.
  static absl::StatusOr<std::unique_ptr<DaemonServer>> Start(
      const DaemonOptions& options, SetRegistry* registry, Ledger* ledger,
      ServerAttachments attachments = {});

  DaemonServer(const DaemonServer&) = delete;
  DaemonServer& operator=(const DaemonServer&) = delete;

  // HOST:PORT actually bound (the real port when options.listen asked for 0).
  const std::string& bound_address() const { return bound_address_; }

  // Reloads the registry and updates the per-set health names.
  void Reload();

  // Updates the per-set health names after the registry changed in another
  // way (a lifecycle refresh: activation, rollback).
  void UpdateHealth(const ReloadReport& report);

  // Turns all health names NOT_SERVING, then stops the server: calls in
  // flight may run until `deadline` from now, later ones are refused.
  void Shutdown(absl::Duration deadline);
  // Turns every health name NOT_SERVING for good while the server goes on
  // taking calls (the drain before Shutdown). Idempotent.
  void StopServingHealth();

  // Blocks until the server has shut down.
  void Wait();

 private:
  DaemonServer(SetRegistry* registry, ScoringLimits limits, Ledger* ledger,
               ShadowOptions shadows);

  // Constant after Start.
  SetRegistry* const registry_;
  ScoringService service_;
  OutcomesService outcomes_;
  std::unique_ptr<grpc::Server> server_;
  std::string bound_address_;

  // Guarded by mu_: serializes health updates against the drain and
  // shutdown, so a reload racing with them cannot mark a set SERVING again.
  absl::Mutex mu_;
  bool health_stopped_ ABSL_GUARDED_BY(mu_) = false;
  bool shut_down_ ABSL_GUARDED_BY(mu_) = false;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SERVER_GRPC_SERVER_H_
