// File: daemon/server/health_options.h
//
// The monitor's settings from plumbd's DaemonOptions: the windows and the
// drift policy as the config file gave them (config.proto WindowConfig and
// DriftPolicy), checked and turned into HealthMonitorOptions. plumbd calls
// it once at startup and refuses to start on an error.
//
//   absl::StatusOr<HealthMonitorOptions> o =
//       HealthMonitorOptionsFrom(options.windows, options.drift_policy);
//
// Thread-safe: a pure function.
#ifndef PLUMBLINE_DAEMON_SERVER_HEALTH_OPTIONS_H_
#define PLUMBLINE_DAEMON_SERVER_HEALTH_OPTIONS_H_

#include "absl/status/statusor.h"
#include "daemon/health/monitor.h"
#include "daemon/server/options.h"

namespace plumbline::daemon {

// INVALID_ARGUMENT naming the config field (windows.labelled_count,
// drift_policy.thresholds[1].metric, ...) for settings the monitor cannot
// use.
absl::StatusOr<HealthMonitorOptions> HealthMonitorOptionsFrom(
    const WindowOptions& windows, const DriftPolicyOptions& drift_policy);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SERVER_HEALTH_OPTIONS_H_
