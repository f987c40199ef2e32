// File: monitor/compensated_sum.h
//
// A running sum of doubles that carries its own rounding error (Neumaier's
// variant of Kahan summation), so that a sum over a million records, or the
// merge of many window buckets, agrees with any other summation order to
// about one rounding of the total. Every pure function and accumulator in
// monitor/ sums through it, which is what lets a window's merged figures
// match the pure functions to 1e-12.
//
//   CompensatedSum s;
//   for (double v : values) s.Add(v);
//   double total = s.Value();
//
// Hand-written: Eigen's sum(), std::accumulate and std::reduce all add
// plainly, and no library the project uses offers compensated summation.
// Not thread-safe; a value type.
#ifndef PLUMBLINE_MONITOR_COMPENSATED_SUM_H_
#define PLUMBLINE_MONITOR_COMPENSATED_SUM_H_

#include <cmath>

namespace plumbline::monitor {

class CompensatedSum {
 public:
  void Add(double x) {
    const double t = sum_ + x;
    // The low-order part lost by `sum_ + x` is recovered exactly from the
    // larger operand (Neumaier's rule), which keeps it correct when |x| is
    // the larger one.
    if (std::abs(sum_) >= std::abs(x)) {
      compensation_ += (sum_ - t) + x;
    } else {
      compensation_ += (x - t) + sum_;
    }
    sum_ = t;
  }

  void Merge(const CompensatedSum& other) {
    Add(other.sum_);
    compensation_ += other.compensation_;
  }

  double Value() const { return sum_ + compensation_; }

  // The two parts, for saving a sum exactly (daemon/health/window_state.h)
  // and making it again with FromParts.
  double sum() const { return sum_; }
  double compensation() const { return compensation_; }
  static CompensatedSum FromParts(double sum, double compensation) {
    CompensatedSum s;
    s.sum_ = sum;
    s.compensation_ = compensation;
    return s;
  }

 private:
  double sum_ = 0;
  double compensation_ = 0;
};

}  // namespace plumbline::monitor

#endif  // PLUMBLINE_MONITOR_COMPENSATED_SUM_H_
