// File: daemon/cli/command_line.h
//
// plumbctl's command line: a CLI11 parser made from the command table
// (command_table.h) plus the built-in commands `help` and `completion`,
// the global flags on the top level and on every command, the error
// messages of a bad command line, and the run of the chosen command.
//
//   int main(int argc, char** argv) {
//     return RunPlumbctl(std::vector<std::string>(argv + 1, argv + argc),
//                        std::cout, std::cerr);
//   }
//
// Exit status: 0 done (also help and --version, printed on `out`); 1 a
// failed operation ("plumbctl: CODE: message" on `err`); 2 a usage error:
// "plumbctl: " and what was wrong (naming the flag, command or value), then
// the usage of the command (or of plumbctl), on `err`.
//
// CLI11 reports parse errors as exceptions; they are caught here and never
// leave RunPlumbctl. Everything past parsing reports absl::Status values.
//
// Thread-safe: no; RunPlumbctl installs process-wide client security (see
// client.h). Call it once, from main.
#ifndef PLUMBLINE_DAEMON_CLI_COMMAND_LINE_H_
#define PLUMBLINE_DAEMON_CLI_COMMAND_LINE_H_

#include <CLI/CLI.hpp>
#include <memory>
#include <ostream>
#include <string>
#include <vector>

#include "daemon/cli/command_table.h"
#include "daemon/cli/help.h"

namespace plumbline::daemon {

// Parses `args` (argv without argv[0]) and runs the command they name.
int RunPlumbctl(const std::vector<std::string>& args, std::ostream& out,
                std::ostream& err);

// The values of the global flags.
struct GlobalFlags {
  std::string addr = "127.0.0.1:7390";
  std::string timeout_ms = "10000";
  std::string token;
  std::string tls_ca;
  std::string tls_cert;
  std::string tls_key;
  bool version = false;
};

// plumbctl's parser. Built from the table once per process; also read by
// the bash completion (completion.h) and the manual (help --all).
class PlumbctlParser {
 public:
  struct Command {
    const CommandSpec* spec;  // an entry of the table or a built-in
    CLI::App* app;            // its subcommand, owned by the parser
    CommandRun run;
  };

  PlumbctlParser();
  PlumbctlParser(const PlumbctlParser&) = delete;
  PlumbctlParser& operator=(const PlumbctlParser&) = delete;

  CLI::App& app() { return *app_; }
  const CLI::App& app() const { return *app_; }
  const GlobalFlags& globals() const { return globals_; }
  // Every command in help's order: the table, then help and completion.
  const std::vector<Command>& commands() const { return commands_; }
  std::vector<HelpEntry> HelpEntries() const;

  // The command the parse selected (its deepest subcommand), or null.
  const Command* Selected() const;
  // The command named by `words` ({"token", "new"}), or null.
  const Command* Find(const std::vector<std::string>& words) const;

 private:
  // Constant after construction.
  std::unique_ptr<CLI::App> app_;
  std::vector<CommandSpec> builtins_;
  std::vector<Command> commands_;
  // Written by the parse.
  GlobalFlags globals_;
  std::vector<std::string> help_topic_;
  bool help_all_ = false;
  std::string completion_shell_;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CLI_COMMAND_LINE_H_
