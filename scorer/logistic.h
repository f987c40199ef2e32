// File: scorer/logistic.h
//
// The logistic function and its logarithm, written so that they stay finite
// and accurate over the whole range of log-odds a model can produce (tested
// to |x| = 1e3 and beyond). Used by scoring, by the monitor's log-loss and by
// the fitter.
//
//   double p = plumbline::Logistic(2.0);        // 0.8807970779778823
//   double lp = plumbline::LogLogistic(-800.0); // -800, where log(p) = -inf
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_SCORER_LOGISTIC_H_
#define PLUMBLINE_SCORER_LOGISTIC_H_

#include <cmath>

namespace plumbline {

// 1 / (1 + exp(-x)), without overflow for large |x|. Returns exactly 0 below
// about -745 (where the true value is under the smallest double) and exactly
// 1 above about 37 (where it rounds to 1).
inline double Logistic(double x) {
  if (x >= 0) return 1.0 / (1.0 + std::exp(-x));
  const double e = std::exp(x);
  return e / (1.0 + e);
}

// log(Logistic(x)) = -log(1 + exp(-x)), accurate where Logistic(x) is tiny
// or rounds to 1. LogLogistic(-x) is log(1 - Logistic(x)).
inline double LogLogistic(double x) {
  if (x >= 0) return -std::log1p(std::exp(-x));
  return x - std::log1p(std::exp(x));
}

}  // namespace plumbline

#endif  // PLUMBLINE_SCORER_LOGISTIC_H_
