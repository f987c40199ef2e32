// File: daemon/server/grpc_server.cc
#include "daemon/server/grpc_server.h"

#include <grpc/grpc.h>
#include <grpcpp/health_check_service_interface.h>
#include <grpcpp/security/server_credentials.h>
#include <grpcpp/server_builder.h>

#include <chrono>
#include <memory>
#include <utility>
#include <vector>

#include "absl/status/status.h"
#include "absl/strings/str_cat.h"
#include "daemon/security/transport_security.h"
#include "daemon/server/request_errors.h"
#include "daemon/server/settings.h"
#include "daemon/util/address.h"
#include "daemon/util/event_log.h"

namespace plumbline::daemon {

DaemonServer::DaemonServer(SetRegistry* registry, ScoringLimits limits,
                           Ledger* ledger, ShadowOptions shadows)
    : registry_(registry),
      service_(registry, limits, ledger, std::move(shadows)),
      outcomes_(ledger, limits.max_batch_records) {}

absl::StatusOr<std::unique_ptr<DaemonServer>> DaemonServer::Start(
    const DaemonOptions& options, SetRegistry* registry, Ledger* ledger,
    ServerAttachments attachments) {
  // Checked first: a refused transport must not leave a half-built server.
  absl::StatusOr<ServerTransport> transport =
      ServerTransportFor(options.listen, options.security);
  if (!transport.ok()) return transport.status();
  ScoringLimits limits;
  limits.max_batch_records = options.max_batch_records;
  limits.max_reasons = options.max_reasons;
  std::unique_ptr<DaemonServer> daemon(new DaemonServer(
      registry, limits, ledger, std::move(attachments.shadows)));

  grpc::EnableDefaultHealthCheckService(true);
  grpc::ServerBuilder builder;
  int port = 0;
  builder.AddListeningPort(options.listen, transport->credentials, &port);
  // gRPC sets SO_REUSEPORT by default, which would let a second plumbd bind
  // the same port and silently share the traffic; refuse that instead.
  builder.AddChannelArgument(GRPC_ARG_ALLOW_REUSEPORT, 0);
  builder.RegisterService(&daemon->service_);
  builder.RegisterService(&daemon->outcomes_);
  for (const auto& [service, name] : attachments.services) {
    builder.RegisterService(service);
  }
  // The parse-error interceptor first: the others (request metrics) then
  // see the status it rewrites.
  std::vector<
      std::unique_ptr<grpc::experimental::ServerInterceptorFactoryInterface>>
      interceptors;
  interceptors.push_back(MakeParseErrorInterceptorFactory());
  for (auto& interceptor : attachments.interceptors) {
    interceptors.push_back(std::move(interceptor));
  }
  builder.experimental().SetInterceptorCreators(std::move(interceptors));
  ApplyServerSettings(options.grpc, options.max_message_bytes, &builder);
  daemon->server_ = builder.BuildAndStart();
  if (daemon->server_ == nullptr || port == 0) {
    return absl::UnavailableError(absl::StrCat(
        "cannot listen on ", options.listen,
        " (address in use, or not a HOST:PORT this machine has?)"));
  }
  daemon->bound_address_ = BoundAddress(options.listen, port);
  LogEvent(LogLevel::kInfo, "grpc_transport",
           {{"addr", daemon->bound_address_},
            {"mode", transport->mode},
            {"reflection", options.grpc.reflection() ? "on" : "off"}});
  if (transport->mode == "plaintext" && !IsLoopbackListen(options.listen)) {
    LogEvent(LogLevel::kWarning, "plaintext_non_loopback",
             {{"addr", daemon->bound_address_},
              {"effect",
               "records, scores and bearer tokens cross the network "
               "unencrypted (security.allow_plaintext_non_loopback is true)"}});
  }

  grpc::HealthCheckServiceInterface* health =
      daemon->server_->GetHealthCheckService();
  health->SetServingStatus("", true);
  health->SetServingStatus(kScoringServiceName, true);
  health->SetServingStatus(kOutcomesServiceName, true);
  for (const auto& [service, name] : attachments.services) {
    health->SetServingStatus(name, true);
  }
  for (const std::string& name : registry->Names()) {
    health->SetServingStatus(name, true);
  }
  return daemon;
}

void DaemonServer::Reload() {
  absl::StatusOr<ReloadReport> report = registry_->Reload();
  if (!report.ok()) return;  // logged by the registry; nothing changed
  UpdateHealth(*report);
  LogEvent(LogLevel::kInfo, "reload_done",
           {{"sets", absl::StrCat(registry_->Names().size())},
            {"loaded", absl::StrCat(report->loaded.size())},
            {"unloaded", absl::StrCat(report->unloaded.size())},
            {"rejected", absl::StrCat(report->rejected_files.size())}});
}

void DaemonServer::UpdateHealth(const ReloadReport& report) {
  absl::MutexLock lock(&mu_);
  if (health_stopped_) return;
  grpc::HealthCheckServiceInterface* health = server_->GetHealthCheckService();
  for (const std::string& name : report.unloaded) {
    health->SetServingStatus(name, false);
  }
  for (const std::string& name : report.loaded) {
    health->SetServingStatus(name, true);
  }
}

void DaemonServer::StopServingHealth() {
  absl::MutexLock lock(&mu_);
  if (health_stopped_) return;
  health_stopped_ = true;
  // Marks every name NOT_SERVING and ignores later updates.
  server_->GetHealthCheckService()->Shutdown();
}

void DaemonServer::Shutdown(absl::Duration deadline) {
  StopServingHealth();
  {
    absl::MutexLock lock(&mu_);
    if (shut_down_) return;
    shut_down_ = true;
  }
  server_->Shutdown(absl::ToChronoTime(absl::Now() + deadline));
}

void DaemonServer::Wait() { server_->Wait(); }

}  // namespace plumbline::daemon
