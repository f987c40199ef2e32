// File: daemon/cli/registry.h
//
// plumbctl's commands for the life of set versions, over plumbd's Registry
// service (admin role): versions, load, activate, approve, shadow,
// rollback, refit and audit. Each prints what changed, or the table asked
// for, to `out`.
//
//   RegistryCommand command{.name = "approve", .set = "courier",
//                           .version = "refit-20261202T031500Z-j3",
//                           .actor = "alice", .reason = "reviewed"};
//   absl::Status s = RunRegistryCommand(client, command, std::cout);
//
// Thread-safe: no shared state, but it writes to the given stream.
#ifndef PLUMBLINE_DAEMON_CLI_REGISTRY_H_
#define PLUMBLINE_DAEMON_CLI_REGISTRY_H_

#include <ostream>
#include <string>

#include "absl/status/status.h"
#include "daemon/cli/commands.h"
#include "daemon/cli/output.h"

namespace plumbline::daemon {

struct RegistryCommand {
  // "versions", "load", "activate", "approve", "shadow", "rollback",
  // "refit" or "audit".
  std::string name;
  std::string set;
  std::string version;
  // load: the set file to send as a candidate.
  std::string set_file;
  // Recorded in the audit table.
  std::string actor;
  std::string reason;
  // versions, audit: a table or the reply as JSON (daemon/cli/output.h).
  OutputFormat format = OutputFormat::kText;
  // load, activate, approve, shadow: serve a version whose inputs differ
  // from the active one's in a way today's calls would notice (recorded in
  // the audit; see registry.proto "Schema changes").
  bool allow_schema_change = false;
};

// The default actor: "$USER@host" ("unknown@host" without USER).
std::string DefaultActor();

// A usage error (INVALID_ARGUMENT "approve needs --version") when a flag
// the command needs is missing; OK otherwise. Nothing is sent.
absl::Status CheckRegistryFlags(const RegistryCommand& command);

// CheckRegistryFlags' error, else plumbd's status.
absl::Status RunRegistryCommand(const ClientOptions& client,
                                const RegistryCommand& command,
                                std::ostream& out);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CLI_REGISTRY_H_
