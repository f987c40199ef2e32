// File: tests/bench/ledger_bench.cc
//
// Ingest speed of the ledger (daemon/ledger.h) through its public API, with
// group commit: scored records (features JSON of about 150 bytes, as plumbd
// writes them) and outcomes joined to them, from several producer threads
// sending batches, each batch acknowledged after its commit (the daemon's
// default). Also the cost of building the features JSON per record, by hand
// (what plumbd does) and through protobuf's JSON printer.
//
// The ledger runs with plumbd's default LedgerOptions; only the load
// changes: 1, 2, 4 or 8 producers, each waiting for the acknowledgement of
// its batch of 500 before sending the next (rows in flight = producers x
// 500). 4 producers stand for a busy server (see run_ledger_bench).
//
// Driven by tests/bench/run_ledger_bench, which also inserts the same rows
// with Python's sqlite3 executemany in one transaction and prints the ratio.
// By hand:
//
//   ledger_bench [--rows 200000] [--dir DIR] [--benchmark_* flags]
//   ledger_bench --rows N --write_rows FILE     # the rows as TSV, then exit
//   ledger_bench --empty_ledger FILE            # a migrated empty ledger
//
// Built with the project, not run by ctest: no timing in tests.
#include <stdlib.h>
#include <sys/resource.h>
#include <unistd.h>

#include <cstdint>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <memory>
#include <random>
#include <string>
#include <thread>
#include <vector>

#include "absl/flags/flag.h"
#include "absl/flags/parse.h"
#include "absl/status/status.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "absl/time/clock.h"
#include "benchmark/benchmark.h"
#include "daemon/ledger/sqlite_ledger.h"
#include "daemon/pg/pg_connection.h"
#include "daemon/pg/pg_ledger.h"
#include "daemon/pg/pg_schema.h"
#include "daemon/scoring/features_json.h"
#include "daemon/util/json_text.h"
#include "google/protobuf/struct.pb.h"
#include "google/protobuf/util/json_util.h"
#include "scorer/coefficient_set.h"
#include "scorer/scoring_plan.h"

ABSL_FLAG(int64_t, rows, 200000, "rows per ingest run");
ABSL_FLAG(std::string, dir, "",
          "directory for the benchmark ledgers (default: a new one under "
          "$TMPDIR or /tmp, removed at exit)");
ABSL_FLAG(std::string, write_rows, "",
          "write the --rows score rows as TSV to this file and exit");
ABSL_FLAG(std::string, empty_ledger, "",
          "create a migrated, empty ledger at this path and exit");
ABSL_FLAG(std::string, pg_cluster, "",
          "also ingest into PostgreSQL: the postgresql:// URI of a cluster "
          "(password in PGPASSFILE) where each run makes a fresh database; "
          "and, as the reference, COPY the same rows into the same tables "
          "on one connection");

namespace plumbline::daemon {
namespace {

using scorer::RawValue;

// An invented courier set like the demo's: seven features, two categorical.
constexpr char kSetJson[] = R"json({
  "name": "courier_first_attempt", "version": "2026-12-01.1", "intercept": -2.1,
  "features": [
    {"name": "distance_km", "numeric": {"center": 6, "scale": 4, "clip_low": 0,
     "clip_high": 60, "coefficient": 0.35}},
    {"name": "parcel_kg", "numeric": {"center": 2, "scale": 1.5,
     "coefficient": 0.1}},
    {"name": "hour_of_day", "binned": {"edges": [10, 13, 17, 20],
     "coefficients": [0.2, 0, -0.1, 0.15, 0.4]}},
    {"name": "building_type", "categorical": {"levels": [
      {"value": "house", "coefficient": 0}, {"value": "flat", "coefficient": 0.55},
      {"value": "office", "coefficient": -0.2}, {"value": "shop", "coefficient": -0.4}]}},
    {"name": "prior_failures", "numeric": {"center": 0, "scale": 1,
     "coefficient": 0.45}},
    {"name": "rainfall_mm", "numeric": {"center": 1, "scale": 3,
     "coefficient": 0.12}},
    {"name": "service", "categorical": {"levels": [
      {"value": "standard", "coefficient": 0}, {"value": "express", "coefficient": 0.1},
      {"value": "same_day", "coefficient": 0.3}]}}
  ]})json";

