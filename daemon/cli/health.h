// File: daemon/cli/health.h
//
// plumbctl's `health` command: asks plumbd's Monitor service for a set's
// model-health figures and prints them as a table (daemon/
// monitor_health_table.h): the drift state and its reasons first, then the
// figures of each window, then per feature PSI, missing and out-of-range
// rates.
//
//   absl::Status s = RunHealthCommand(client, "courier", std::cout);
//
// Thread-safe: no shared state, but it writes to the given stream.
#ifndef PLUMBLINE_DAEMON_CLI_HEALTH_H_
#define PLUMBLINE_DAEMON_CLI_HEALTH_H_

#include <ostream>
#include <string>

#include "absl/status/status.h"
#include "daemon/cli/commands.h"

namespace plumbline::daemon {

// NOT_FOUND (naming the loaded sets) for a set plumbd has not loaded.
absl::Status RunHealthCommand(const ClientOptions& client,
                              const std::string& set, std::ostream& out);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CLI_HEALTH_H_
