// File: daemon/cli/command_table.h
//
// plumbctl's commands, one table entry each: the words that name it, a
// one-line summary, a paragraph of help, and a function that declares the
// command's own flags on its CLI11 subcommand and returns what runs once
// they are parsed. Everything else is made from this table: the parser and
// its error messages (command_line.h), the help texts and the manual page
// (help.h), the bash completion (completion.h). Adding a command is adding
// one entry to PlumbctlCommands() in command_table.cc.
//
//   CommandSpec{.path = {"health"},
//               .summary = "the model health of one set",
//               .description = "...",
//               .dials = true,
//               .declare = [](CLI::App& command) -> CommandRun {
//                 auto set = std::make_shared<std::string>();
//                 AddValueFlag(command, "set", set.get(), "NAME", "...")
//                     ->required();
//                 return [set](const CommandContext& context) { ... };
//               }};
//
// Flags are the command's own: a flag of another command is an error. The
// global flags (--addr, --timeout_ms, --token, --tls_*) are added to every
// command by command_line.cc and may come before or after its name.
// Values arrive as text; a command parses numbers itself and reports a bad
// value with UsageError, which plumbctl prints with the command's usage and
// exit status 2.
//
// Thread-safe: the table is immutable; a CommandRun is called once, from
// main's thread.
#ifndef PLUMBLINE_DAEMON_CLI_COMMAND_TABLE_H_
#define PLUMBLINE_DAEMON_CLI_COMMAND_TABLE_H_

#include <CLI/CLI.hpp>
#include <functional>
#include <ostream>
#include <string>
#include <vector>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "daemon/cli/commands.h"
#include "daemon/cli/output.h"

namespace plumbline::daemon {

// What a running command may use.
struct CommandContext {
  // plumbd's address and the deadline of each call (the global flags).
  ClientOptions client = {};
  // stdout and stderr; must outlive the run.
  std::ostream* out = nullptr;
  std::ostream* err = nullptr;
};

// Runs a command whose flags are parsed. A UsageError makes plumbctl print
// the message and the command's usage and exit 2; any other error prints
// "plumbctl: CODE: message" and exits 1.
using CommandRun = std::function<absl::Status(const CommandContext&)>;

struct CommandSpec {
  // The words that name the command: {"sets"}, {"token", "new"}.
  std::vector<std::string> path = {};
  // One line for the command list ("list the sets plumbd has loaded").
  std::string summary = {};
  // Paragraphs for `plumbctl help COMMAND`, separated by "\n".
  std::string description = {};
  // Usage lines after "plumbctl <path> " when the flags alone cannot say
  // which combinations are valid; empty: made from the flags (required
  // ones plain, optional ones in brackets).
  std::vector<std::string> usage = {};
  // True if the command talks to plumbd: the TLS and token flags are then
  // checked and applied before it runs.
  bool dials = true;
  // Declares the command's own flags on `command` and returns its run. The
  // flags' values live in the closure (shared_ptr), which the run reads.
  std::function<CommandRun(CLI::App& command)> declare = {};
};

// The table, in the order `plumbctl help` lists it.
const std::vector<CommandSpec>& PlumbctlCommands();

// "sets", "token new".
std::string CommandName(const CommandSpec& spec);

// Adds --NAME VALUE_NAME to `command`, writing its value to `value`
// (must outlive the parse). A NAME with '_' is also accepted with '-'
// (--set_file, --set-file); given twice, the last value wins (as with the
// Abseil flags plumbctl had before).
CLI::Option* AddValueFlag(CLI::App& command, absl::string_view name,
                          std::string* value, absl::string_view value_name,
                          absl::string_view help);
// Adds the switch --NAME (also --NAME=true|false).
CLI::Option* AddSwitch(CLI::App& command, absl::string_view name, bool* value,
                       absl::string_view help);
// Adds --format text|json, for commands that print what they read.
CLI::Option* AddFormatFlag(CLI::App& command, std::string* value);

// The usage error `message`: INVALID_ARGUMENT marked so that plumbctl
// prints the command's usage and exits 2.
absl::Status UsageError(absl::string_view message);
bool IsUsageError(const absl::Status& status);

// A flag's whole number >= `min`; a UsageError naming --`flag` otherwise.
absl::StatusOr<int> ParseIntFlag(absl::string_view flag,
                                 const std::string& text, int min);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CLI_COMMAND_TABLE_H_
