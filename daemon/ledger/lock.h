// File: daemon/ledger/lock.h
//
// One writer per ledger. SqliteLedger::Open takes an exclusive flock(2) on
// "<ledger>.lock" for as long as the ledger is open and writes who holds it
// into the file (pid, host, start time, what the holder said about itself,
// e.g. its listen address). A second plumbd on the same ledger is refused
// with a message naming the holder. The kernel drops the lock when the
// holder's process ends in any way (SIGKILL included), so a crash never
// leaves a stale lock; the file itself stays and is reused.
//
// flock is advisory and local: it holds between processes of one machine,
// not across NFS mounts (a ledger on NFS is not supported anyway: SQLite's
// WAL needs shared memory).
//
//   absl::StatusOr<std::unique_ptr<LedgerLock>> lock =
//       LedgerLock::Acquire("var/ledger.db", "listen=127.0.0.1:7390");
//
// Thread-safe: immutable after Acquire.
#ifndef PLUMBLINE_DAEMON_LEDGER_LOCK_H_
#define PLUMBLINE_DAEMON_LEDGER_LOCK_H_

#include <memory>
#include <string>

#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"

namespace plumbline::daemon {

class LedgerLock {
 public:
  // Locks `ledger_path` + ".lock" (created if missing) and records the
  // holder with `note`. FAILED_PRECONDITION naming the holder when another
  // process holds it; the errno's code naming the file when it cannot be
  // created or locked.
  static absl::StatusOr<std::unique_ptr<LedgerLock>> Acquire(
      const std::string& ledger_path, absl::string_view note);

  // Releases the lock (the file stays).
  ~LedgerLock();
  LedgerLock(const LedgerLock&) = delete;
  LedgerLock& operator=(const LedgerLock&) = delete;

  const std::string& path() const { return path_; }

 private:
  LedgerLock(std::string path, int fd) : path_(std::move(path)), fd_(fd) {}

  const std::string path_;
  const int fd_;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_LEDGER_LOCK_H_
