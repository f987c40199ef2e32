// File: daemon/cli/completion.cc
//
// The script is plain bash with no helper from the bash-completion package,
// so it also works when sourced by hand. Written out here because neither
// CLI11 nor any other Debian library generates completion scripts.
#include "daemon/cli/completion.h"

#include <set>

#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_join.h"
#include "absl/strings/str_replace.h"
#include "absl/strings/str_split.h"
#include "daemon/util/version.h"

namespace plumbline::daemon {
namespace {

// Every spelling of a flag: "--set_file", "--set-file".
std::vector<std::string> Spellings(const CLI::Option& option) {
  std::vector<std::string> out;
  for (const std::string& name : option.get_lnames()) {
    out.push_back(absl::StrCat("--", name));
  }
  return out;
}

bool TakesValue(const CLI::Option& option) {
  return option.get_expected_max() != 0;
}

bool IsFileValue(absl::string_view value_name) {
  return absl::StrContains(value_name, "FILE") ||
         absl::EndsWith(value_name, ".json");
}

// "text|json" -> "text json"; "" when the value is not a fixed list.
std::string ValueWords(absl::string_view value_name) {
  if (!absl::StrContains(value_name, '|')) return "";
  return absl::StrJoin(absl::StrSplit(value_name, '|'), " ");
}

std::string Quoted(absl::string_view text) {
  return absl::StrCat("\"", text, "\"");
}

// One arm of `case "$cmd:$prev"`: what to offer after `flag`, whose
// spellings make `patterns`.
std::string ValueCase(const std::vector<std::string>& patterns,
                      const CLI::Option& flag) {
  const std::string& value_name = flag.get_type_name();
  std::string action = "return";  // free text: nothing to offer
  if (IsFileValue(value_name)) {
    action = "_plumbctl_files; return";
  } else if (const std::string list = ValueWords(value_name); !list.empty()) {
    action = absl::StrCat("_plumbctl_words ", Quoted(list), "; return");
  }
  return absl::StrCat("    ", absl::StrJoin(patterns, "|"), ") ", action,
                      " ;;\n");
}

}  // namespace

std::string BashCompletion(const CLI::App& main,
                           const std::vector<HelpEntry>& commands) {
  const std::vector<const CLI::Option*> global = UserFlags(main, true);
  std::set<std::string> value_flags;  // every spelling that takes a value
  std::vector<std::string> global_words = {"--help", "--version"};
  std::string global_value_cases;  // before the command: case ":$prev"
  for (const CLI::Option* flag : global) {
    global_words.push_back(Spellings(*flag).front());
    if (!TakesValue(*flag)) continue;
    std::vector<std::string> patterns;
    for (const std::string& s : Spellings(*flag)) {
      value_flags.insert(s);
      patterns.push_back(Quoted(absl::StrCat(":", s)));
    }
    absl::StrAppend(&global_value_cases, ValueCase(patterns, *flag));
  }

  std::set<std::string> top_level;      // "sets", ..., "token"
  std::vector<std::string> full_names;  // "sets", ..., "token new"
  std::string value_cases;              // case "$cmd:$prev"
  std::string flag_cases;               // case "$cmd" for "-<TAB>"
  std::string word_cases;               // case "$cmd" for words
  std::set<std::string> groups;
  for (const HelpEntry& command : commands) {
    const std::string name = CommandName(*command.spec);
    full_names.push_back(name);
    top_level.insert(command.spec->path.front());
    if (command.spec->path.size() > 1)
      groups.insert(command.spec->path.front());
    std::vector<std::string> words = {"--help"};
    for (const CLI::Option* flag : UserFlags(*command.app, true)) {
      const std::vector<std::string> spellings = Spellings(*flag);
      words.push_back(spellings.front());
      if (!TakesValue(*flag)) continue;
      std::vector<std::string> patterns;
      for (const std::string& s : spellings) {
        value_flags.insert(s);
        patterns.push_back(Quoted(absl::StrCat(name, ":", s)));
      }
      absl::StrAppend(&value_cases, ValueCase(patterns, *flag));
    }
    absl::StrAppend(&flag_cases, "    ", Quoted(name), ") _plumbctl_words ",
                    Quoted(absl::StrJoin(words, " ")), " ;;\n");
    // Positional words: help COMMAND, completion bash.
    for (const CLI::Option* option : command.app->get_options()) {
      if (!option->get_positional()) continue;
      const std::string& value_name = option->get_type_name();
      absl::StrAppend(&word_cases, "    ", Quoted(name), ") _plumbctl_words ",
                      value_name == "COMMAND" ? "\"$_plumbctl_top\""
                                              : Quoted(absl::StrReplaceAll(
                                                    value_name, {{"|", " "}})),
                      " ;;\n");
    }
  }
  for (const std::string& group : groups) {
    std::vector<std::string> subs;
    for (const std::string& name : full_names) {
      if (absl::StartsWith(name, group + " ")) {
        subs.push_back(name.substr(group.size() + 1));
      }
    }
    absl::StrAppend(&word_cases, "    ", Quoted(group), ") _plumbctl_words ",
                    Quoted(absl::StrJoin(subs, " ")), " ;;\n");
  }
  std::vector<std::string> value_list(value_flags.begin(), value_flags.end());

  std::string out = absl::StrCat(
      "# bash completion for plumbctl ", kPlumblineVersion,
      ", made by `plumbctl completion bash`\n"
      "# from the command table plumbctl parses with; do not edit.\n\n"
      "_plumbctl_top=",
      Quoted(absl::StrJoin(top_level, " ")), "\n", "_plumbctl_commands=",
      Quoted(absl::StrCat("|", absl::StrJoin(full_names, "|"), "|")),
      "\n\n"
      "_plumbctl_words() {\n"
      "  local IFS=$' \\t\\n'\n"
      "  COMPREPLY=($(compgen -W \"$1\" -- \"$cur\"))\n"
      "}\n\n"
      "_plumbctl_files() {\n"
      "  compopt -o filenames 2>/dev/null\n"
      "  local IFS=$'\\n'\n"
      "  COMPREPLY=($(compgen -f -- \"$cur\"))\n"
      "}\n\n"
      "_plumbctl() {\n"
      "  local cur=${COMP_WORDS[COMP_CWORD]} prev= cmd= w i\n"
      "  ((COMP_CWORD > 0)) && prev=${COMP_WORDS[COMP_CWORD-1]}\n"
      "  COMPREPLY=()\n"
      "  # The command: the words that are neither flags nor their values.\n"
      "  for ((i = 1; i < COMP_CWORD; i++)); do\n"
      "    w=${COMP_WORDS[i]}\n"
      "    case \"$w\" in\n"
      "      ",
      absl::StrJoin(value_list, "|"),
      ") ((i++)); continue ;;\n"
      "      -*) continue ;;\n"
      "    esac\n"
      "    if [[ -z $cmd ]]; then\n"
      "      cmd=$w\n"
      "    elif [[ $_plumbctl_commands == *\"|$cmd $w|\"* ]]; then\n"
      "      cmd=\"$cmd $w\"\n"
      "    fi\n"
      "  done\n"
      "  case \"$cmd:$prev\" in\n",
      value_cases, global_value_cases,
      "  esac\n"
      "  if [[ $cur == -* ]]; then\n"
      "    case \"$cmd\" in\n",
      flag_cases, "      *) _plumbctl_words ",
      Quoted(absl::StrJoin(global_words, " ")),
      " ;;\n"
      "    esac\n"
      "    return\n"
      "  fi\n"
      "  case \"$cmd\" in\n"
      "    \"\") _plumbctl_words \"$_plumbctl_top\" ;;\n",
      word_cases,
      "  esac\n"
      "}\n\n"
      "complete -F _plumbctl plumbctl\n");
  return out;
}

}  // namespace plumbline::daemon
