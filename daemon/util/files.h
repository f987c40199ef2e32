// File: daemon/util/files.h
//
// Small file helpers shared by plumbd and plumbctl: whole-file reads and
// writes that report failures as absl::Status naming the path, and the atomic
// replace (write FILE.tmp, then rename) used for the ready file and outputs.
//
// Thread-safe: free functions without shared state.
#ifndef PLUMBLINE_DAEMON_UTIL_FILES_H_
#define PLUMBLINE_DAEMON_UTIL_FILES_H_

#include <string>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"

namespace plumbline::daemon {

// Returns the contents of `path`. NOT_FOUND if it does not exist, otherwise
// the errno-based code; the message names the path.
absl::StatusOr<std::string> ReadFileToString(const std::string& path);

// Writes `contents` to `path` + ".tmp", fsyncs it, renames it over `path`
// and fsyncs the directory, so a reader (and a restart after a crash) sees
// either the old file or the whole new one. On an error the .tmp file is
// removed.
absl::Status WriteFileAtomically(const std::string& path,
                                 absl::string_view contents);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_UTIL_FILES_H_