struct BenchData {
  std::shared_ptr<const scorer::ScoringPlan> plan;
  // Per row: the raw values and the same record as a Struct.
  std::vector<std::vector<RawValue>> values;
  std::vector<google::protobuf::Struct> structs;
  // The ledger rows built from them.
  std::vector<ScoreEntry> scores;
  std::vector<OutcomeEntry> outcomes;
  std::string dir;
};

double Rounded(double x, double unit) { return std::round(x / unit) * unit; }

absl::Status MakeData(int64_t rows, BenchData& data) {
  auto set = scorer::ParseCoefficientSet(kSetJson, "ledger_bench set");
  if (!set.ok()) return set.status();
  auto plan = scorer::ScoringPlan::Compile(*std::move(set), "ledger_bench");
  if (!plan.ok()) return plan.status();
  data.plan = *std::move(plan);
  const scorer::ScoringPlan& p = *data.plan;
  std::mt19937_64 rng(20261202);
  std::uniform_real_distribution<double> u(0, 1);
  const char* buildings[] = {"house", "flat", "office", "shop"};
  const char* services[] = {"standard", "express", "same_day"};
  const std::vector<uint8_t> sent(static_cast<size_t>(p.num_features()), 1);
  const absl::Time t0 = absl::FromUnixSeconds(1796113800);
  data.values.resize(static_cast<size_t>(rows));
  data.structs.resize(static_cast<size_t>(rows));
  data.scores.resize(static_cast<size_t>(rows));
  data.outcomes.resize(static_cast<size_t>(rows));
  for (int64_t i = 0; i < rows; ++i) {
    std::vector<RawValue>& v = data.values[static_cast<size_t>(i)];
    v = {RawValue::Number(Rounded(0.2 + 35 * u(rng), 0.001)),
         RawValue::Number(Rounded(0.1 + 12 * u(rng), 0.01)),
         RawValue::Number(Rounded(7 + 14 * u(rng), 0.25)),
         RawValue::Text(buildings[rng() % 4]),
         RawValue::Number(static_cast<double>(rng() % 4)),
         RawValue::Number(Rounded(8 * u(rng) * u(rng), 0.1)),
         RawValue::Text(services[rng() % 3])};
    auto& fields = *data.structs[static_cast<size_t>(i)].mutable_fields();
    for (int f = 0; f < p.num_features(); ++f) {
      const RawValue& x = v[static_cast<size_t>(f)];
      if (x.kind == RawValue::Kind::kNumber) {
        fields[p.feature_name(f)].set_number_value(x.number);
      } else {
        fields[p.feature_name(f)].set_string_value(std::string(x.text));
      }
    }
    auto scored = p.Score(v);
    if (!scored.ok()) return scored.status();
    ScoreEntry& e = data.scores[static_cast<size_t>(i)];
    e.record_id = absl::StrCat("parcel-2026-", i);
    e.set_name = p.name();
    e.set_version = p.version();
    e.scored_at = t0 + absl::Milliseconds(i);
    e.log_odds = scored->log_odds;
    e.probability = scored->probability;
    e.features = FeaturesJson(p, v, sent);
    data.outcomes[static_cast<size_t>(i)] = OutcomeEntry{
        e.record_id, static_cast<int>(i % 2), e.scored_at + absl::Hours(1)};
  }
  return absl::OkStatus();
}

absl::StatusOr<std::unique_ptr<Ledger>> OpenLedger(const BenchData& data,
                                                   bool durable) {
  LedgerOptions options;
  options.path = absl::StrCat(data.dir, "/bench.db");
  options.durable_commits = durable;
  return SqliteLedger::Open(options);
}

absl::StatusOr<std::unique_ptr<Ledger>> FreshLedger(const BenchData& data,
                                                    bool durable) {
  const std::string path = absl::StrCat(data.dir, "/bench.db");
  for (const char* suffix : {"", "-wal", "-shm"}) {
    std::filesystem::remove(path + suffix);
  }
  return OpenLedger(data, durable);
}

// CPU time of the whole process (every thread), user + system.
absl::Duration ProcessCpuTime() {
  rusage usage{};
  getrusage(RUSAGE_SELF, &usage);
  return absl::DurationFromTimeval(usage.ru_utime) +
         absl::DurationFromTimeval(usage.ru_stime);
}

