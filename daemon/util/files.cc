// File: daemon/util/files.cc
#include "daemon/util/files.h"

#include <fcntl.h>
#include <unistd.h>

#include <cerrno>
#include <cstdio>
#include <filesystem>
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

namespace {

absl::Status ErrnoStatus(int err, absl::string_view what,
                         const std::string& path) {
  return absl::ErrnoToStatus(err, absl::StrCat(path, ": ", what));
}

// Writes all of `data` to `fd` (write(2) may write less than asked).
absl::Status WriteAll(int fd, absl::string_view data, const std::string& path) {
  while (!data.empty()) {
    const ssize_t n = ::write(fd, data.data(), data.size());
    if (n < 0) {
      if (errno == EINTR) continue;
      return ErrnoStatus(errno, "write failed", path);
    }
    data.remove_prefix(static_cast<size_t>(n));
  }
  return absl::OkStatus();
}

}  // namespace

absl::Status WriteFileAtomically(const std::string& path,
                                 absl::string_view contents) {
  // POSIX calls rather than streams: the file and then its directory must be
  // fsynced around the rename, or a crash can leave an empty or missing file
  // under the new name (the rename reaches the disk before the data).
  const std::string tmp = absl::StrCat(path, ".tmp");
  const int fd =
      ::open(tmp.c_str(), O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0644);
  if (fd < 0) return ErrnoStatus(errno, "cannot create", tmp);
  absl::Status st = WriteAll(fd, contents, tmp);
  if (st.ok() && ::fsync(fd) != 0) st = ErrnoStatus(errno, "fsync failed", tmp);
  if (::close(fd) != 0 && st.ok()) {
    st = ErrnoStatus(errno, "close failed", tmp);
  }
  if (!st.ok()) {
    ::unlink(tmp.c_str());
    return st;
  }
  if (std::rename(tmp.c_str(), path.c_str()) != 0) {
    const int err = errno;
    ::unlink(tmp.c_str());
    return absl::ErrnoToStatus(
        err, absl::StrCat("cannot rename ", tmp, " to ", path));
  }
  std::string dir = std::filesystem::path(path).parent_path().string();
  if (dir.empty()) dir = ".";
  const int dir_fd = ::open(dir.c_str(), O_RDONLY | O_DIRECTORY | O_CLOEXEC);
  if (dir_fd < 0) return ErrnoStatus(errno, "cannot open directory", dir);
  const int synced = ::fsync(dir_fd);
  const int err = errno;
  ::close(dir_fd);
  if (synced != 0)
    return ErrnoStatus(err, "fsync of the directory failed", dir);
  return absl::OkStatus();
}

}  // namespace plumbline::daemon
