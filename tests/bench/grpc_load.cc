// File: tests/bench/grpc_load.cc
//
// The gRPC load generator of tests/bench/run_grpc_bench: drives a running
// plumbd with one request shape and prints one table row for it and one for
// its floor, measured in the same run: the two alternate in --rounds rounds
// (default 2), so a change in the machine's load falls on both.
//
// The floor is the same request shape, the same callers or rate, sent to a
// set name plumbd does not have: gRPC receives and parses the whole message
// and plumbd answers NOT_FOUND without encoding, scoring, monitoring or the
// ledger. Every figure of the scenario is printed with its ratio to the
// floor's, so what the row shows is plumbd's own work on top of transport,
// on a machine whose load the bench does not control. Each phase starts on
// an empty ledger queue and ends once the queue is empty again, so plumbd's
// CPU per record includes writing the phase's rows (also under ACK_QUEUED,
// where that continues after the replies) and nothing of another phase.
//
//   grpc_load --addr 127.0.0.1:PORT --set courier_mixed --rpc batch_dense
//       --records 1000 --callers 4 --pid PID --metrics_addr HOST:PORT
//       --ledger_mode durable
//   grpc_load --addr ... --set courier_mixed --rpc score --rate 5000
//   grpc_load --write_sets DIR        # the sets the bench loads
//   grpc_load --fsync_probe DIR       # write + fdatasync p50/p99 there
//   grpc_load --print_header
//
// Calls are driven with gRPC's async API from one thread (see
// tests/bench/load/driver.h for why). Never run as a timing test: the smoke
// test (grpc_load_test.cc) only checks that replies were OK and the ledger
// got the rows.
#include <grpcpp/create_channel.h>
#include <grpcpp/security/credentials.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <fstream>
#include <optional>
#include <string>
#include <vector>

#include "absl/flags/flag.h"
#include "absl/flags/parse.h"
#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/numbers.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "absl/strings/str_join.h"
#include "absl/strings/str_split.h"
#include "absl/time/clock.h"
#include "tests/bench/load/driver.h"
#include "tests/bench/load/probes.h"
#include "tests/bench/load/requests.h"

ABSL_FLAG(std::string, addr, "", "plumbd's gRPC address, HOST:PORT");
ABSL_FLAG(std::string, set, plumbline::bench::kMixedSet, "set to score");
ABSL_FLAG(std::string, rpc, "score", "score | batch_named | batch_dense");
ABSL_FLAG(int, records, 1000, "records per ScoreBatch call");
ABSL_FLAG(int, callers, 1, "closed loop: calls kept in flight");
ABSL_FLAG(double, rate, 0,
          "open loop: calls started per second (0: closed loop)");
ABSL_FLAG(double, seconds, 2,
          "measured seconds of each side (floor, scenario), split in rounds");
ABSL_FLAG(int, rounds, 2,
          "floor and scenario alternate this many times; figures add up");
ABSL_FLAG(double, warmup_seconds, 0.3, "unmeasured seconds before each phase");
ABSL_FLAG(int, pid, 0, "plumbd's pid, for its CPU time (0: not measured)");
ABSL_FLAG(std::string, metrics_addr, "",
          "plumbd's metrics HOST:PORT, for calls per commit (empty: none)");
ABSL_FLAG(std::string, ledger_mode, "-",
          "label of the ledger ack mode plumbd runs with (printed only)");
ABSL_FLAG(std::string, label, "", "scenario name (default from the shape)");
ABSL_FLAG(bool, floor, true, "measure the floor (unknown set) first");
ABSL_FLAG(std::string, floor_set, "no_such_set",
          "the unknown set name the floor is sent to");
ABSL_FLAG(std::string, id_prefix, "",
          "record ids are <prefix>-<n> (default: load-<unix s>-<pid>)");
ABSL_FLAG(std::string, result_file, "",
          "also write the scenario's counts here as key=value lines");
ABSL_FLAG(std::string, write_sets, "",
          "write the bench's set files into this dir and exit");
ABSL_FLAG(std::string, widths, "10,100,500",
          "with --write_sets: feature counts of the parcel_wide sets");
ABSL_FLAG(std::string, fsync_probe, "",
          "time 4 KiB write + fdatasync rounds in this dir and exit");
