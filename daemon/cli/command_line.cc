// File: daemon/cli/command_line.cc
#include "daemon/cli/command_line.h"

#include <algorithm>
#include <cstdlib>
#include <iostream>

#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_join.h"
#include "absl/strings/str_replace.h"
#include "absl/strings/str_split.h"
#include "absl/strings/strip.h"
#include "absl/time/time.h"
#include "daemon/cli/client.h"
#include "daemon/cli/completion.h"
#include "daemon/util/version.h"

namespace plumbline::daemon {
namespace {

// The global flags, on the top level and on every command of the table.
void AddGlobalFlags(CLI::App& app, GlobalFlags* flags) {
  const auto global = [&](CLI::Option* option) {
    option->group(kGlobalFlagGroup);
  };
  global(AddValueFlag(app, "addr", &flags->addr, "HOST:PORT",
                      "plumbd's gRPC address (default 127.0.0.1:7390)"));
  global(AddValueFlag(app, "timeout_ms", &flags->timeout_ms, "MS",
                      "deadline of each call to plumbd, in milliseconds "
                      "(default 10000)"));
  global(AddValueFlag(app, "token", &flags->token, "TOKEN",
                      "bearer token sent to plumbd (default: "
                      "$PLUMBLINE_TOKEN; prefer the variable, the process "
                      "list shows flags)"));
  global(AddValueFlag(app, "tls_ca", &flags->tls_ca, "FILE",
                      "PEM CA bundle to verify plumbd's certificate; turns "
                      "TLS on"));
  global(AddValueFlag(app, "tls_cert", &flags->tls_cert, "FILE",
                      "PEM client certificate for mutual TLS (with "
                      "--tls_key); turns TLS on"));
  global(AddValueFlag(app, "tls_key", &flags->tls_key, "FILE",
                      "PEM private key of --tls_cert"));
}

// --token (or PLUMBLINE_TOKEN) and the --tls_* flags, for every command
// that dials plumbd.
absl::Status InstallClientSecurity(const GlobalFlags& flags) {
  ClientSecurity security;
  security.token = flags.token;
  if (const char* env = std::getenv("PLUMBLINE_TOKEN");
      security.token.empty() && env != nullptr) {
    security.token = env;
  }
  security.tls.ca_file = flags.tls_ca;
  security.tls.cert_file = flags.tls_cert;
  security.tls.key_file = flags.tls_key;
  return SetClientSecurity(security);
}

// "--set-file=x" -> "set_file": how a typed flag is compared with names.
std::string FlagKey(absl::string_view arg) {
  arg = arg.substr(0, arg.find('='));
  while (absl::StartsWith(arg, "-")) arg.remove_prefix(1);
  return absl::StrReplaceAll(arg, {{"-", "_"}});
}

bool HasFlag(const CLI::App& app, absl::string_view key) {
  for (const CLI::Option* option : app.get_options()) {
    for (const std::string& name : option->get_lnames()) {
      if (name == key) return true;
    }
  }
  return false;
}

// What a CLI11 parse error means, in plumbctl's words. `selected` is the
// command the arguments got to (null: none yet).
std::string ParseErrorMessage(const CLI::ParseError& error,
                              const PlumbctlParser& parser,
                              const PlumbctlParser::Command* selected) {
  const std::string command =
      selected == nullptr ? "" : CommandName(*selected->spec);
  const std::string where = command.empty() ? "" : absl::StrCat(command, ": ");
  if (dynamic_cast<const CLI::ExtrasError*>(&error) != nullptr) {
    // Arguments before the command name were left on the top level; the
    // rest on the command.
    std::vector<std::string> extras = parser.app().remaining();
    const bool before_command = !extras.empty();
    if (selected != nullptr && extras.empty()) {
      extras = selected->app->remaining();
    }
    if (extras.empty()) return error.what();
    const std::string& arg = extras.front();
    if (!absl::StartsWith(arg, "-") || arg == "-") {
      if (selected == nullptr)
        return absl::StrCat("unknown command '", arg, "'");
      return absl::StrCat(where, "unexpected argument '", arg, "'");
    }
    const std::string flag = arg.substr(0, arg.find('='));
    const std::string key = FlagKey(arg);
    if (before_command && selected != nullptr && HasFlag(*selected->app, key)) {
      return absl::StrCat(flag, " is a flag of ", command,
                          ": write it after the command name (plumbctl ",
                          command, " ", flag, " ...)");
    }
    std::vector<std::string> owners;
    for (const PlumbctlParser::Command& other : parser.commands()) {
      if (&other != selected && HasFlag(*other.app, key)) {
        owners.push_back(CommandName(*other.spec));
      }
    }
    std::string message = absl::StrCat(where, "unknown flag ", flag);
    if (!owners.empty()) {
      absl::StrAppend(&message, " (a flag of ", absl::StrJoin(owners, ", "),
                      ")");
    }
    return message;
  }
  if (dynamic_cast<const CLI::RequiredError*>(&error) != nullptr &&
      selected != nullptr) {
    std::vector<std::string> missing;
    for (const CLI::Option* flag : UserFlags(*selected->app, false)) {
      if (flag->get_required() && flag->count() == 0) {
        missing.push_back(FlagSynopsis(*flag));
      }
    }
    if (!missing.empty()) {
      return absl::StrCat(command, " needs ", absl::StrJoin(missing, ", "));
    }
  }
  if (dynamic_cast<const CLI::RequiredError*>(&error) != nullptr &&
      !parser.app().get_subcommands().empty()) {
    // A command group without its subcommand ("token").
    const CLI::App* group = parser.app().get_subcommands().front();
    std::vector<std::string> subs;
    for (const CLI::App* sub :
         group->get_subcommands([](const CLI::App*) { return true; })) {
      subs.push_back(absl::StrCat(group->get_name(), " ", sub->get_name()));
    }
    return absl::StrCat(group->get_name(),
                        " needs a subcommand: ", absl::StrJoin(subs, ", "));
  }
  if (dynamic_cast<const CLI::ConversionError*>(&error) != nullptr) {
    // CLI11 writes "Could not convert: --verbose = maybe". Only switches
    // are typed (every other flag's value is text the command parses).
    absl::string_view what = error.what();
    if (absl::ConsumePrefix(&what, "Could not convert: ")) {
      const size_t eq = what.find(" = ");
      if (eq != absl::string_view::npos) {
        return absl::StrCat(where, what.substr(0, eq), ": '",
                            what.substr(eq + 3), "' is not true or false");
      }
    }
  }
  if (dynamic_cast<const CLI::ArgumentMismatch*>(&error) != nullptr) {
    // CLI11 writes "--set: 1 required NAME missing".
    const std::string what = error.what();
    if (absl::StartsWith(what, "--") && absl::StrContains(what, "missing")) {
      return absl::StrCat(where, what.substr(0, what.find(':')),
                          " needs a value");
    }
  }
  return absl::StrCat(where, error.what());
}

int Failure(const absl::Status& status, std::ostream& err) {
  err << "plumbctl: " << absl::StatusCodeToString(status.code()) << ": "
      << status.message() << "\n";
  return 1;
}

}  // namespace

PlumbctlParser::PlumbctlParser()
    : app_(std::make_unique<CLI::App>("plumbctl", "plumbctl")) {
  app_->set_help_flag("-h,--help");
  app_->require_subcommand(0, 1);
  AddGlobalFlags(*app_, &globals_);
  app_->add_flag("--version", globals_.version,
                 "print plumbctl's version and exit")
      ->group(kGlobalFlagGroup);

  // Built-in commands: they read the parser itself.
  builtins_.push_back(
      {.path = {"help"},
       .summary = "help on plumbctl or on one command",
       .description =
           "Prints the help of plumbctl, or of COMMAND (also `plumbctl "
           "COMMAND --help`). --all prints every command's help: the "
           "manual.",
       .usage = {"[COMMAND] [--all]"},
       .dials = false});
  builtins_.push_back(
      {.path = {"completion"},
       .summary = "print the bash completion script",
       .description =
           "Prints a bash completion script for plumbctl, made from the "
           "same command table as the parser. Load it with `source <(plumbctl "
           "completion bash)`; the Debian package installs it.",
       .usage = {"bash"},
       .dials = false});

  std::vector<const CommandSpec*> specs;
  for (const CommandSpec& spec : PlumbctlCommands()) specs.push_back(&spec);
  for (const CommandSpec& spec : builtins_) specs.push_back(&spec);
  for (const CommandSpec* spec : specs) {
    CLI::App* parent = app_.get();
    for (size_t i = 0; i + 1 < spec->path.size(); ++i) {
      CLI::App* group = nullptr;
      for (CLI::App* sub :
           parent->get_subcommands([](CLI::App*) { return true; })) {
        if (sub->get_name() == spec->path[i]) group = sub;
      }
      if (group == nullptr) {
        group = parent->add_subcommand(spec->path[i], "");
        group->require_subcommand(1);
      }
      parent = group;
    }
    CLI::App* command =
        parent->add_subcommand(spec->path.back(), spec->summary);
    Command entry{.spec = spec, .app = command, .run = nullptr};
    if (spec->declare) {
      entry.run = spec->declare(*command);
      AddGlobalFlags(*command, &globals_);
    }
    commands_.push_back(std::move(entry));
  }

  // help [COMMAND...] [--all]
  Command& help = commands_[commands_.size() - 2];
  help.app->add_option("command", help_topic_, "the command")
      ->type_name("COMMAND");
  help.app->add_flag("--all", help_all_, "every command's help: the manual");
  help.run = [this](const CommandContext& context) -> absl::Status {
    if (help_all_) {
      if (!help_topic_.empty()) {
        return UsageError("help takes a COMMAND or --all, not both");
      }
      *context.out << MainHelp(*app_, HelpEntries());
      // One section a command. help2man makes a line a heading of
      // plumbctl(1) when the next one is indented: "plumbctl NAME:" over
      // the command's usage lines, indented.
      for (const HelpEntry& entry : HelpEntries()) {
        const std::string text = CommandHelp(entry, /*global_note=*/false);
        const size_t usage_end = text.find("\n\n");
        *context.out << "\nplumbctl " << CommandName(*entry.spec) << ":\n";
        for (absl::string_view line :
             absl::StrSplit(text.substr(0, usage_end), '\n')) {
          *context.out << "  " << line << "\n";
        }
        *context.out << text.substr(usage_end + 1);
      }
      return absl::OkStatus();
    }
    if (help_topic_.empty()) {
      *context.out << MainHelp(*app_, HelpEntries());
      return absl::OkStatus();
    }
    const Command* topic = Find(help_topic_);
    if (topic == nullptr) {
      return UsageError(absl::StrCat("help: unknown command '",
                                     absl::StrJoin(help_topic_, " "), "'"));
    }
    *context.out << CommandHelp({topic->spec, topic->app});
    return absl::OkStatus();
  };

  // completion bash
  Command& completion = commands_.back();
  completion.app->add_option("shell", completion_shell_, "the shell")
      ->type_name("bash")
      ->required();
  completion.run = [this](const CommandContext& context) -> absl::Status {
    if (completion_shell_ != "bash") {
      return UsageError(absl::StrCat("completion: '", completion_shell_,
                                     "': only bash is supported"));
    }
    *context.out << BashCompletion(*app_, HelpEntries());
    return absl::OkStatus();
  };
}

std::vector<HelpEntry> PlumbctlParser::HelpEntries() const {
  std::vector<HelpEntry> entries;
  for (const Command& command : commands_) {
    entries.push_back({command.spec, command.app});
  }
  return entries;
}

const PlumbctlParser::Command* PlumbctlParser::Selected() const {
  const Command* selected = nullptr;
  for (const Command& command : commands_) {
    if (command.app->parsed()) selected = &command;
  }
  return selected;
}

const PlumbctlParser::Command* PlumbctlParser::Find(
    const std::vector<std::string>& words) const {
  for (const Command& command : commands_) {
    if (command.spec->path == words) return &command;
  }
  // "help token": the only command of the group.
  const Command* only = nullptr;
  int matches = 0;
  for (const Command& command : commands_) {
    if (command.spec->path.size() > words.size() &&
        std::equal(words.begin(), words.end(), command.spec->path.begin())) {
      only = &command;
      ++matches;
    }
  }
  return matches == 1 ? only : nullptr;
}

int RunPlumbctl(const std::vector<std::string>& args, std::ostream& out,
                std::ostream& err) {
  PlumbctlParser parser;
  // CLI11 takes the arguments last first.
  std::vector<std::string> reversed(args.rbegin(), args.rend());
  try {
    parser.app().parse(reversed);
  } catch (const CLI::CallForHelp&) {
    const PlumbctlParser::Command* selected = parser.Selected();
    out << (selected == nullptr ? MainHelp(parser.app(), parser.HelpEntries())
                                : CommandHelp({selected->spec, selected->app}));
    return 0;
  } catch (const CLI::ParseError& error) {
    const PlumbctlParser::Command* selected = parser.Selected();
    err << "plumbctl: " << ParseErrorMessage(error, parser, selected) << "\n"
        << (selected == nullptr
                ? MainUsage(parser.HelpEntries())
                : CommandUsage({selected->spec, selected->app}));
    return 2;
  }
  if (parser.globals().version) {
    out << "plumbctl " << kPlumblineVersion << "\n";
    return 0;
  }
  const PlumbctlParser::Command* selected = parser.Selected();
  if (selected == nullptr) {
    err << "plumbctl: no command given\n" << MainUsage(parser.HelpEntries());
    return 2;
  }
  const auto usage_error = [&](absl::string_view message) {
    err << "plumbctl: " << message << "\n"
        << CommandUsage({selected->spec, selected->app});
    return 2;
  };

  CommandContext context{.out = &out, .err = &err};
  context.client.addr = parser.globals().addr;
  absl::StatusOr<int> timeout_ms =
      ParseIntFlag("timeout_ms", parser.globals().timeout_ms, 1);
  if (!timeout_ms.ok()) return usage_error(timeout_ms.status().message());
  context.client.timeout = absl::Milliseconds(*timeout_ms);
  if (selected->spec->dials) {
    if (absl::Status s = InstallClientSecurity(parser.globals()); !s.ok()) {
      return s.code() == absl::StatusCode::kInvalidArgument
                 ? usage_error(s.message())
                 : Failure(s, err);
    }
  }
  const absl::Status status = selected->run(context);
  if (status.ok()) return 0;
  if (IsUsageError(status)) return usage_error(status.message());
  return Failure(status, err);
}

}  // namespace plumbline::daemon
