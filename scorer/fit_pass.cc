#include "scorer/fit_pass.h"

#include <algorithm>
#include <cmath>
#include <limits>

#include "scorer/logistic.h"

namespace plumbline::scorer::fit_internal {

FitData::FitData(const Eigen::Ref<const RowMatrix>& x,
                 const Eigen::Ref<const Eigen::VectorXd>& y,
                 const Eigen::Ref<const Eigen::VectorXd>& weights,
                 int block_rows, double perfect_probability)
    : x_(x),
      y_(y),
      weights_(weights),
      unit_weights_(weights.size() == 0),
      block_rows_(std::max<Eigen::Index>(1, block_rows)),
      perfect_margin_(
          std::log((1 - perfect_probability) / perfect_probability)),
      block_(std::min(block_rows_, x.rows()), x.cols() + 1),
      eta_(block_.rows()),
      residual_(block_.rows()),
      sqrt_w_(block_.rows()) {}

const ColumnStats& FitData::ComputeStats() {
  const Eigen::Index n = rows(), d = cols();
  ColumnStats& s = stats_;
  // One pass over x. Sums are taken about a shift (the first row with
  // positive weight) so that columns far from zero keep their variance.
  // The mean and scale only have to be close: they reparametrise the
  // problem and the results on the original scale do not depend on them.
  Eigen::Index first = 0;
  while (first < n && !(Weight(first) > 0)) ++first;
  const Eigen::RowVectorXd shift = x_.row(first);
  Eigen::RowVectorXd sum = Eigen::RowVectorXd::Zero(d);
  Eigen::RowVectorXd sum_sq = Eigen::RowVectorXd::Zero(d);
  Eigen::RowVectorXd low = shift, high = shift;
  s.weight_sum = 0;
  s.positive_weight = 0;
  RowMatrix& c = block_;  // scratch: the shifted rows
  for (Eigen::Index start = 0; start < n; start += block_rows_) {
    const Eigen::Index m = std::min(block_rows_, n - start);
    auto shifted = c.topRows(m).leftCols(d);
    shifted = x_.middleRows(start, m).rowwise() - shift;
    if (unit_weights_) {
      sum += shifted.colwise().sum();
      sum_sq += shifted.cwiseAbs2().colwise().sum();
      low = low.cwiseMin(x_.middleRows(start, m).colwise().minCoeff());
      high = high.cwiseMax(x_.middleRows(start, m).colwise().maxCoeff());
      s.weight_sum += static_cast<double>(m);
      s.positive_weight += y_.segment(start, m).sum();
    } else {
      const auto w = weights_.segment(start, m);
      sum += w.transpose() * shifted;
      sum_sq += w.transpose() * shifted.cwiseAbs2();
      for (Eigen::Index i = 0; i < m; ++i) {
        if (!(w[i] > 0)) continue;
        low = low.cwiseMin(x_.row(start + i));
        high = high.cwiseMax(x_.row(start + i));
      }
      s.weight_sum += w.sum();
      s.positive_weight += w.dot(y_.segment(start, m));
    }
  }
  const Eigen::RowVectorXd mean_shifted = sum / s.weight_sum;
  s.mean = (shift + mean_shifted).transpose();
  s.constant = (low.array() == high.array()).transpose();
  s.inv_scale.resize(d);
  for (Eigen::Index j = 0; j < d; ++j) {
    const double variance = std::max(
        sum_sq[j] / s.weight_sum - mean_shifted[j] * mean_shifted[j], 0.0);
    const double sd = std::sqrt(variance);
    s.inv_scale[j] = (s.constant[j] || !(sd > 0)) ? 1.0 : 1.0 / sd;
  }
  return s;
}

void FitData::LoadBlock(Eigen::Index start, Eigen::Index n) {
  auto b = block_.topRows(n);
  b.col(0).setOnes();
  b.rightCols(cols()) =
      (x_.middleRows(start, n).rowwise() - stats_.mean.transpose()) *
      stats_.inv_scale.asDiagonal();
}

void FitData::Evaluate(const Eigen::VectorXd& theta, Evaluation& out) {
  const Eigen::Index n = rows(), p = cols() + 1;
  out.log_likelihood = 0;
  out.gradient = Eigen::VectorXd::Zero(p);
  out.information = Eigen::MatrixXd::Zero(p, p);
  out.perfect_rows = 0;
  for (Eigen::Index start = 0; start < n; start += block_rows_) {
    const Eigen::Index m = std::min(block_rows_, n - start);
    LoadBlock(start, m);
    auto b = block_.topRows(m);
    auto eta = eta_.head(m);
    eta.noalias() = b * theta;
    auto r = residual_.head(m);
    auto sw = sqrt_w_.head(m);
    for (Eigen::Index i = 0; i < m; ++i) {
      const double w = Weight(start + i);
      const double e = eta[i];
      // Logistic(e), Logistic(-e) and LogLogistic(margin) of
      // scorer/logistic.h from one exponential: with a = exp(-|e|) they
      // are 1 / (1 + a), a / (1 + a) and min(margin, 0) - log1p(a). p(1 - p)
      // and y - p (the probability of the other label) stay accurate when
      // p is within rounding of 0 or 1.
      const double a = std::exp(-std::abs(e));
      const double big = 1 / (1 + a), small = a * big;
      const double p1 = e >= 0 ? big : small, p0 = e >= 0 ? small : big;
      const bool positive = y_[start + i] > 0.5;
      const double margin = positive ? e : -e;
      out.log_likelihood += w * (std::min(margin, 0.0) - std::log1p(a));
      r[i] = w * (positive ? p0 : -p1);
      sw[i] = std::sqrt(w * p1 * p0);
      if (w > 0 && margin >= perfect_margin_) ++out.perfect_rows;
    }
    out.gradient.noalias() += b.transpose() * r;
    b = sw.asDiagonal() * b;
    out.information.selfadjointView<Eigen::Lower>().rankUpdate(b.transpose());
  }
}

double FitData::LogLikelihood(const Eigen::VectorXd& theta) {
  const Eigen::Index n = rows();
  double ll = 0;
  for (Eigen::Index start = 0; start < n; start += block_rows_) {
    const Eigen::Index m = std::min(block_rows_, n - start);
    LoadBlock(start, m);
    auto eta = eta_.head(m);
    eta.noalias() = block_.topRows(m) * theta;
    for (Eigen::Index i = 0; i < m; ++i) {
      const bool positive = y_[start + i] > 0.5;
      ll += Weight(start + i) * LogLogistic(positive ? eta[i] : -eta[i]);
    }
  }
  return ll;
}

DirectionMargins FitData::Margins(const Eigen::VectorXd& v, double threshold) {
  DirectionMargins out;
  out.min = std::numeric_limits<double>::infinity();
  out.max = -out.min;
  const Eigen::Index n = rows();
  const double v_norm = v.norm();
  for (Eigen::Index start = 0; start < n; start += block_rows_) {
    const Eigen::Index m = std::min(block_rows_, n - start);
    LoadBlock(start, m);
    auto eta = eta_.head(m);
    eta.noalias() = block_.topRows(m) * v;
    auto norms = residual_.head(m);
    norms = block_.topRows(m).rowwise().norm() * v_norm;
    for (Eigen::Index i = 0; i < m; ++i) {
      if (!(Weight(start + i) > 0)) continue;
      const double s = (y_[start + i] > 0.5 ? eta[i] : -eta[i]) / norms[i];
      out.min = std::min(out.min, s);
      out.max = std::max(out.max, s);
      ++out.rows;
      if (s > threshold) ++out.strictly_positive;
    }
  }
  return out;
}

double FitData::OriginalScaleLogLikelihood(
    double intercept, const Eigen::VectorXd& beta,
    Eigen::VectorXd* probabilities) const {
  const Eigen::Index n = rows();
  if (probabilities != nullptr) probabilities->resize(n);
  double ll = 0;
  Eigen::VectorXd eta(std::min(block_rows_, n));
  for (Eigen::Index start = 0; start < n; start += block_rows_) {
    const Eigen::Index m = std::min(block_rows_, n - start);
    auto e = eta.head(m);
    e.noalias() = x_.middleRows(start, m) * beta;
    e.array() += intercept;
    for (Eigen::Index i = 0; i < m; ++i) {
      const bool positive = y_[start + i] > 0.5;
      ll += Weight(start + i) * LogLogistic(positive ? e[i] : -e[i]);
      if (probabilities != nullptr)
        (*probabilities)[start + i] = Logistic(e[i]);
    }
  }
  return ll;
}

}  // namespace plumbline::scorer::fit_internal
