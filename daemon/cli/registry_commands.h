// File: daemon/cli/registry_commands.h
//
// The table entries (command_table.h) of plumbctl's registry commands:
// versions, load, approve, activate, shadow, rollback, refit and audit,
// each with its own flags, run by RunRegistryCommand (registry.h); and of
// the review commands show, diff and dossier (review.h).
//
// Thread-safe: adds immutable entries; called once, by PlumbctlCommands.
#ifndef PLUMBLINE_DAEMON_CLI_REGISTRY_COMMANDS_H_
#define PLUMBLINE_DAEMON_CLI_REGISTRY_COMMANDS_H_

#include <vector>

#include "daemon/cli/command_table.h"

namespace plumbline::daemon {

// Appends the registry commands to `table`, in the order help lists them,
// then the review commands.
void AppendRegistryCommands(std::vector<CommandSpec>* table);
// Appends show, diff and dossier.
void AppendReviewCommands(std::vector<CommandSpec>* table);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CLI_REGISTRY_COMMANDS_H_
