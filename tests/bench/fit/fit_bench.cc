// File: tests/bench/fit/fit_bench.cc
//
// Time of FitLogistic (scorer/fit.h) on a large dense matrix. Driven by
// tests/bench/fit/run_fit_bench, which writes the data, fits scikit-learn on
// the same data in the same run and prints the ratio; it can also be run by
// hand:
//
//   fit_bench --matrix X.f64 --labels Y.f64 [--l2_lambda 0]
//             [--result_json FIT.json] [--benchmark_* flags]
//
// X.f64 is raw float64, row-major, n x d; Y.f64 holds n labels (0 or 1) as
// raw float64, so n = size(Y) / 8 and d = size(X) / (8 n). --result_json
// receives the fit (intercept, coefficients, log-likelihood, iterations)
// made before benchmarking. Built with the project, never run by ctest:
// timing belongs to benchmarks, not tests.
#include <cstdint>
#include <fstream>
#include <iostream>
#include <string>

#include "absl/flags/flag.h"
#include "absl/flags/parse.h"
#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "absl/strings/str_join.h"
#include "benchmark/benchmark.h"
#include "scorer/fit.h"

ABSL_FLAG(std::string, matrix, "", "raw float64 row-major n x d design matrix");
ABSL_FLAG(std::string, labels, "", "raw float64 labels, n values of 0 or 1");
ABSL_FLAG(double, l2_lambda, 0,
          "L2 penalty of the fit (FitOptions::l2_lambda)");
ABSL_FLAG(std::string, result_json, "",
          "if set, write the fit made before benchmarking here as JSON");

namespace plumbline::scorer {
namespace {

absl::StatusOr<std::string> ReadBytes(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) return absl::NotFoundError(absl::StrCat(path, ": cannot open"));
  std::string bytes((std::istreambuf_iterator<char>(in)),
                    std::istreambuf_iterator<char>());
  if (in.bad()) return absl::DataLossError(absl::StrCat(path, ": read failed"));
  return bytes;
}

// Everything the benchmark reads; loaded once in main, read-only after.
struct BenchData {
  RowMatrix x;
  Eigen::VectorXd y;
  FitOptions options;
};

absl::Status Load(BenchData& data) {
  const std::string matrix_path = absl::GetFlag(FLAGS_matrix);
  const std::string labels_path = absl::GetFlag(FLAGS_labels);
  if (matrix_path.empty() || labels_path.empty()) {
    return absl::InvalidArgumentError("--matrix and --labels are required");
  }
  absl::StatusOr<std::string> labels = ReadBytes(labels_path);
  if (!labels.ok()) return labels.status();
  absl::StatusOr<std::string> matrix = ReadBytes(matrix_path);
  if (!matrix.ok()) return matrix.status();
  const size_t n = labels->size() / sizeof(double);
  if (n == 0 || labels->size() % sizeof(double) != 0 ||
      matrix->size() % (n * sizeof(double)) != 0) {
    return absl::InvalidArgumentError(
        absl::StrCat(matrix_path, " (", matrix->size(), " bytes) and ",
                     labels_path, " (", labels->size(),
                     " bytes) are not an n x d float64 matrix and n labels"));
  }
  const size_t d = matrix->size() / (n * sizeof(double));
  data.y.resize(static_cast<Eigen::Index>(n));
  std::copy_n(labels->data(), labels->size(),
              reinterpret_cast<char*>(data.y.data()));
  labels->clear();
  data.x.resize(static_cast<Eigen::Index>(n), static_cast<Eigen::Index>(d));
  std::copy_n(matrix->data(), matrix->size(),
              reinterpret_cast<char*>(data.x.data()));
  data.options.l2_lambda = absl::GetFlag(FLAGS_l2_lambda);
  data.options.keep_fitted_probabilities = false;
  return absl::OkStatus();
}

absl::Status WriteResult(const std::string& path, const FitResult& fit) {
  std::ofstream out(path, std::ios::trunc);
  out << absl::StrFormat(
      "{\"intercept\": %.17g, \"coefficients\": [%s], \"log_likelihood\": "
      "%.17g, \"iterations\": %d, \"converged\": %s, \"rows\": %d}\n",
      fit.intercept,
      absl::StrJoin(fit.coefficients.begin(), fit.coefficients.end(), ", ",
                    [](std::string* s, double v) {
                      absl::StrAppendFormat(s, "%.17g", v);
                    }),
      fit.log_likelihood, fit.iterations, fit.converged ? "true" : "false",
      fit.rows);
  if (!out) return absl::UnavailableError(absl::StrCat(path, ": cannot write"));
  return absl::OkStatus();
}

void FitBench(benchmark::State& state, const BenchData& data) {
  int iterations = 0;
  for (auto _ : state) {
    absl::StatusOr<FitResult> fit = FitLogistic(data.x, data.y, data.options);
    if (!fit.ok()) {
      state.SkipWithError(std::string(fit.status().message()).c_str());
      break;
    }
    iterations = fit->iterations;
    benchmark::DoNotOptimize(fit->coefficients.data());
  }
  state.counters["newton_iterations"] = iterations;
  state.SetItemsProcessed(state.iterations() * data.x.rows());
}

absl::Status Run(BenchData& data) {
  if (absl::Status st = Load(data); !st.ok()) return st;
  const std::string result_path = absl::GetFlag(FLAGS_result_json);
  if (!result_path.empty()) {
    absl::StatusOr<FitResult> fit = FitLogistic(data.x, data.y, data.options);
    if (!fit.ok()) return fit.status();
    if (absl::Status st = WriteResult(result_path, *fit); !st.ok()) return st;
  }
  // The lambda holds `data` by reference: it outlives the benchmark run.
  benchmark::RegisterBenchmark(
      "FitLogistic/all_rows",
      [&data](benchmark::State& state) { FitBench(state, data); })
      ->Unit(benchmark::kMillisecond)
      ->UseRealTime()
      ->Iterations(1);
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
    std::cerr << "fit_bench: " << status << "\n";
    return 1;
  }
  return 0;
}
