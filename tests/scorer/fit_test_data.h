// File: tests/scorer/fit_test_data.h
//
// Data for the fitter's tests: pulling matrices and vectors out of the JSON
// that tests/scorer/fit_reference.py writes, and small seeded synthetic
// data sets whose expected fits come from a reference computed in the same
// test (never from constants typed in). Test-only.
#ifndef PLUMBLINE_TESTS_SCORER_FIT_TEST_DATA_H_
#define PLUMBLINE_TESTS_SCORER_FIT_TEST_DATA_H_

#include <Eigen/Core>
#include <algorithm>
#include <cmath>
#include <random>
#include <string>
#include <vector>

#include "google/protobuf/struct.pb.h"
#include "gtest/gtest.h"
#include "scorer/logistic.h"
#include "scorer/scoring_plan.h"
#include "tests/testing/json_file.h"

namespace plumbline::testing {

// The object under `key`; fails the test and returns an empty one if absent.
inline const google::protobuf::Struct& Section(
    const google::protobuf::Struct& object, const std::string& key) {
  auto it = object.fields().find(key);
  if (it == object.fields().end() || !it->second.has_struct_value()) {
    ADD_FAILURE() << "reference JSON has no object \"" << key << "\"";
    return google::protobuf::Struct::default_instance();
  }
  return it->second.struct_value();
}

inline double Number(const google::protobuf::Struct& object,
                     const std::string& key) {
  auto it = object.fields().find(key);
  if (it == object.fields().end()) {
    ADD_FAILURE() << "reference JSON has no number \"" << key << "\"";
    return std::nan("");
  }
  return it->second.number_value();
}

inline Eigen::VectorXd Vector(const google::protobuf::Struct& object,
                              const std::string& key) {
  auto list = NumberList(object, key);
  if (!list.ok()) {
    ADD_FAILURE() << list.status();
    return {};
  }
  return Eigen::Map<const Eigen::VectorXd>(
      list->data(), static_cast<Eigen::Index>(list->size()));
}

// The row-major matrix under `key`, shaped by the numbers "rows" and "cols".
inline scorer::RowMatrix Matrix(const google::protobuf::Struct& object,
                                const std::string& key) {
  const Eigen::VectorXd flat = Vector(object, key);
  const auto rows = static_cast<Eigen::Index>(Number(object, "rows"));
  const auto cols = static_cast<Eigen::Index>(Number(object, "cols"));
  if (flat.size() != rows * cols) {
    ADD_FAILURE() << key << " has " << flat.size() << " numbers, not " << rows
                  << " x " << cols;
    return {};
  }
  return Eigen::Map<const scorer::RowMatrix>(flat.data(), rows, cols);
}

// Largest |a_i - b_i| / |b_i| (b is the reference).
inline double MaxRelativeDifference(const Eigen::VectorXd& a,
                                    const Eigen::VectorXd& b) {
  EXPECT_EQ(a.size(), b.size());
  double worst = 0;
  for (Eigen::Index i = 0; i < std::min(a.size(), b.size()); ++i) {
    worst = std::max(worst, std::abs(a[i] - b[i]) / std::abs(b[i]));
  }
  return worst;
}

// (intercept, coefficients) as one vector, intercept first.
inline Eigen::VectorXd WithIntercept(double intercept,
                                     const Eigen::VectorXd& b) {
  Eigen::VectorXd out(b.size() + 1);
  out << intercept, b;
  return out;
}

// n rows of d correlated columns on different scales and offsets, labels
// drawn from a logistic model with log-odds `intercept + x_std · beta`
// where x_std are the columns before scaling. Seeded: the same arguments
// give the same data with the same standard library.
struct SyntheticData {
  scorer::RowMatrix x;
  Eigen::VectorXd y;
};

inline SyntheticData MakeSyntheticData(int n, int d, unsigned seed,
                                       double signal = 0.8) {
  std::mt19937_64 rng(seed);
  std::normal_distribution<double> normal;
  std::uniform_real_distribution<double> uniform;
  SyntheticData data{scorer::RowMatrix(n, d), Eigen::VectorXd(n)};
  for (int i = 0; i < n; ++i) {
    const double shared = normal(rng);
    double eta = -0.4;
    for (int j = 0; j < d; ++j) {
      const double z = normal(rng) + 0.5 * shared;
      eta += signal * z * (j % 2 == 0 ? 1.0 : -0.6) / (1.0 + j);
      data.x(i, j) = std::pow(10.0, j % 4 - 1) * z + 3.0 * j;
    }
    data.y[i] = uniform(rng) < Logistic(eta) ? 1.0 : 0.0;
  }
  return data;
}

}  // namespace plumbline::testing

#endif  // PLUMBLINE_TESTS_SCORER_FIT_TEST_DATA_H_
