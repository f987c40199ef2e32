// File: daemon/ledger/env.h
//
// The ledger's I/O seam, after LevelDB's Env. Every access the ledger makes
// to its files passes through one LedgerEnv: SQLite's reads, writes, syncs
// and truncations of the database and its WAL (SQLite is opened with a VFS
// of ours, "plumbline-env-N", that wraps SQLite's own "unix" VFS and asks
// the env before each operation), and plumbd's own fdatasync of the WAL
// (WalSyncer). The default env lets everything through; tests subclass it
// to inject faults at a chosen operation: a failed fsync, ENOSPC at the
// n-th write, EIO on a read, a slow disk.
//
// What a fault becomes (SQLite then rolls the transaction back or fails
// the read, and the ledger answers the caller):
//   write  ENOSPC -> SQLITE_FULL -> RESOURCE_EXHAUSTED; other -> IOERR
//   read, truncate, sync -> IOERR -> UNAVAILABLE / INTERNAL with the cause
//
//   class FullDisk : public LedgerEnv {
//     int Before(Op op, absl::string_view, int64_t, int64_t) override {
//       return op == Op::kWrite ? ENOSPC : 0;
//     }
//   };
//   FullDisk env;  options.env = &env;   // must outlive the ledger
//
// Thread-safe: Before is called from every thread that touches the ledger
// (the writer, the syncers, readers, the checkpointer); a subclass must be
// safe to call concurrently. The VFS is registered with SQLite by the
// constructor and removed by the destructor; the env must outlive every
// connection opened through it.
#ifndef PLUMBLINE_DAEMON_LEDGER_ENV_H_
#define PLUMBLINE_DAEMON_LEDGER_ENV_H_

#include <cstdint>
#include <memory>
#include <string>

#include "absl/strings/string_view.h"

namespace plumbline::daemon {

struct EnvVfs;  // env.cc: the SQLite VFS of an env

class LedgerEnv {
 public:
  enum class Op { kRead, kWrite, kSync, kTruncate };

  LedgerEnv();
  virtual ~LedgerEnv();
  LedgerEnv(const LedgerEnv&) = delete;
  LedgerEnv& operator=(const LedgerEnv&) = delete;

  // Called before `op` on the file at `path` (`offset` and `size` in bytes;
  // 0 for a sync). Returns 0 to let it happen, or the errno to fail it
  // with. May block (a slow disk). The default lets everything through.
  virtual int Before(Op op, absl::string_view path, int64_t offset,
                     int64_t size);

  // The name of the SQLite VFS that routes through this env.
  const std::string& vfs_name() const { return vfs_name_; }

  // The process's pass-through env (never destroyed).
  static LedgerEnv* Default();

 private:
  std::string vfs_name_;
  std::unique_ptr<EnvVfs> vfs_;
};

// "write", "read", "sync", "truncate": log fields and messages.
absl::string_view LedgerOpName(LedgerEnv::Op op);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_LEDGER_ENV_H_
