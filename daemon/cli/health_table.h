// File: daemon/cli/health_table.h
//
// The text `plumbctl health --set NAME` prints for a plumbline.v1.SetHealth:
// the state and its reasons first, then the figures of each window side by
// side, then per feature its PSI, missing rate and out-of-range rate, and
// last why each undefined figure is undefined. Numbers are printed with six
// significant digits; they are the figures of the Prometheus exposition.
//
// Thread-safe: a pure function.
#ifndef PLUMBLINE_DAEMON_CLI_HEALTH_TABLE_H_
#define PLUMBLINE_DAEMON_CLI_HEALTH_TABLE_H_

#include <string>

#include "plumbline/v1/monitor.pb.h"

namespace plumbline::daemon {

std::string FormatSetHealth(const v1::SetHealth& health);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CLI_HEALTH_TABLE_H_
