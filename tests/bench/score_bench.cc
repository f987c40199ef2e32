// File: tests/bench/score_bench.cc
//
// Scoring throughput and per-record latency of ScoringPlan on a large dense
// matrix. Driven by tests/bench/run_score_bench, which writes the matrix and
// the set, times scikit-learn on the same data and prints the ratio; it can
// also be run by hand:
//
//   score_bench --matrix X.f64 --set SET.json [--dump_probabilities P.f64
//               --dump_rows 10000] [--benchmark_* flags]
//
// The matrix file is raw float64, row-major, with one column per feature of
// the set in feature order (categorical columns hold level indices), so its
// row count is size / (8 * features). Built with the project, not run by
// ctest: timing belongs to benchmarks, never to tests.
#include <algorithm>
#include <cstdint>
#include <fstream>
#include <iostream>
#include <memory>
#include <string>
#include <vector>

#include "absl/flags/flag.h"
#include "absl/flags/parse.h"
#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/str_cat.h"
#include "benchmark/benchmark.h"
#include "scorer/coefficient_set.h"
#include "scorer/scoring_plan.h"

ABSL_FLAG(std::string, matrix, "",
          "raw float64 row-major matrix, one column per feature of --set");
ABSL_FLAG(std::string, set, "", "coefficient-set JSON file");
ABSL_FLAG(std::string, dump_probabilities, "",
          "if set, write the probabilities of the first --dump_rows rows here "
          "as raw float64 before benchmarking");
ABSL_FLAG(int64_t, dump_rows, 10000, "rows written by --dump_probabilities");
ABSL_FLAG(int64_t, per_record_rows, 10000,
          "rows the per-record benchmark cycles through");

namespace plumbline::scorer {
namespace {

absl::StatusOr<RowMatrix> ReadMatrix(const std::string& path, int cols) {
  std::ifstream in(path, std::ios::binary | std::ios::ate);
  if (!in) return absl::NotFoundError(absl::StrCat(path, ": cannot open"));
  const std::streamoff bytes = in.tellg();
  const std::streamoff row_bytes =
      static_cast<std::streamoff>(sizeof(double)) * cols;
  if (bytes <= 0 || bytes % row_bytes != 0) {
    return absl::InvalidArgumentError(absl::StrCat(
        path, ": ", bytes, " bytes is not a whole number of rows of ", cols,
        " float64 values"));
  }
  RowMatrix x(bytes / row_bytes, cols);
  in.seekg(0);
  if (!in.read(reinterpret_cast<char*>(x.data()), bytes)) {
    return absl::DataLossError(absl::StrCat(path, ": short read"));
  }
  return x;
}

absl::Status WriteDoubles(const std::string& path, const Eigen::VectorXd& v) {
  std::ofstream out(path, std::ios::binary | std::ios::trunc);
  out.write(reinterpret_cast<const char*>(v.data()),
            static_cast<std::streamsize>(sizeof(double) * v.size()));
  if (!out) return absl::UnavailableError(absl::StrCat(path, ": cannot write"));
  return absl::OkStatus();
}

// Everything the benchmarks read; loaded once in main. Read-only afterwards.
struct BenchData {
  std::shared_ptr<const ScoringPlan> plan;
  RowMatrix x;
  std::vector<int> columns;  // feature i is column i
};

void ScoreDenseBench(benchmark::State& state, const BenchData& data) {
  Eigen::VectorXd log_odds(data.x.rows()), probability(data.x.rows());
  for (auto _ : state) {
    absl::Status status =
        data.plan->ScoreDense(data.x, data.columns, {}, log_odds, probability);
    if (!status.ok()) {
      state.SkipWithError(std::string(status.message()).c_str());
      break;
    }
    benchmark::DoNotOptimize(probability.data());
    benchmark::ClobberMemory();
  }
  state.SetItemsProcessed(state.iterations() * data.x.rows());
}

// One Score() call per iteration, cycling through the first rows, with
// `state.range(0)` reason codes.
void ScorePerRecordBench(benchmark::State& state, const BenchData& data) {
  const int64_t n =
      std::min<int64_t>(data.x.rows(), absl::GetFlag(FLAGS_per_record_rows));
  std::vector<std::vector<RawValue>> records(n);
  for (int64_t i = 0; i < n; ++i) {
    for (int j = 0; j < data.plan->num_features(); ++j) {
      records[i].push_back(RawValue::Number(data.x(i, j)));
    }
  }
  const ReasonOptions reasons{.top = static_cast<int>(state.range(0))};
  int64_t i = 0;
  for (auto _ : state) {
    absl::StatusOr<ScoreResult> result = data.plan->Score(records[i], reasons);
    if (!result.ok()) {
      state.SkipWithError(std::string(result.status().message()).c_str());
      break;
    }
    benchmark::DoNotOptimize(result->probability);
    if (++i == n) i = 0;
  }
  state.SetItemsProcessed(state.iterations());
}

absl::Status Run(BenchData& data) {
  const std::string set_path = absl::GetFlag(FLAGS_set);
  const std::string matrix_path = absl::GetFlag(FLAGS_matrix);
  if (set_path.empty() || matrix_path.empty()) {
    return absl::InvalidArgumentError("--set and --matrix are required");
  }
  absl::StatusOr<v1::CoefficientSet> set = ReadCoefficientSetFile(set_path);
  if (!set.ok()) return set.status();
  absl::StatusOr<std::shared_ptr<const ScoringPlan>> plan =
      ScoringPlan::Compile(*std::move(set), set_path);
  if (!plan.ok()) return plan.status();
  data.plan = *std::move(plan);
  for (int j = 0; j < data.plan->num_features(); ++j) data.columns.push_back(j);
  absl::StatusOr<RowMatrix> x =
      ReadMatrix(matrix_path, data.plan->num_features());
  if (!x.ok()) return x.status();
  data.x = *std::move(x);

  const std::string dump_path = absl::GetFlag(FLAGS_dump_probabilities);
  if (!dump_path.empty()) {
    const int64_t k =
        std::min<int64_t>(data.x.rows(), absl::GetFlag(FLAGS_dump_rows));
    Eigen::VectorXd log_odds(k), probability(k);
    absl::Status status = data.plan->ScoreDense(data.x.topRows(k), data.columns,
                                                {}, log_odds, probability);
    if (!status.ok()) return status;
    if (status = WriteDoubles(dump_path, probability); !status.ok()) {
      return status;
    }
  }

  // The lambdas hold `data` by reference: it outlives the benchmark run.
  benchmark::RegisterBenchmark(
      "ScoreDense/all_rows",
      [&data](benchmark::State& state) { ScoreDenseBench(state, data); })
      ->Unit(benchmark::kMillisecond)
      ->UseRealTime();
  benchmark::RegisterBenchmark(
      "ScorePerRecord/reasons",
      [&data](benchmark::State& state) { ScorePerRecordBench(state, data); })
      ->Arg(0)
      ->Arg(3)
      ->Unit(benchmark::kNanosecond);
  benchmark::RunSpecifiedBenchmarks();
  return absl::OkStatus();
}

}  // namespace
}  // namespace plumbline::scorer

int main(int argc, char** argv) {
  benchmark::Initialize(&argc, argv);  // takes the --benchmark_* flags
  absl::ParseCommandLine(argc, argv);  // takes the rest
  plumbline::scorer::BenchData data;
  absl::Status status = plumbline::scorer::Run(data);
  benchmark::Shutdown();
  if (!status.ok()) {
    std::cerr << "score_bench: " << status << "\n";
    return 1;
  }
  return 0;
}