ABSL_FLAG(int, fsync_iterations, 200, "rounds of --fsync_probe");
ABSL_FLAG(bool, print_header, false, "print the table header and exit");

namespace plumbline::bench {
namespace {

// One measured phase and what was read around it.
struct Phase {
  LoadResult load;
  std::optional<double> cpu_seconds;  // plumbd's, during the phase
  std::optional<double> commits;      // ledger commits during the phase
  bool floor = false;
  int features = 0;

  // Records and calls plumbd finished: OK ones, or for the floor (whose
  // every reply is NOT_FOUND) every reply.
  double Records() const {
    return static_cast<double>(floor ? load.records : load.ok_records);
  }
  double Calls() const {
    return static_cast<double>(floor ? load.calls : load.ok_calls);
  }
  double Seconds() const { return absl::ToDoubleSeconds(load.elapsed); }
  std::optional<double> CpuUsPerRecord() const {
    if (!cpu_seconds || Records() == 0) return std::nullopt;
    return *cpu_seconds * 1e6 / Records();
  }
};

// Wide enough for "parcel_wide_500 dense_1000 floor" and "1234.5 (12.34)".
constexpr char kRowFormat[] =
    "%-32s %-8s %-8s %-17s %-15s %-16s %-17s %-15s %-15s %-8s %s\n";

void PrintHeader() {
  absl::PrintF(kRowFormat, "scenario", "ledger", "callers", "records/s",
               "calls/s", "p50 us", "p99 us", "cpu us/rec", "cpu ns/r/f",
               "calls/cm", "codes");
}

// "value (ratio)" with `decimals` digits; the ratio is to the floor's value.
std::string WithRatio(std::optional<double> value, std::optional<double> floor,
                      int decimals = 0) {
  if (!value) return "-";
  std::string text = absl::StrFormat("%.*f", decimals, *value);
  if (floor && *floor > 0) {
    absl::StrAppendFormat(&text, " (%.2f)", *value / *floor);
  }
  return text;
}

std::string Codes(const LoadResult& load) {
  std::vector<std::string> parts;
  for (const auto& [code, n] : load.codes) {
    parts.push_back(absl::StrCat(
        absl::StatusCodeToString(static_cast<absl::StatusCode>(code)), "=", n));
  }
  if (load.not_sent > 0)
    parts.push_back(absl::StrCat("NOT_SENT=", load.not_sent));
  return parts.empty() ? "none" : absl::StrJoin(parts, " ");
}

void PrintPhase(const std::string& label, const std::string& mode,
                const std::string& callers, const Phase& p,
                const Phase* floor) {
  auto rate = [](const Phase& x, double n) -> std::optional<double> {
    if (x.Seconds() <= 0) return std::nullopt;
    return n / x.Seconds();
  };
  auto per_feature = [](const Phase& x) -> std::optional<double> {
    std::optional<double> us = x.CpuUsPerRecord();
    if (!us || x.features == 0) return std::nullopt;
    return *us * 1000 / x.features;
  };
  std::optional<double> calls_per_commit;
  if (!p.floor && p.commits && *p.commits > 0) {
    calls_per_commit = p.Calls() / *p.commits;
  }
  const Phase* f = floor;
  absl::PrintF(
      kRowFormat, p.floor ? label + " floor" : label, p.floor ? "none" : mode,
      callers,
      WithRatio(rate(p, p.Records()),
                f ? rate(*f, f->Records()) : std::nullopt),
      WithRatio(rate(p, p.Calls()), f ? rate(*f, f->Calls()) : std::nullopt),
      WithRatio(
          p.load.Percentile(0.5),
          f ? std::optional<double>(f->load.Percentile(0.5)) : std::nullopt),
      WithRatio(
          p.load.Percentile(0.99),
          f ? std::optional<double>(f->load.Percentile(0.99)) : std::nullopt),
      WithRatio(p.CpuUsPerRecord(), f ? f->CpuUsPerRecord() : std::nullopt, 2),
      WithRatio(per_feature(p), f ? per_feature(*f) : std::nullopt, 1),
      calls_per_commit ? absl::StrFormat("%.1f", *calls_per_commit)
                       : std::string("-"),
      Codes(p.load));
  std::fflush(stdout);
}

std::unique_ptr<CallSource> MakeSource(v1::Scoring::Stub* stub,
                                       const v1::SetSummary& schema,
                                       const std::string& target,
                                       RecordIds* ids) {
  const std::string rpc = absl::GetFlag(FLAGS_rpc);
  const int records = absl::GetFlag(FLAGS_records);
  if (rpc == "batch_named") {
    return MakeBatchCalls(stub, NamedBatch(schema, target, records),
                          FreshBatchIds(ids));
  }
  if (rpc == "batch_dense") {
    return MakeBatchCalls(stub, DenseBatch(schema, target, records),
                          FreshBatchIds(ids));
  }
  return MakeScoreCalls(stub, UnaryRequest(schema, target), FreshScoreIds(ids));
}

LoadResult Drive(CallSource* source, absl::Duration duration) {
  const double rate = absl::GetFlag(FLAGS_rate);
  if (rate > 0) return RunOpenLoop(source, rate, duration);
  return RunClosedLoop(source, absl::GetFlag(FLAGS_callers), duration);
}

// Waits until plumbd's ledger queue is empty (nothing of an earlier phase
// still being written); without a metrics address there is nothing to wait
// for. Gives up after 60 s: a safety net, not a speed requirement.
absl::Status WaitForIdleLedger(const std::string& metrics) {
  if (metrics.empty()) return absl::OkStatus();
  const absl::Time give_up = absl::Now() + absl::Seconds(60);
  for (;;) {
    absl::StatusOr<LedgerCounters> counters = ScrapeLedgerCounters(metrics);
    if (!counters.ok()) return counters.status();
    if (counters->queue_rows == 0) return absl::OkStatus();
    if (absl::Now() > give_up) {
      return absl::DeadlineExceededError(
          absl::StrCat("plumbd's ledger queue still holds ",
                       counters->queue_rows, " rows after 60 s"));
    }
    absl::SleepFor(absl::Milliseconds(20));
  }
}

// One measured phase of `source`. It starts on an idle ledger and ends when
// the ledger has written what the phase queued, so plumbd's CPU and commits
// include the writing of this phase's rows (under ACK_QUEUED that goes on
// after the last reply) and nothing of another phase's.
absl::StatusOr<Phase> Measure(CallSource* source, bool floor, int features,
                              absl::Duration duration) {
  const pid_t pid = absl::GetFlag(FLAGS_pid);
  const std::string metrics = absl::GetFlag(FLAGS_metrics_addr);
  if (absl::Status s = WaitForIdleLedger(metrics); !s.ok()) return s;
  std::optional<double> cpu_before;
  std::optional<LedgerCounters> ledger_before;
  if (pid > 0) {
    absl::StatusOr<double> cpu = ProcessCpuSeconds(pid);
    if (!cpu.ok()) return cpu.status();
    cpu_before = *cpu;
  }
  if (!metrics.empty()) {
    absl::StatusOr<LedgerCounters> counters = ScrapeLedgerCounters(metrics);
    if (!counters.ok()) return counters.status();
    ledger_before = *counters;
  }
  Phase phase;
  phase.floor = floor;
  phase.features = features;
  phase.load = Drive(source, duration);
  if (absl::Status s = WaitForIdleLedger(metrics); !s.ok()) return s;
  if (cpu_before) {
    absl::StatusOr<double> cpu = ProcessCpuSeconds(pid);
    if (!cpu.ok()) return cpu.status();
    phase.cpu_seconds = *cpu - *cpu_before;
  }
  if (ledger_before) {
    absl::StatusOr<LedgerCounters> counters = ScrapeLedgerCounters(metrics);
    if (!counters.ok()) return counters.status();
    phase.commits = counters->commits - ledger_before->commits;
  }
  return phase;
}

void Add(const std::optional<double>& value, std::optional<double>* sum) {
  if (value) *sum = sum->value_or(0) + *value;
}

// Adds a later round of the same side to `into`.
void Merge(const Phase& round, Phase* into) {
  LoadResult& a = into->load;
  const LoadResult& b = round.load;
  a.elapsed += b.elapsed;
  a.calls += b.calls;
  a.ok_calls += b.ok_calls;
  a.records += b.records;
  a.ok_records += b.ok_records;
  a.not_sent += b.not_sent;
  for (const auto& [code, n] : b.codes) a.codes[code] += n;
  a.latency_us.insert(a.latency_us.end(), b.latency_us.begin(),
                      b.latency_us.end());
  std::sort(a.latency_us.begin(), a.latency_us.end());
  Add(round.cpu_seconds, &into->cpu_seconds);
  Add(round.commits, &into->commits);
}

// The floor (if asked) and the scenario, alternating in `rounds` rounds so a
// change in the machine's load falls on both sides alike; each side warms
// up once before its first round.
absl::Status MeasureBoth(v1::Scoring::Stub* stub, const v1::SetSummary& schema,
                         const std::string& prefix, std::optional<Phase>* floor,
                         Phase* real) {
  RecordIds floor_ids(absl::StrCat(prefix, "-floor"));
  RecordIds ids(prefix);
  std::unique_ptr<CallSource> floor_source;
  if (absl::GetFlag(FLAGS_floor)) {
    floor_source =
        MakeSource(stub, schema, absl::GetFlag(FLAGS_floor_set), &floor_ids);
  }
  std::unique_ptr<CallSource> source =
      MakeSource(stub, schema, absl::GetFlag(FLAGS_set), &ids);
  const int rounds = std::max(1, absl::GetFlag(FLAGS_rounds));
  const absl::Duration slice =
      absl::Seconds(absl::GetFlag(FLAGS_seconds)) / rounds;
  const double warmup = absl::GetFlag(FLAGS_warmup_seconds);
  for (int r = 0; r < rounds; ++r) {
    for (CallSource* side : {floor_source.get(), source.get()}) {
      if (side == nullptr) continue;
      const bool is_floor = side == floor_source.get();
      if (r == 0 && warmup > 0) Drive(side, absl::Seconds(warmup));
      absl::StatusOr<Phase> phase =
          Measure(side, is_floor, schema.features_size(), slice);
      if (!phase.ok()) return phase.status();
      if (is_floor) {
        if (floor->has_value()) {
          Merge(*phase, &**floor);
        } else {
          *floor = *std::move(phase);
        }
      } else if (r == 0) {
        *real = *std::move(phase);
      } else {
        Merge(*phase, real);
      }
    }
  }
  return absl::OkStatus();
}

int64_t NotFound(const LoadResult& load) {
  auto it = load.codes.find(grpc::StatusCode::NOT_FOUND);
  return it == load.codes.end() ? 0 : it->second;
}

absl::Status WriteResult(const std::string& path, const Phase& real,
                         const Phase* floor) {
  std::ofstream out(path);
  out << "calls=" << real.load.calls << "\nok_calls=" << real.load.ok_calls
      << "\nrecords=" << real.load.records
      << "\nok_records=" << real.load.ok_records
      << "\nnot_sent=" << real.load.not_sent << "\n";
  for (const auto& [code, n] : real.load.codes) {
    out << "code_"
        << absl::StatusCodeToString(static_cast<absl::StatusCode>(code)) << "="
        << n << "\n";
  }
  if (floor != nullptr) {
    out << "floor_calls=" << floor->load.calls
        << "\nfloor_not_found=" << NotFound(floor->load) << "\n";
  }
  out.close();
  if (!out) return absl::UnavailableError(absl::StrCat("cannot write ", path));
  return absl::OkStatus();
}

std::string DefaultLabel() {
  const std::string rpc = absl::GetFlag(FLAGS_rpc);
  std::string label =
      rpc == "score" ? "unary"
                     : absl::StrCat(rpc == "batch_named" ? "named_" : "dense_",
                                    absl::GetFlag(FLAGS_records));
  return absl::StrCat(absl::GetFlag(FLAGS_set) == kMixedSet
                          ? ""
                          : absl::StrCat(absl::GetFlag(FLAGS_set), " "),
                      label);
}

int RunScenario() {
  const std::string rpc = absl::GetFlag(FLAGS_rpc);
  if (rpc != "score" && rpc != "batch_named" && rpc != "batch_dense") {
    std::fprintf(stderr, "--rpc must be score, batch_named or batch_dense\n");
    return 2;
  }
  if (absl::GetFlag(FLAGS_addr).empty()) {
    std::fprintf(stderr, "--addr is required\n");
    return 2;
  }
  auto channel = grpc::CreateChannel(absl::GetFlag(FLAGS_addr),
                                     grpc::InsecureChannelCredentials());
  auto stub = v1::Scoring::NewStub(channel);
  absl::StatusOr<v1::SetSummary> schema =
      FetchSchema(stub.get(), absl::GetFlag(FLAGS_set));
  if (!schema.ok()) {
    std::fprintf(stderr, "%s\n",
                 std::string(schema.status().message()).c_str());
    return 1;
  }
  std::string prefix = absl::GetFlag(FLAGS_id_prefix);
  if (prefix.empty()) {
    prefix =
        absl::StrCat("load-", absl::ToUnixSeconds(absl::Now()), "-", getpid());
  }
  const std::string label = absl::GetFlag(FLAGS_label).empty()
                                ? DefaultLabel()
                                : absl::GetFlag(FLAGS_label);
  const std::string callers =
      absl::GetFlag(FLAGS_rate) > 0
          ? absl::StrFormat("@%.0f/s", absl::GetFlag(FLAGS_rate))
          : absl::StrCat(absl::GetFlag(FLAGS_callers));
  const std::string mode = absl::GetFlag(FLAGS_ledger_mode);

  std::optional<Phase> floor;
  Phase real_phase;
  if (absl::Status s =
          MeasureBoth(stub.get(), *schema, prefix, &floor, &real_phase);
      !s.ok()) {
    std::fprintf(stderr, "%s: %s\n", label.c_str(),
                 std::string(s.message()).c_str());
    return 1;
  }
  const Phase* real = &real_phase;
  if (floor) PrintPhase(label, mode, callers, *floor, nullptr);
  PrintPhase(label, mode, callers, *real, floor ? &*floor : nullptr);
  if (!absl::GetFlag(FLAGS_result_file).empty()) {
    if (absl::Status s = WriteResult(absl::GetFlag(FLAGS_result_file), *real,
                                     floor ? &*floor : nullptr);
        !s.ok()) {
      std::fprintf(stderr, "%s\n", std::string(s.message()).c_str());
      return 1;
    }
  }
  if (real->load.ok_calls == 0) {
    std::fprintf(stderr, "%s: no OK replies (%s)\n", label.c_str(),
                 Codes(real->load).c_str());
    return 1;
  }
  return 0;
}

int WriteSets() {
  std::vector<int> widths;
  for (absl::string_view w :
       absl::StrSplit(absl::GetFlag(FLAGS_widths), ',', absl::SkipEmpty())) {
    int n = 0;
    if (!absl::SimpleAtoi(w, &n) || n <= 0) {
      std::fprintf(stderr, "--widths: '%s' is not a positive count\n",
                   std::string(w).c_str());
      return 2;
    }
    widths.push_back(n);
  }
  if (absl::Status s = WriteBenchSets(absl::GetFlag(FLAGS_write_sets), widths);
      !s.ok()) {
    std::fprintf(stderr, "%s\n", std::string(s.message()).c_str());
    return 1;
  }
  return 0;
}

int FsyncProbe() {
  absl::StatusOr<SyncTimes> times = ProbeFdatasync(
      absl::GetFlag(FLAGS_fsync_probe), absl::GetFlag(FLAGS_fsync_iterations));
  if (!times.ok()) {
    std::fprintf(stderr, "%s\n", std::string(times.status().message()).c_str());
    return 1;
  }
  absl::PrintF(
      "fdatasync of a 4 KiB append in the ledger's dir, %d rounds: p50 %.0f "
      "us, p99 %.0f us, max %.0f us\n",
      times->iterations, times->p50_us, times->p99_us, times->max_us);
  return 0;
}

}  // namespace
}  // namespace plumbline::bench

int main(int argc, char** argv) {
  absl::ParseCommandLine(argc, argv);
  if (absl::GetFlag(FLAGS_print_header)) {
    plumbline::bench::PrintHeader();
    return 0;
  }
  if (!absl::GetFlag(FLAGS_write_sets).empty()) {
    return plumbline::bench::WriteSets();
  }
  if (!absl::GetFlag(FLAGS_fsync_probe).empty()) {
    return plumbline::bench::FsyncProbe();
  }
  return plumbline::bench::RunScenario();
}