// Splits `rows` over `producers` threads in batches of `batch` and sends
// them with `send`; returns the wall time of the sending and adds the
// process CPU time it took to `cpu`.
template <typename Row, typename Send>
absl::Duration Produce(const std::vector<Row>& rows, int producers, int batch,
                       const Send& send, absl::Duration& cpu) {
  std::vector<std::vector<std::vector<Row>>> work(
      static_cast<size_t>(producers));
  for (size_t start = 0, k = 0; start < rows.size(); start += batch, ++k) {
    const size_t end =
        std::min(rows.size(), start + static_cast<size_t>(batch));
    work[k % work.size()].emplace_back(rows.begin() + static_cast<long>(start),
                                       rows.begin() + static_cast<long>(end));
  }
  const absl::Duration cpu_start = ProcessCpuTime();
  const absl::Time start = absl::Now();
  std::vector<std::thread> threads;
  for (auto& batches : work) {
    threads.emplace_back([&batches, &send] {
      for (auto& b : batches) send(std::move(b));
    });
  }
  for (auto& t : threads) t.join();
  const absl::Duration took = absl::Now() - start;
  cpu += ProcessCpuTime() - cpu_start;
  return took;
}

// Args: producers, batch size, durable (1 = synchronous=FULL).
void IngestScores(benchmark::State& state, const BenchData& data) {
  absl::Duration cpu;
  for (auto _ : state) {
    auto ledger = FreshLedger(data, state.range(2) != 0);
    if (!ledger.ok()) {
      state.SkipWithError(std::string(ledger.status().message()).c_str());
      return;
    }
    std::atomic<int> failures{0};
    const absl::Duration took = Produce(
        data.scores, static_cast<int>(state.range(0)),
        static_cast<int>(state.range(1)),
        [&](std::vector<ScoreEntry> b) {
          if (!(*ledger)->AppendScores(std::move(b)).ok()) ++failures;
        },
        cpu);
    if (failures > 0) state.SkipWithError("AppendScores failed");
    state.SetIterationTime(absl::ToDoubleSeconds(took));
    state.counters["commits"] =
        static_cast<double>((*ledger)->stats().committed_transactions);
  }
  const auto rows =
      state.iterations() * static_cast<int64_t>(data.scores.size());
  state.SetItemsProcessed(rows);
  state.counters["cpu_us_per_row"] =
      absl::ToDoubleMicroseconds(cpu) / static_cast<double>(rows);
}

void IngestOutcomes(benchmark::State& state, const BenchData& data) {
  absl::Duration cpu;
  for (auto _ : state) {
    auto ledger = FreshLedger(data, state.range(2) != 0);
    if (!ledger.ok() || !(*ledger)->AppendScores(data.scores).ok()) {
      state.SkipWithError("cannot prepare the scores");
      return;
    }
    // Closed and opened again, so the outcomes start on a checkpointed
    // ledger holding the scores, as on a server that has been running: the
    // copy of the scores' 40 MB of WAL into the database belongs to the
    // scores (Python's reference pays it in the scores' COMMIT too).
    ledger->reset();
    ledger = OpenLedger(data, state.range(2) != 0);
    if (!ledger.ok()) {
      state.SkipWithError(std::string(ledger.status().message()).c_str());
      return;
    }
    std::atomic<int> failures{0};
    const absl::Duration took = Produce(
        data.outcomes, static_cast<int>(state.range(0)),
        static_cast<int>(state.range(1)),
        [&](std::vector<OutcomeEntry> b) {
          auto results = (*ledger)->ReportOutcomes(std::move(b));
          if (!results.ok()) ++failures;
          for (const auto& r : *results) {
            if (!r.status.ok()) ++failures;
          }
        },
        cpu);
    if (failures > 0) state.SkipWithError("ReportOutcomes failed");
    state.SetIterationTime(absl::ToDoubleSeconds(took));
    state.counters["commits"] =
        static_cast<double>((*ledger)->stats().committed_transactions);
  }
  const auto rows =
      state.iterations() * static_cast<int64_t>(data.outcomes.size());
  state.SetItemsProcessed(rows);
  state.counters["cpu_us_per_row"] =
      absl::ToDoubleMicroseconds(cpu) / static_cast<double>(rows);
}

std::string ExactDouble(double v) { return absl::StrFormat("%.17g", v); }

