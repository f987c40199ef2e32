// File: daemon/services/monitor.h
//
// The gRPC service plumbline.v1.Monitor: GetSetHealth answers with the
// monitor's last evaluation of a loaded set. Created and registered by
// DaemonServer.
//
// Thread-safe: the registry and the monitor are; the service keeps no state
// of its own.
#ifndef PLUMBLINE_DAEMON_SERVICES_MONITOR_H_
#define PLUMBLINE_DAEMON_SERVICES_MONITOR_H_

#include "daemon/health/monitor.h"
#include "daemon/scoring/set_registry.h"
#include "plumbline/v1/monitor.grpc.pb.h"

namespace plumbline::daemon {

class MonitorService final : public v1::Monitor::Service {
 public:
  // Both must outlive the service.
  MonitorService(const SetRegistry* registry, const HealthMonitor* monitor);

  // INVALID_ARGUMENT for an empty set name, NOT_FOUND (naming the loaded
  // sets) for a set that is not loaded.
  grpc::Status GetSetHealth(grpc::ServerContext* context,
                            const v1::GetSetHealthRequest* request,
                            v1::SetHealth* reply) override;

 private:
  const SetRegistry* const registry_;
  const HealthMonitor* const monitor_;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SERVICES_MONITOR_H_
