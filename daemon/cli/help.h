// File: daemon/cli/help.h
//
// plumbctl's help texts, made from the command table (command_table.h) and
// the CLI11 subcommands it declared, so help cannot drift from what the
// parser accepts:
//   CommandUsage  the usage lines a usage error prints (a few lines)
//   CommandHelp   `plumbctl help COMMAND`, `plumbctl COMMAND --help`: usage,
//                 description, the command's flags, the global flags
//   MainHelp      `plumbctl help`, `plumbctl --help`: usage, the commands
//                 with their summaries, the global flags
// Flags are listed under their first spelling (--set_file); the '-'
// spelling (--set-file) is accepted too and said so once.
//
// Thread-safe: pure functions of their arguments.
#ifndef PLUMBLINE_DAEMON_CLI_HELP_H_
#define PLUMBLINE_DAEMON_CLI_HELP_H_

#include <CLI/CLI.hpp>
#include <string>
#include <vector>

#include "daemon/cli/command_table.h"

namespace plumbline::daemon {

// The CLI11 option group of the global flags; help lists them apart.
inline constexpr char kGlobalFlagGroup[] = "global flags";

// A command of the parser: its table entry and its CLI11 subcommand.
struct HelpEntry {
  const CommandSpec* spec;  // must outlive the call
  const CLI::App* app;      // must outlive the call
};

// "usage: plumbctl health --set NAME [--format text|json]\n" (one line per
// usage form) and "run 'plumbctl help health' for its flags\n".
std::string CommandUsage(const HelpEntry& command);

// The whole help of one command; `global_note` ends it with the names of
// the global flags (not in the manual, which lists them once).
std::string CommandHelp(const HelpEntry& command, bool global_note = true);

// The help of plumbctl: `main` is the top-level app (its options are the
// global flags), `commands` every command in the order to list them.
std::string MainHelp(const CLI::App& main,
                     const std::vector<HelpEntry>& commands);

// The short usage of plumbctl for errors before any command: the usage
// line, the command names and where to read more.
std::string MainUsage(const std::vector<HelpEntry>& commands);

// "--set NAME", "--verbose": the option's first spelling and value name.
std::string FlagSynopsis(const CLI::Option& option);

// The options of `app` a user types: neither positionals nor help flags;
// with or without the global ones.
std::vector<const CLI::Option*> UserFlags(const CLI::App& app,
                                          bool with_global);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CLI_HELP_H_
