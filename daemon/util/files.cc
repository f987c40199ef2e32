// File: daemon/util/files.cc
#include "daemon/util/files.h"

#include <cerrno>
#include <cstdio>
#include <fstream>
#include <sstream>

#include "absl/status/status.h"
#include "absl/strings/str_cat.h"

namespace plumbline::daemon {

absl::StatusOr<std::string> ReadFileToString(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) {
    const int err = errno;
    return absl::ErrnoToStatus(err, absl::StrCat(path, ": cannot open"));
  }
  std::ostringstream buffer;
  buffer << in.rdbuf();
  if (in.bad()) {
    return absl::DataLossError(absl::StrCat(path, ": read failed"));
  }
  return std::move(buffer).str();
}

absl::Status WriteFileAtomically(const std::string& path,
                                 absl::string_view contents) {
  const std::string tmp = absl::StrCat(path, ".tmp");
  {
    std::ofstream out(tmp, std::ios::binary | std::ios::trunc);
    if (!out) {
      const int err = errno;
      return absl::ErrnoToStatus(err, absl::StrCat(tmp, ": cannot create"));
    }
    out.write(contents.data(), static_cast<std::streamsize>(contents.size()));
    out.flush();
    if (!out) {
      return absl::DataLossError(absl::StrCat(tmp, ": write failed"));
    }
  }
  if (std::rename(tmp.c_str(), path.c_str()) != 0) {
    const int err = errno;
    return absl::ErrnoToStatus(
        err, absl::StrCat("cannot rename ", tmp, " to ", path));
  }
  return absl::OkStatus();
}

}  // namespace plumbline::daemon
