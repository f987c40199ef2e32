// File: daemon/cli/completion.h
//
// The bash completion script of plumbctl, written from the same parser the
// command line uses (command_line.h), so it offers exactly the commands and
// flags plumbctl accepts: command names (and `token new`), each command's
// flags plus the global ones, a flag's values where they are a fixed list
// (--format text|json, --role score|admin|metrics, ...) and file names where
// the value is a file (FILE, SET.json). `plumbctl completion bash` prints
// it; the Debian package installs it in
// /usr/share/bash-completion/completions/plumbctl.
//
// Thread-safe: a pure function of the parser it reads.
#ifndef PLUMBLINE_DAEMON_CLI_COMPLETION_H_
#define PLUMBLINE_DAEMON_CLI_COMPLETION_H_

#include <CLI/CLI.hpp>
#include <string>
#include <vector>

#include "daemon/cli/help.h"

namespace plumbline::daemon {

// `main` is the top-level app (global flags), `commands` every command.
std::string BashCompletion(const CLI::App& main,
                           const std::vector<HelpEntry>& commands);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CLI_COMPLETION_H_
