// File: daemon/util/text_table.h
//
// Plain-text tables for plumbctl's output: left-aligned columns two spaces
// apart, trailing blanks trimmed. Used by every plumbctl command that prints
// a table (sets, score, outcomes, health); word-wrapped help text.
//
//   std::cout << FormatTable({{"set", "courier"}, {"version", "v1"}});
//
// Thread-safe: a pure function.
#ifndef PLUMBLINE_DAEMON_UTIL_TEXT_TABLE_H_
#define PLUMBLINE_DAEMON_UTIL_TEXT_TABLE_H_

#include <string>
#include <vector>

#include "absl/strings/string_view.h"

namespace plumbline::daemon {

// Left-aligned columns separated by two spaces, each line after `indent`;
// trailing blanks trimmed. Shared by the commands' tables.
std::string FormatTable(const std::vector<std::vector<std::string>>& rows,
                        absl::string_view indent = "");

// `text` filled into lines of at most `width` characters (a longer word gets
// a line of its own), each line after `indent`, every line ending in "\n".
// Words are split at spaces; newlines in `text` end paragraphs. For help
// texts (plumbd --help, plumbctl help); written by hand because Abseil has
// no word wrap and a library for only this is not worth a dependency.
std::string WrapText(absl::string_view text, size_t width,
                     absl::string_view indent = "");

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_UTIL_TEXT_TABLE_H_
