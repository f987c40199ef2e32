// File: tests/monitor/test_streams.h
//
// Seeded record streams and comparison helpers shared by the monitor's
// streaming tests. Test-only.
#ifndef PLUMBLINE_TESTS_MONITOR_TEST_STREAMS_H_
#define PLUMBLINE_TESTS_MONITOR_TEST_STREAMS_H_

#include <cmath>
#include <cstddef>
#include <cstdint>
#include <random>
#include <string>
#include <vector>

#include "absl/status/statusor.h"
#include "absl/types/span.h"
#include "gtest/gtest.h"
#include "monitor/score_grid.h"
#include "scorer/logistic.h"

namespace plumbline::monitor::testing {

// Labelled records: log-odds from a normal distribution (with a few beyond
// the score grid's range), outcomes drawn from a slightly over-confident
// model logit P(y = 1) = 0.2 + 0.8 * log_odds. Deterministic for a seed.
struct Stream {
  std::vector<double> log_odds;
  std::vector<int> labels;

  absl::Span<const double> LogOdds(size_t begin, size_t end) const {
    return absl::MakeConstSpan(log_odds).subspan(begin, end - begin);
  }
  absl::Span<const int> Labels(size_t begin, size_t end) const {
    return absl::MakeConstSpan(labels).subspan(begin, end - begin);
  }
};

inline Stream MakeStream(size_t n, uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> score(-1.0, 1.8);
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  Stream s;
  s.log_odds.reserve(n);
  s.labels.reserve(n);
  for (size_t i = 0; i < n; ++i) {
    double z = score(rng);
    if (i % 99991 == 5) z = (i % 2 == 0) ? 24.5 : -31.0;  // overflow cells
    s.log_odds.push_back(z);
    s.labels.push_back(unit(rng) < Logistic(0.2 + 0.8 * z) ? 1 : 0);
  }
  return s;
}

inline std::vector<double> Probabilities(absl::Span<const double> log_odds) {
  std::vector<double> p;
  p.reserve(log_odds.size());
  for (double z : log_odds) p.push_back(Logistic(z));
  return p;
}

inline std::vector<double> Quantised(const ScoreGrid& grid,
                                     absl::Span<const double> log_odds) {
  std::vector<double> q;
  q.reserve(log_odds.size());
  for (double z : log_odds) q.push_back(grid.Quantise(z));
  return q;
}

// |a - b| <= rel * max(|b|, floor): relative, absolute near 0.
inline void ExpectClose(double a, double b, const std::string& what,
                        double rel = 1e-12, double floor = 1e-3) {
  EXPECT_NEAR(a, b, rel * std::max(std::abs(b), floor)) << what;
}

// Both fail with the same code, or both succeed; returns true for the
// latter so the caller compares the values.
template <typename A, typename B>
bool SameOutcome(const absl::StatusOr<A>& a, const absl::StatusOr<B>& b,
                 const std::string& what) {
  EXPECT_EQ(a.ok(), b.ok())
      << what << ": " << a.status() << " vs " << b.status();
  if (!a.ok() && !b.ok()) {
    EXPECT_EQ(a.status().code(), b.status().code()) << what;
  }
  return a.ok() && b.ok();
}

}  // namespace plumbline::monitor::testing

#endif  // PLUMBLINE_TESTS_MONITOR_TEST_STREAMS_H_
