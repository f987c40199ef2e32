// File: tests/bench/load/probes.h
//
// What the gRPC load generator reads around each phase besides replies:
// plumbd's CPU time (/proc/PID/stat), its ledger counters on /metrics, and
// how long a write + fdatasync takes on the ledger's disk in the same run
// (the floor under any durable commit). run_grpc_bench prints the load
// average itself.
//
//   ASSIGN_OR_RETURN(double before, ProcessCpuSeconds(pid));
//   ... load ...
//   ASSIGN_OR_RETURN(double after, ProcessCpuSeconds(pid));
//
// Thread-safety: every function is thread-safe (no shared state).
#ifndef PLUMBLINE_TESTS_BENCH_LOAD_PROBES_H_
#define PLUMBLINE_TESTS_BENCH_LOAD_PROBES_H_

#include <sys/types.h>

#include <string>

#include "absl/status/statusor.h"

namespace plumbline::bench {

// User + system CPU seconds process `pid` has used (utime + stime of
// /proc/PID/stat, in clock ticks of 10 ms on Linux: read it around a phase
// of seconds, not milliseconds).
absl::StatusOr<double> ProcessCpuSeconds(pid_t pid);

// plumbd's ledger counters from its Prometheus exposition.
struct LedgerCounters {
  double commits = 0;     // plumbline_ledger_commit_duration_seconds_count
  double rows = 0;        // plumbline_ledger_committed_rows_total
  double queue_rows = 0;  // plumbline_ledger_queue_rows (waiting now)
};
absl::StatusOr<LedgerCounters> ScrapeLedgerCounters(
    const std::string& metrics_addr);

// Times `iterations` rounds of a 4 KiB append and fdatasync on a fresh file
// in `dir` (removed afterwards).
struct SyncTimes {
  int iterations = 0;
  double p50_us = 0;
  double p99_us = 0;
  double max_us = 0;
};
absl::StatusOr<SyncTimes> ProbeFdatasync(const std::string& dir,
                                         int iterations);

}  // namespace plumbline::bench

#endif  // PLUMBLINE_TESTS_BENCH_LOAD_PROBES_H_
