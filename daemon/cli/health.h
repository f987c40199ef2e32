// File: daemon/cli/health.h
//
// plumbctl's `health` command: asks plumbd's Monitor service for a set's
// model-health figures and prints them as a table (daemon/cli/
// health_table.h): the drift state and its reasons first, then the
// figures of each window, then per feature PSI, missing and out-of-range
// rates.
//
//   absl::Status s = RunHealthCommand(client, "courier", OutputFormat::kText,
//                                     std::cout);
//
// Thread-safe: no shared state, but it writes to the given stream.
#ifndef PLUMBLINE_DAEMON_CLI_HEALTH_H_
#define PLUMBLINE_DAEMON_CLI_HEALTH_H_

#include <ostream>
#include <string>

#include "absl/status/status.h"
#include "daemon/cli/commands.h"
#include "daemon/cli/output.h"

namespace plumbline::daemon {

// NOT_FOUND (naming the loaded sets) for a set plumbd has not loaded.
// Text: the table; JSON: the SetHealth message (daemon/cli/output.h).
absl::Status RunHealthCommand(const ClientOptions& client,
                              const std::string& set, OutputFormat format,
                              std::ostream& out);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CLI_HEALTH_H_
