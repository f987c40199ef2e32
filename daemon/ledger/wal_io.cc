// File: daemon/ledger/wal_io.cc
#include "daemon/ledger/wal_io.h"

#include <errno.h>
#include <fcntl.h>
#include <string.h>
#include <unistd.h>

#include <utility>

#include "absl/strings/str_cat.h"

namespace plumbline::daemon {

WalSyncer::WalSyncer(std::string wal_path, LedgerEnv* env)
    : wal_path_(std::move(wal_path)), env_(env) {
  for (int i = 0; i < kThreads; ++i) threads_.emplace_back([this] { Loop(); });
}

WalSyncer::~WalSyncer() {
  {
    absl::MutexLock lock(&mu_);
    stopping_ = true;
  }
  for (auto& t : threads_) t.join();
  absl::MutexLock lock(&mu_);
  if (fd_ >= 0) close(fd_);
}

void WalSyncer::After(std::function<void(absl::Status)> done) {
  absl::MutexLock lock(&mu_);
  pending_.push_back(std::move(done));
}

absl::Status WalSyncer::Sync(int fd) {
  if (fd < 0) {
    return absl::UnavailableError(absl::StrCat(
        "ledger WAL ", wal_path_, ": cannot open to sync: ", strerror(-fd)));
  }
  // fdatasync, as SQLite's own sync of the WAL does on Linux; it also writes
  // the file size, which reading the appended frames needs.
  if (const int e = env_->Before(LedgerEnv::Op::kSync, wal_path_, 0, 0);
      e != 0) {
    errno = e;
    return absl::UnavailableError(absl::StrCat(
        "ledger WAL ", wal_path_, ": fdatasync failed: ", strerror(e),
        "; the last commits may not be on disk"));
  }
  if (fdatasync(fd) != 0) {
    return absl::UnavailableError(absl::StrCat(
        "ledger WAL ", wal_path_, ": fdatasync failed: ", strerror(errno),
        "; the last commits may not be on disk"));
  }
  return absl::OkStatus();
}

void WalSyncer::Loop() {
  for (;;) {
    std::vector<std::function<void(absl::Status)>> batch;
    int fd = -1;
    {
      absl::MutexLock lock(&mu_);
      mu_.Await(absl::Condition(
          +[](WalSyncer* s) ABSL_EXCLUSIVE_LOCKS_REQUIRED(s->mu_) {
            return !s->pending_.empty() || s->stopping_;
          },
          this));
      if (pending_.empty()) return;  // stopping and drained
      batch.swap(pending_);
      if (fd_ < 0) {
        // SQLite keeps the WAL file (same inode) while any connection is
        // open; the writer's connection outlives this object.
        fd_ = open(wal_path_.c_str(), O_RDONLY | O_CLOEXEC);
        if (fd_ < 0) fd = -errno;
      }
      if (fd_ >= 0) fd = fd_;
    }
    const absl::Status st = Sync(fd);
    for (auto& done : batch) done(st);
  }
}

absl::StatusOr<std::unique_ptr<WalCheckpointer>> WalCheckpointer::Start(
    const std::string& path, LedgerEnv* env) {
  auto db = SqliteDb::Open(path, env);
  if (!db.ok()) return db.status();
  // A connection sees the WAL only after its first read; before that its
  // checkpoints return OK without copying anything (found by counting the
  // frames checkpointed: none).
  if (auto n = (*db)->QueryInt64("SELECT COUNT(*) FROM sqlite_schema");
      !n.ok()) {
    return n.status();
  }
  std::unique_ptr<WalCheckpointer> c(new WalCheckpointer(*std::move(db)));
  c->thread_ = std::thread([p = c.get()] { p->Loop(); });
  return c;
}

WalCheckpointer::~WalCheckpointer() {
  {
    absl::MutexLock lock(&mu_);
    stopping_ = true;
  }
  thread_.join();
}

void WalCheckpointer::Request() {
  absl::MutexLock lock(&mu_);
  wanted_ = true;
}

void WalCheckpointer::Loop() {
  for (;;) {
    {
      absl::MutexLock lock(&mu_);
      mu_.Await(absl::Condition(
          +[](WalCheckpointer* c) ABSL_EXCLUSIVE_LOCKS_REQUIRED(c->mu_) {
            return c->wanted_ || c->stopping_;
          },
          this));
      if (stopping_) return;
      wanted_ = false;
    }
    // PASSIVE copies what no reader still needs and never waits for the
    // writer. A failure only leaves the WAL longer; the next request (or
    // the last connection's close) checkpoints again.
    absl::MutexLock run(&run_mu_);
    sqlite3_wal_checkpoint_v2(db_->handle(), "main", SQLITE_CHECKPOINT_PASSIVE,
                              nullptr, nullptr);
  }
}

void WalCheckpointer::CheckpointOn(SqliteDb& db) {
  absl::MutexLock run(&run_mu_);
  sqlite3_wal_checkpoint_v2(db.handle(), "main", SQLITE_CHECKPOINT_PASSIVE,
                            nullptr, nullptr);
}

}  // namespace plumbline::daemon
