// File: daemon/util/flags.h
//
// Command-line parsing for plumbd and plumbctl over Abseil flags. The flags
// themselves are ordinary ABSL_FLAGs; this parser differs from
// absl::ParseCommandLine in two ways the tools promise:
//   - a bad command line is returned as an error (the tools then print their
//     usage and exit 2), where absl::ParseCommandLine exits with status 1;
//   - '-' and '_' are the same in flag names (--set-file and --set_file).
// Values are parsed by absl's own CommandLineFlag::ParseFrom, so every flag
// type behaves as with absl::ParseCommandLine.
//
//   absl::StatusOr<std::vector<std::string>> args = ParseFlags(argc, argv);
//   // args: the positional arguments, without argv[0].
//
// Thread-safe: no; call once from main before other threads use flags.
#ifndef PLUMBLINE_DAEMON_UTIL_FLAGS_H_
#define PLUMBLINE_DAEMON_UTIL_FLAGS_H_

#include <string>
#include <vector>

#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"

namespace plumbline::daemon {

// Accepts --name=value, --name value, --bool_flag, --nobool_flag and "--"
// (everything after it is positional). Returns the positional arguments in
// order, or INVALID_ARGUMENT naming the offending flag.
absl::StatusOr<std::vector<std::string>> ParseFlags(int argc,
                                                    const char* const* argv);

// True if the command line asks for help (--help, -h, --helpfull).
bool WantsHelp(int argc, const char* const* argv);

// True if the command line asks for the version (--version).
bool WantsVersion(int argc, const char* const* argv);

// The flags defined in the source file whose path ends with `file_suffix`
// (e.g. "plumbd_main.cc"), sorted by name, one per line as "  --name" then
// the help text and default aligned beside it: the flag list of a --help
// text, made from the flags themselves so it cannot drift from them.
std::string FlagsHelp(absl::string_view file_suffix);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_UTIL_FLAGS_H_
