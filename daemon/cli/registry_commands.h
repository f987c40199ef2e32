// File: daemon/cli/registry_commands.h
//
// The table entries (command_table.h) of plumbctl's registry commands:
// versions, load, approve, activate, shadow, rollback, refit and audit,
// each with its own flags, run by RunRegistryCommand (registry.h).
//
// Thread-safe: adds immutable entries; called once, by PlumbctlCommands.
#ifndef PLUMBLINE_DAEMON_CLI_REGISTRY_COMMANDS_H_
#define PLUMBLINE_DAEMON_CLI_REGISTRY_COMMANDS_H_

#include <vector>

#include "daemon/cli/command_table.h"

namespace plumbline::daemon {

// Appends the registry commands to `table`, in the order help lists them.
void AppendRegistryCommands(std::vector<CommandSpec>* table);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CLI_REGISTRY_COMMANDS_H_
