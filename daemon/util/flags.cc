// File: daemon/util/flags.cc
#include "daemon/util/flags.h"

#include <algorithm>

#include "absl/flags/commandlineflag.h"
#include "absl/flags/reflection.h"
#include "absl/status/status.h"
#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/string_view.h"
#include "daemon/util/text_table.h"

namespace plumbline::daemon {
namespace {

// Help texts are filled to this width (an 80-column terminal).
constexpr size_t kHelpWidth = 79;

std::string NormalizeName(absl::string_view name) {
  std::string out(name);
  std::replace(out.begin(), out.end(), '-', '_');
  return out;
}

}  // namespace

bool WantsHelp(int argc, const char* const* argv) {
  for (int i = 1; i < argc; ++i) {
    const absl::string_view arg = argv[i];
    if (arg == "--") break;
    if (arg == "-h" || arg == "--help" || arg == "-help" ||
        arg == "--helpfull") {
      return true;
    }
  }
  return false;
}

bool WantsVersion(int argc, const char* const* argv) {
  for (int i = 1; i < argc; ++i) {
    const absl::string_view arg = argv[i];
    if (arg == "--") break;
    if (arg == "--version" || arg == "-version") return true;
  }
  return false;
}

std::string FlagsHelp(absl::string_view file_suffix) {
  std::vector<const absl::CommandLineFlag*> flags;
  for (const auto& [name, flag] : absl::GetAllFlags()) {
    if (absl::EndsWith(flag->Filename(), file_suffix)) flags.push_back(flag);
  }
  std::sort(flags.begin(), flags.end(),
            [](const absl::CommandLineFlag* a, const absl::CommandLineFlag* b) {
              return a->Name() < b->Name();
            });
  std::string out;
  for (const absl::CommandLineFlag* flag : flags) {
    std::string help = flag->Help();
    if (const std::string d = flag->DefaultValue();
        !d.empty() && d != "false") {
      absl::StrAppend(&help, " (default ", d, ")");
    }
    absl::StrAppend(&out, "  --", flag->Name(), "\n",
                    WrapText(help, kHelpWidth, "      "));
  }
  return out;
}

absl::StatusOr<std::vector<std::string>> ParseFlags(int argc,
                                                    const char* const* argv) {
  std::vector<std::string> positional;
  for (int i = 1; i < argc; ++i) {
    const absl::string_view arg = argv[i];
    if (arg == "--") {
      for (++i; i < argc; ++i) positional.emplace_back(argv[i]);
      break;
    }
    if (!absl::StartsWith(arg, "-") || arg == "-") {
      positional.emplace_back(arg);
      continue;
    }
    absl::string_view body = arg.substr(absl::StartsWith(arg, "--") ? 2 : 1);
    absl::string_view value;
    bool has_value = false;
    if (const size_t eq = body.find('='); eq != absl::string_view::npos) {
      value = body.substr(eq + 1);
      body = body.substr(0, eq);
      has_value = true;
    }
    std::string name = NormalizeName(body);
    absl::CommandLineFlag* flag = absl::FindCommandLineFlag(name);
    // --noNAME turns a boolean flag off.
    if (flag == nullptr && !has_value && absl::StartsWith(name, "no")) {
      absl::CommandLineFlag* negated =
          absl::FindCommandLineFlag(name.substr(2));
      if (negated != nullptr && negated->IsOfType<bool>()) {
        flag = negated;
        value = "false";
        has_value = true;
      }
    }
    if (flag == nullptr || flag->IsRetired()) {
      return absl::InvalidArgumentError(
          absl::StrCat("unknown flag ", arg.substr(0, arg.find('='))));
    }
    if (!has_value) {
      if (flag->IsOfType<bool>()) {
        value = "true";
      } else if (i + 1 < argc) {
        value = argv[++i];
      } else {
        return absl::InvalidArgumentError(
            absl::StrCat("flag --", flag->Name(), " needs a value"));
      }
    }
    std::string error;
    if (!flag->ParseFrom(value, &error)) {
      return absl::InvalidArgumentError(
          absl::StrCat("flag --", flag->Name(), "='", value, "': ", error));
    }
  }
  return positional;
}

}  // namespace plumbline::daemon