// A fresh database on --pg_cluster; its URI.
absl::StatusOr<std::string> FreshPgDatabase(int n) {
  const std::string cluster = absl::GetFlag(FLAGS_pg_cluster);
  absl::StatusOr<std::unique_ptr<PgConnection>> admin =
      PgConnection::Connect(cluster);
  if (!admin.ok()) return admin.status();
  const std::string name = absl::StrCat("ledger_bench_", getpid(), "_", n);
  if (absl::Status st = (*admin)->Exec(
          absl::StrCat("DROP DATABASE IF EXISTS ", name, " WITH (FORCE);"));
      !st.ok()) {
    return st;
  }
  if (absl::Status st = (*admin)->Exec(absl::StrCat("CREATE DATABASE ", name));
      !st.ok()) {
    return st;
  }
  const size_t slash = cluster.find('/', cluster.find("://") + 3);
  return absl::StrCat(cluster.substr(0, slash + 1), name);
}

absl::StatusOr<std::unique_ptr<Ledger>> FreshPgLedger() {
  static int n = 0;
  absl::StatusOr<std::string> uri = FreshPgDatabase(++n);
  if (!uri.ok()) return uri.status();
  LedgerOptions options;
  options.path = *uri;
  return PgLedger::Open(options);
}

// As IngestScores and IngestOutcomes, on a fresh PostgreSQL ledger.
void PgIngest(benchmark::State& state, const BenchData& data, bool outcomes) {
  absl::Duration cpu;
  for (auto _ : state) {
    auto ledger = FreshPgLedger();
    if (!ledger.ok()) {
      state.SkipWithError(std::string(ledger.status().message()).c_str());
      return;
    }
    std::atomic<int> failures{0};
    absl::Duration took;
    if (!outcomes) {
      took = Produce(
          data.scores, static_cast<int>(state.range(0)),
          static_cast<int>(state.range(1)),
          [&](std::vector<ScoreEntry> b) {
            if (!(*ledger)->AppendScores(std::move(b)).ok()) ++failures;
          },
          cpu);
    } else {
      if (!(*ledger)->AppendScores(data.scores).ok()) {
        state.SkipWithError("cannot prepare the scores");
        return;
      }
      took = Produce(
          data.outcomes, static_cast<int>(state.range(0)),
          static_cast<int>(state.range(1)),
          [&](std::vector<OutcomeEntry> b) {
            auto results = (*ledger)->ReportOutcomes(std::move(b));
            if (!results.ok()) {
              ++failures;
              return;
            }
            for (const auto& r : *results) {
              if (!r.status.ok()) ++failures;
            }
          },
          cpu);
    }
    if (failures > 0) state.SkipWithError("a write failed");
    state.SetIterationTime(absl::ToDoubleSeconds(took));
    state.counters["commits"] =
        static_cast<double>((*ledger)->stats().committed_transactions);
  }
  const auto rows =
      state.iterations() * static_cast<int64_t>(outcomes ? data.outcomes.size()
                                                         : data.scores.size());
  state.SetItemsProcessed(rows);
  // This process only: the server's own CPU is on top (same machine).
  state.counters["cpu_us_per_row"] =
      absl::ToDoubleMicroseconds(cpu) / static_cast<double>(rows);
}

