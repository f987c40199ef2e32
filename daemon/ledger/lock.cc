// File: daemon/ledger/lock.cc
#include "daemon/ledger/lock.h"

#include <fcntl.h>
#include <sys/file.h>
#include <unistd.h>

#include <cerrno>
#include <string>
#include <utility>

#include "absl/strings/str_cat.h"
#include "absl/strings/strip.h"
#include "absl/time/clock.h"
#include "absl/time/time.h"

namespace plumbline::daemon {
namespace {

// What the lock file says about its holder, for the refusal message; "" if
// it cannot be read.
std::string Holder(int fd) {
  char buffer[512];
  const ssize_t n = ::pread(fd, buffer, sizeof(buffer) - 1, 0);
  if (n <= 0) return "";
  return std::string(
      absl::StripTrailingAsciiWhitespace(absl::string_view(buffer, n)));
}

std::string HostName() {
  char host[256] = {};
  if (::gethostname(host, sizeof(host) - 1) != 0) return "unknown";
  return host;
}

}  // namespace

absl::StatusOr<std::unique_ptr<LedgerLock>> LedgerLock::Acquire(
    const std::string& ledger_path, absl::string_view note) {
  std::string path = absl::StrCat(ledger_path, ".lock");
  const int fd = ::open(path.c_str(), O_RDWR | O_CREAT | O_CLOEXEC, 0644);
  if (fd < 0) {
    const int err = errno;
    return absl::ErrnoToStatus(
        err, absl::StrCat("ledger ", ledger_path,
                          ": cannot open its lock file ", path));
  }
  if (::flock(fd, LOCK_EX | LOCK_NB) != 0) {
    const int err = errno;
    if (err == EWOULDBLOCK) {
      const std::string holder = Holder(fd);
      ::close(fd);
      return absl::FailedPreconditionError(absl::StrCat(
          "ledger ", ledger_path, " is in use by another plumbd (",
          holder.empty() ? "holder unknown" : holder, "; lock file ", path,
          "); a ledger has one writer: stop that daemon or give this one "
          "its own --ledger"));
    }
    ::close(fd);
    return absl::ErrnoToStatus(
        err, absl::StrCat("ledger ", ledger_path, ": cannot lock ", path));
  }
  const std::string holder = absl::StrCat(
      "pid ", ::getpid(), " on ", HostName(), " since ",
      absl::FormatTime("%Y-%m-%dT%H:%M:%SZ", absl::Now(), absl::UTCTimeZone()),
      note.empty() ? "" : ", ", note, "\n");
  // Best effort: the lock holds whether or not the note is written.
  if (::ftruncate(fd, 0) == 0) {
    [[maybe_unused]] const ssize_t written =
        ::pwrite(fd, holder.data(), holder.size(), 0);
  }
  return std::unique_ptr<LedgerLock>(new LedgerLock(std::move(path), fd));
}

LedgerLock::~LedgerLock() {
  ::flock(fd_, LOCK_UN);
  ::close(fd_);
}

}  // namespace plumbline::daemon
