// File: daemon/services/monitor.cc
#include "daemon/services/monitor.h"

#include <utility>

#include "daemon/access/access_control.h"
#include "daemon/scoring/core.h"
#include "daemon/util/grpc_status.h"

namespace plumbline::daemon {

MonitorService::MonitorService(const SetRegistry* registry,
                               const HealthMonitor* monitor)
    : registry_(registry), monitor_(monitor) {}

grpc::Status MonitorService::GetSetHealth(
    grpc::ServerContext* context, const v1::GetSetHealthRequest* request,
    v1::SetHealth* reply) {
  // Read-only figures a scoring service may watch: the score role suffices.
  if (grpc::Status s = Admit(context, Role::kScore); !s.ok()) return s;
  if (absl::Status s = CheckSetName(request->set()); !s.ok()) {
    return ToGrpcStatus(s);
  }
  if (registry_->Find(request->set()) == nullptr) {
    return ToGrpcStatus(SetNotFound(request->set(), registry_->Names()));
  }
  absl::StatusOr<v1::SetHealth> health = monitor_->Health(request->set());
  if (!health.ok()) return ToGrpcStatus(health.status());
  *reply = *std::move(health);
  return grpc::Status::OK;
}

}  // namespace plumbline::daemon
