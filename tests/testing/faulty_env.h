// File: tests/testing/faulty_env.h
//
// A LedgerEnv (daemon/ledger/env.h) that injects the faults of a failing
// disk into a real ledger file, on command:
//
//   FaultyEnv env;
//   options.env = &env;
//   env.FailSyncs(EIO);             // every fsync fails
//   env.FailWritesAfter(3, ENOSPC); // writes 4, 5, ... fail: disk full
//   env.FailReads(EIO);             // reads of the database file fail
//   env.SlowWrites(absl::Milliseconds(20));
//   env.Clear();                    // the fault clears
//
// Counts what it saw. Thread-safe (the ledger calls it from many threads).
#ifndef PLUMBLINE_TESTS_TESTING_FAULTY_ENV_H_
#define PLUMBLINE_TESTS_TESTING_FAULTY_ENV_H_

#include <atomic>
#include <cstdint>

#include "absl/strings/match.h"
#include "absl/time/clock.h"
#include "absl/time/time.h"
#include "daemon/ledger/env.h"

namespace plumbline::daemon::testing {

class FaultyEnv : public LedgerEnv {
 public:
  void FailSyncs(int err) { sync_errno_ = err; }
  // The next `ok` writes succeed, the ones after fail with `err`.
  void FailWritesAfter(int64_t ok, int err) {
    writes_left_ = ok;
    write_errno_ = err;
  }
  // Reads of the database file itself (not its WAL) fail with `err`.
  void FailReads(int err) { read_errno_ = err; }
  void SlowWrites(absl::Duration d) { slow_us_ = absl::ToInt64Microseconds(d); }
  void Clear() {
    sync_errno_ = 0;
    write_errno_ = 0;
    read_errno_ = 0;
    slow_us_ = 0;
  }

  int64_t faults() const { return faults_; }
  int64_t syncs() const { return syncs_; }

  int Before(Op op, absl::string_view path, int64_t, int64_t) override {
    switch (op) {
      case Op::kSync:
        ++syncs_;
        return Fault(sync_errno_);
      case Op::kWrite: {
        if (const int64_t us = slow_us_; us > 0) {
          absl::SleepFor(absl::Microseconds(us));
        }
        const int err = write_errno_;
        if (err == 0) return 0;
        if (writes_left_.fetch_sub(1) > 0) return 0;
        return Fault(err);
      }
      case Op::kRead:
        if (absl::EndsWith(path, "-wal") || absl::EndsWith(path, "-shm")) {
          return 0;
        }
        return Fault(read_errno_);
      case Op::kTruncate:
        return 0;
    }
    return 0;
  }

 private:
  int Fault(int err) {
    if (err != 0) ++faults_;
    return err;
  }

  std::atomic<int> sync_errno_{0};
  std::atomic<int> write_errno_{0};
  std::atomic<int64_t> writes_left_{0};
  std::atomic<int> read_errno_{0};
  std::atomic<int64_t> slow_us_{0};
  std::atomic<int64_t> faults_{0};
  std::atomic<int64_t> syncs_{0};
};

}  // namespace plumbline::daemon::testing

#endif  // PLUMBLINE_TESTS_TESTING_FAULTY_ENV_H_