// The reference: the same score rows COPYed into the same tables (scores
// and score_records, schema of daemon/pg/pg_schema.h) on one connection, in
// one transaction, ids drawn by the client: what the server takes with no
// per-call work, no lookups and no group commit.
void PgCopyReference(benchmark::State& state, const BenchData& data) {
  for (auto _ : state) {
    static int n = 1000;
    absl::StatusOr<std::string> uri = FreshPgDatabase(++n);
    absl::StatusOr<std::unique_ptr<PgConnection>> db =
        uri.ok() ? PgConnection::Connect(*uri)
                 : absl::StatusOr<std::unique_ptr<PgConnection>>(uri.status());
    absl::Status st = db.status();
    if (st.ok()) st = MigratePgLedger(**db).status();
    if (st.ok()) {
      st = EnsurePartitions(**db, data.scores.front().scored_at,
                            data.scores.back().scored_at);
    }
    if (st.ok()) {
      st = (*db)->Exec(
          "INSERT INTO set_names(name) VALUES ('bench');"
          "INSERT INTO score_sets(set_name, set_version, role)"
          " VALUES ('bench', 'v1', 'active')");
    }
    if (!st.ok()) {
      state.SkipWithError(std::string(st.message()).c_str());
      return;
    }
    std::vector<PgRow> scores, records;
    for (size_t i = 0; i < data.scores.size(); ++i) {
      const ScoreEntry& e = data.scores[i];
      const std::string id = absl::StrCat(i + 1);
      const std::string at = absl::FormatTime("%Y-%m-%d %H:%M:%E6S+00",
                                              e.scored_at, absl::UTCTimeZone());
      std::string hex = "\\x";
      for (unsigned char c : e.features) absl::StrAppendFormat(&hex, "%02x", c);
      scores.push_back({id, e.record_id, "1", at, ExactDouble(e.log_odds),
                        ExactDouble(e.probability), hex, "1"});
      records.push_back({e.record_id, "1", id, at});
    }
    const absl::Time start = absl::Now();
    st = (*db)->Exec("BEGIN");
    if (st.ok()) {
      st = (*db)
               ->CopyIn(
                   "COPY scores(id, record_id, set_id, scored_at,"
                   " log_odds, probability, features, primary_set)"
                   " FROM STDIN",
                   scores)
               .status();
    }
    if (st.ok()) {
      st = (*db)
               ->CopyIn(
                   "COPY score_records(record_id, primary_set, score_id,"
                   " scored_at) FROM STDIN",
                   records)
               .status();
    }
    if (st.ok()) st = (*db)->Exec("COMMIT");
    if (!st.ok()) {
      state.SkipWithError(std::string(st.message()).c_str());
      return;
    }
    state.SetIterationTime(absl::ToDoubleSeconds(absl::Now() - start));
  }
  state.SetItemsProcessed(state.iterations() *
                          static_cast<int64_t>(data.scores.size()));
}

// FeaturesJson as plumbd builds it.
void JsonByHand(benchmark::State& state, const BenchData& data) {
  const std::vector<uint8_t> sent(data.values[0].size(), 1);
  size_t i = 0;
  for (auto _ : state) {
    std::string json = FeaturesJson(*data.plan, data.values[i], sent);
    benchmark::DoNotOptimize(json.data());
    if (++i == data.values.size()) i = 0;
  }
  state.SetItemsProcessed(state.iterations());
}

// The same by hand but with %.17g numbers (absl::StrAppendFormat).
void JsonByHandPercent17g(benchmark::State& state, const BenchData& data) {
  const scorer::ScoringPlan& p = *data.plan;
  size_t i = 0;
  for (auto _ : state) {
    std::string json = "{";
    for (int f = 0; f < p.num_features(); ++f) {
      if (f > 0) json.push_back(',');
      AppendJsonString(p.feature_name(f), &json);
      json.push_back(':');
      const RawValue& v = data.values[i][static_cast<size_t>(f)];
      if (v.kind == RawValue::Kind::kNumber) {
        absl::StrAppendFormat(&json, "%.17g", v.number);
      } else {
        AppendJsonString(v.text, &json);
      }
    }
    json.push_back('}');
    benchmark::DoNotOptimize(json.data());
    if (++i == data.values.size()) i = 0;
  }
  state.SetItemsProcessed(state.iterations());
}

// protobuf's JSON printer on the record's Struct (which a named record
// already is; the dense form would first have to build one).
void JsonByProtobuf(benchmark::State& state, const BenchData& data) {
  size_t i = 0;
  for (auto _ : state) {
    std::string json;
    auto st =
        google::protobuf::util::MessageToJsonString(data.structs[i], &json);
    benchmark::DoNotOptimize(json.data());
    if (!st.ok()) state.SkipWithError("MessageToJsonString failed");
    if (++i == data.structs.size()) i = 0;
  }
  state.SetItemsProcessed(state.iterations());
}

absl::Status WriteRowsTsv(const BenchData& data, const std::string& path) {
  std::ofstream out(path, std::ios::trunc);
  for (const ScoreEntry& e : data.scores) {
    out << absl::StrFormat("%s\t%s\t%s\t%s\t%d\t%.17g\t%.17g\t%s\n",
                           e.record_id, e.set_name, e.set_version, e.role,
                           absl::ToUnixMicros(e.scored_at), e.log_odds,
                           e.probability, e.features);
  }
  out.close();
  if (!out) return absl::UnavailableError(absl::StrCat(path, ": cannot write"));
  return absl::OkStatus();
}

