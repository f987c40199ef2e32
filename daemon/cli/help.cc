// File: daemon/cli/help.cc
#include "daemon/cli/help.h"

#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_join.h"
#include "absl/strings/str_replace.h"
#include "absl/strings/str_split.h"
#include "daemon/util/text_table.h"

namespace plumbline::daemon {
namespace {

// Help is filled for an 80-column terminal.
constexpr size_t kWidth = 79;

bool IsSwitch(const CLI::Option& option) {
  return option.get_expected_max() == 0;
}

// `form` with the spaces that must not break a line replaced by '\x01':
// inside [...], (...) and '...', and between a flag and its value.
std::string Unbreakable(absl::string_view form) {
  std::string out;
  int depth = 0;
  bool quoted = false;
  size_t word_start = 0;
  for (size_t i = 0; i < form.size(); ++i) {
    const char c = form[i];
    if (c == '\'') quoted = !quoted;
    if (!quoted && (c == '[' || c == '(')) ++depth;
    if (!quoted && (c == ']' || c == ')')) --depth;
    if (c == ' ') {
      const bool after_flag = absl::StartsWith(form.substr(word_start), "--") ||
                              absl::StartsWith(form.substr(word_start), "[--");
      out.push_back(depth > 0 || quoted || after_flag ? '\x01' : ' ');
      word_start = i + 1;
      continue;
    }
    out.push_back(c);
  }
  return out;
}

std::string FlagList(const std::vector<const CLI::Option*>& flags) {
  std::string out;
  for (const CLI::Option* flag : flags) {
    absl::StrAppend(&out, "  ", FlagSynopsis(*flag), "\n",
                    WrapText(flag->get_description(), kWidth, "      "));
  }
  return out;
}

std::string UsageForms(const HelpEntry& command) {
  const std::string prefix =
      absl::StrCat("plumbctl ", CommandName(*command.spec));
  std::vector<std::string> forms = command.spec->usage;
  if (forms.empty()) {
    std::vector<std::string> words;
    for (const CLI::Option* flag : UserFlags(*command.app, false)) {
      words.push_back(flag->get_required()
                          ? FlagSynopsis(*flag)
                          : absl::StrCat("[", FlagSynopsis(*flag), "]"));
    }
    forms.push_back(absl::StrJoin(words, " "));
  }
  std::string out;
  for (size_t i = 0; i < forms.size(); ++i) {
    // A long form wraps; its continuation lines start under its flags.
    const std::string lead =
        absl::StrCat(i == 0 ? "usage: " : "       ", prefix, " ");
    bool first = true;
    for (absl::string_view line : absl::StrSplit(
             WrapText(Unbreakable(forms[i]), kWidth - lead.size(), ""), '\n',
             absl::SkipEmpty())) {
      absl::StrAppend(&out, first ? lead : std::string(lead.size(), ' '),
                      absl::StrReplaceAll(line, {{"\x01", " "}}), "\n");
      first = false;
    }
  }
  return out;
}

}  // namespace

std::string FlagSynopsis(const CLI::Option& option) {
  std::string out = absl::StrCat("--", option.get_lnames().front());
  if (!IsSwitch(option)) absl::StrAppend(&out, " ", option.get_type_name());
  return out;
}

std::vector<const CLI::Option*> UserFlags(const CLI::App& app,
                                          bool with_global) {
  std::vector<const CLI::Option*> flags;
  for (const CLI::Option* option : app.get_options()) {
    if (option->get_lnames().empty() || option == app.get_help_ptr()) continue;
    if (option->get_lnames().front() == "version" &&
        option->get_group() == kGlobalFlagGroup && IsSwitch(*option)) {
      continue;  // plumbctl --version, listed by MainHelp's usage
    }
    if (!with_global && option->get_group() == kGlobalFlagGroup) continue;
    flags.push_back(option);
  }
  return flags;
}

std::string CommandUsage(const HelpEntry& command) {
  return absl::StrCat(UsageForms(command), "run 'plumbctl help ",
                      CommandName(*command.spec), "' for its flags\n");
}

std::string CommandHelp(const HelpEntry& command, bool global_note) {
  std::string out = UsageForms(command);
  absl::StrAppend(&out, "\n", WrapText(command.spec->description, kWidth, ""));
  const std::vector<const CLI::Option*> own = UserFlags(*command.app, false);
  if (!own.empty()) absl::StrAppend(&out, "\nflags:\n", FlagList(own));
  std::vector<const CLI::Option*> global;
  for (const CLI::Option* flag : UserFlags(*command.app, true)) {
    if (flag->get_group() == kGlobalFlagGroup) global.push_back(flag);
  }
  if (global_note && !global.empty()) {
    absl::StrAppend(&out,
                    "\nglobal flags (also before the command name; see "
                    "'plumbctl help'):\n  ",
                    absl::StrJoin(global, " ",
                                  [](std::string* s, const CLI::Option* f) {
                                    absl::StrAppend(s, "--",
                                                    f->get_lnames().front());
                                  }),
                    "\n");
  }
  return out;
}

std::string MainHelp(const CLI::App& main,
                     const std::vector<HelpEntry>& commands) {
  std::string out =
      "usage: plumbctl [global flags] COMMAND [flags]\n"
      "       plumbctl help [COMMAND] | COMMAND --help | --version\n\n";
  absl::StrAppend(&out,
                  WrapText("The operator's command line for plumbd: scores, "
                           "outcomes, model health, the life of set versions, "
                           "offline fits and access tokens.",
                           kWidth, ""),
                  "\ncommands:\n");
  std::vector<std::vector<std::string>> rows;
  for (const HelpEntry& command : commands) {
    rows.push_back({CommandName(*command.spec), command.spec->summary});
  }
  absl::StrAppend(&out, FormatTable(rows, "  "), "\nglobal flags:\n",
                  FlagList(UserFlags(main, true)));
  absl::StrAppend(
      &out, "\n",
      WrapText("A flag goes after its command's name; the global flags may "
               "come before or after it. '-' and '_' are the same in flag "
               "names (--set-file, --set_file); a flag given twice takes its "
               "last value.",
               kWidth, ""),
      WrapText("Exit status: 0 done, 1 a failed operation (\"plumbctl: CODE: "
               "message\" on stderr), 2 a usage error.",
               kWidth, ""));
  return out;
}

std::string MainUsage(const std::vector<HelpEntry>& commands) {
  std::vector<std::string> names;
  for (const HelpEntry& command : commands) {
    names.push_back(CommandName(*command.spec));
  }
  return absl::StrCat(
      "usage: plumbctl [global flags] COMMAND [flags]\n",
      WrapText(absl::StrCat("commands: ", absl::StrJoin(names, ", ")), kWidth,
               ""),
      "run 'plumbctl help' for what each does\n");
}

}  // namespace plumbline::daemon