absl::Status Run(BenchData& data) {
  if (const std::string path = absl::GetFlag(FLAGS_empty_ledger);
      !path.empty()) {
    LedgerOptions options;
    options.path = path;
    return SqliteLedger::Open(options).status();
  }
  if (absl::Status s = MakeData(absl::GetFlag(FLAGS_rows), data); !s.ok()) {
    return s;
  }
  if (const std::string path = absl::GetFlag(FLAGS_write_rows); !path.empty()) {
    return WriteRowsTsv(data, path);
  }
  size_t json_bytes = 0;
  for (const ScoreEntry& e : data.scores) json_bytes += e.features.size();
  std::cerr << "ledger_bench: " << data.scores.size() << " rows, features JSON "
            << json_bytes / std::max<size_t>(1, data.scores.size())
            << " bytes on average, ledger in " << data.dir << "\n";

  // The lambdas hold `data` by reference: it outlives the benchmark run.
  for (auto* b : {benchmark::RegisterBenchmark(
                      "LedgerIngest/scores",
                      [&data](benchmark::State& s) { IngestScores(s, data); }),
                  benchmark::RegisterBenchmark("LedgerIngest/outcomes",
                                               [&data](benchmark::State& s) {
                                                 IngestOutcomes(s, data);
                                               })}) {
    b->ArgNames({"producers", "batch", "durable"})
        ->Args({2, 500, 1})
        ->Args({2, 500, 0})
        ->Args({1, 500, 1})
        ->Args({4, 500, 1})
        ->Args({8, 500, 1})
        ->Args({8, 500, 0})
        ->Iterations(1)
        ->UseManualTime()
        ->Unit(benchmark::kMillisecond);
  }
  if (!absl::GetFlag(FLAGS_pg_cluster).empty()) {
    benchmark::RegisterBenchmark(
        "PgCopy/scores",
        [&data](benchmark::State& s) { PgCopyReference(s, data); })
        ->Iterations(1)
        ->UseManualTime()
        ->Unit(benchmark::kMillisecond);
    for (bool outcomes : {false, true}) {
      benchmark::RegisterBenchmark(
          outcomes ? "PgLedgerIngest/outcomes" : "PgLedgerIngest/scores",
          [&data, outcomes](benchmark::State& s) {
            PgIngest(s, data, outcomes);
          })
          ->ArgNames({"producers", "batch"})
          ->Args({2, 500})
          ->Args({4, 500})
          ->Args({8, 500})
          ->Iterations(1)
          ->UseManualTime()
          ->Unit(benchmark::kMillisecond);
    }
  }
  benchmark::RegisterBenchmark(
      "FeaturesJson/by_hand",
      [&data](benchmark::State& s) { JsonByHand(s, data); });
  benchmark::RegisterBenchmark(
      "FeaturesJson/by_hand_percent17g",
      [&data](benchmark::State& s) { JsonByHandPercent17g(s, data); });
  benchmark::RegisterBenchmark(
      "FeaturesJson/protobuf_printer",
      [&data](benchmark::State& s) { JsonByProtobuf(s, data); });
  benchmark::RunSpecifiedBenchmarks();
  return absl::OkStatus();
}

}  // namespace
}  // namespace plumbline::daemon

int main(int argc, char** argv) {
  benchmark::Initialize(&argc, argv);  // takes the --benchmark_* flags
  absl::ParseCommandLine(argc, argv);  // takes the rest
  plumbline::daemon::BenchData data;
  std::string made_dir;
  data.dir = absl::GetFlag(FLAGS_dir);
  if (data.dir.empty()) {
    const char* base = std::getenv("TMPDIR");
    std::string pattern =
        absl::StrCat(base != nullptr && *base != '\0' ? base : "/tmp",
                     "/ledger-bench-XXXXXX");
    if (mkdtemp(pattern.data()) == nullptr) {
      std::cerr << "ledger_bench: cannot create " << pattern << "\n";
      return 1;
    }
    data.dir = made_dir = pattern;
  }
  absl::Status status = plumbline::daemon::Run(data);
  benchmark::Shutdown();
  if (!made_dir.empty()) std::filesystem::remove_all(made_dir);
  if (!status.ok()) {
    std::cerr << "ledger_bench: " << status << "\n";
    return 1;
  }
  return 0;
}
