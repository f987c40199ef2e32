#include "scorer/fit_checks.h"

#include <Eigen/Cholesky>
#include <algorithm>
#include <cmath>
#include <vector>

#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "absl/strings/str_join.h"

namespace plumbline::scorer::fit_internal {
namespace {

// A coefficient of a column in a near-exact linear combination counts as
// taking part when it is at least this share of the largest one (common
// practice, no source: smaller ones are rounding).
constexpr double kInvolvedShare = 1e-3;

// A coefficient along a diverging direction counts as diverging when it is
// at least this share of the fastest-growing one (common practice, no
// source).
constexpr double kDivergingShare = 0.1;

std::string QuotedList(absl::Span<const std::string> column_names,
                       const std::vector<Eigen::Index>& columns) {
  std::vector<std::string> quoted;
  for (Eigen::Index j : columns) {
    quoted.push_back(absl::StrCat("'", ColumnName(column_names, j), "'"));
  }
  if (quoted.size() <= 1) return absl::StrJoin(quoted, "");
  const std::string last = quoted.back();
  quoted.pop_back();
  return absl::StrCat(absl::StrJoin(quoted, ", "), " and ", last);
}

// Whether every entry of x is finite. Hand-written because Eigen's
// allFinite() is not vectorised for this layout and costs ten times more
// on a large matrix; x * 0 is 0 for finite x and NaN for NaN or +-inf, and
// a sum with a NaN term is NaN.
bool AllFinite(const Eigen::Ref<const RowMatrix>& x) {
  constexpr Eigen::Index kBlock = 256;
  double zero = 0;
  for (Eigen::Index start = 0; start < x.rows(); start += kBlock) {
    const Eigen::Index m = std::min(kBlock, x.rows() - start);
    zero += (x.middleRows(start, m).array() * 0.0).sum();
  }
  return zero == 0;
}

}  // namespace

std::string ColumnName(absl::Span<const std::string> column_names,
                       Eigen::Index j) {
  if (j < static_cast<Eigen::Index>(column_names.size())) {
    return column_names[static_cast<size_t>(j)];
  }
  return absl::StrCat("x[", j, "]");
}

absl::Status ValidateInput(const Eigen::Ref<const RowMatrix>& x,
                           const Eigen::Ref<const Eigen::VectorXd>& y,
                           const Eigen::Ref<const Eigen::VectorXd>& weights,
                           absl::Span<const std::string> column_names,
                           const FitOptions& options) {
  const Eigen::Index n = x.rows(), d = x.cols();
  if (n == 0) return absl::InvalidArgumentError("no rows to fit");
  if (y.size() != n) {
    return absl::InvalidArgumentError(
        absl::StrFormat("x has %d rows but y has %d labels", n, y.size()));
  }
  if (weights.size() != 0 && weights.size() != n) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "x has %d rows but %d weights were given (give one per row, or none "
        "for unit weights)",
        n, weights.size()));
  }
  if (!column_names.empty() &&
      static_cast<Eigen::Index>(column_names.size()) != d) {
    return absl::InvalidArgumentError(
        absl::StrFormat("x has %d columns but %d column names were given", d,
                        column_names.size()));
  }
  if (!(options.l2_lambda >= 0) || !std::isfinite(options.l2_lambda)) {
    return absl::InvalidArgumentError(absl::StrCat(
        "l2_lambda must be a finite number >= 0, got ", options.l2_lambda));
  }
  if (options.max_iterations < 1 || options.block_rows < 1 ||
      options.max_step_halvings < 0 ||
      !(options.separation_probability > 0 &&
        options.separation_probability < 0.5)) {
    return absl::InvalidArgumentError(
        "fit options: max_iterations and block_rows must be >= 1, "
        "max_step_halvings >= 0 and separation_probability in (0, 0.5)");
  }
  for (Eigen::Index i = 0; i < n; ++i) {
    if (y[i] != 0.0 && y[i] != 1.0) {
      return absl::InvalidArgumentError(
          absl::StrCat("y[", i, "] = ", y[i], ": labels must be 0 or 1"));
    }
  }
  if (weights.size() != 0) {
    for (Eigen::Index i = 0; i < n; ++i) {
      if (!(weights[i] >= 0) || !std::isfinite(weights[i])) {
        return absl::InvalidArgumentError(
            absl::StrCat("weights[", i, "] = ", weights[i],
                         ": weights must be finite numbers >= 0"));
      }
    }
    if (!(weights.sum() > 0)) {
      return absl::InvalidArgumentError("every weight is 0: nothing to fit");
    }
  }
  if (!AllFinite(x)) {
    for (Eigen::Index i = 0; i < n; ++i) {
      for (Eigen::Index j = 0; j < d; ++j) {
        if (!std::isfinite(x(i, j))) {
          return absl::InvalidArgumentError(absl::StrCat(
              "x[", i, ", '", ColumnName(column_names, j), "'] = ", x(i, j),
              ": the fitter needs finite values; impute or drop missing "
              "values first"));
        }
      }
    }
  }
  return absl::OkStatus();
}

absl::Status CheckVariation(const ColumnStats& stats, Eigen::Index rows,
                            absl::Span<const std::string> column_names) {
  if (stats.positive_weight <= 0 || stats.positive_weight >= stats.weight_sum) {
    return absl::FailedPreconditionError(absl::StrFormat(
        "all labels are %d (among the %d rows with positive weight): a "
        "logistic model needs rows of both labels to estimate anything; "
        "collect rows with label %d first",
        stats.positive_weight > 0 ? 1 : 0, rows,
        stats.positive_weight > 0 ? 0 : 1));
  }
  std::vector<Eigen::Index> constant;
  for (Eigen::Index j = 0; j < stats.constant.size(); ++j) {
    if (stats.constant[j]) constant.push_back(j);
  }
  if (!constant.empty()) {
    return absl::FailedPreconditionError(absl::StrCat(
        constant.size() == 1 ? "column " : "columns ",
        QuotedList(column_names, constant),
        constant.size() == 1 ? " has" : " have",
        " the same value in every row, so it cannot be told apart from the "
        "intercept; drop ",
        constant.size() == 1 ? "it" : "them"));
  }
  return absl::OkStatus();
}

absl::Status CheckCollinearity(const Eigen::MatrixXd& information,
                               absl::Span<const std::string> column_names,
                               double tolerance) {
  const Eigen::Index d = information.rows() - 1;
  if (d <= 0) return absl::OkStatus();
  const Eigen::MatrixXd full = information.selfadjointView<Eigen::Lower>();
  // Remove the intercept (Schur complement), then scale to a correlation
  // matrix: column j's entries are then about one another's R^2.
  Eigen::MatrixXd s =
      full.bottomRightCorner(d, d) -
      full.col(0).tail(d) * full.col(0).tail(d).transpose() / full(0, 0);
  const Eigen::VectorXd inv_sd =
      s.diagonal().cwiseMax(0).cwiseSqrt().cwiseInverse();
  const Eigen::MatrixXd corr = inv_sd.asDiagonal() * s * inv_sd.asDiagonal();

  // Cholesky of the accepted columns' correlations, grown one column at a
  // time: the residual 1 - R^2 of column j on the accepted columns is
  // corr(j, j) - |L^-1 corr(A, j)|^2.
  std::vector<Eigen::Index> accepted;
  Eigen::MatrixXd l = Eigen::MatrixXd::Zero(d, d);
  std::vector<std::string> problems;
  for (Eigen::Index j = 0; j < d; ++j) {
    const Eigen::Index k = static_cast<Eigen::Index>(accepted.size());
    Eigen::VectorXd c_aj(k);
    for (Eigen::Index a = 0; a < k; ++a) c_aj[a] = corr(accepted[a], j);
    const Eigen::VectorXd u =
        l.topLeftCorner(k, k).triangularView<Eigen::Lower>().solve(c_aj);
    const double residual =
        std::isfinite(corr(j, j)) ? corr(j, j) - u.squaredNorm() : 0;
    if (residual > tolerance) {
      l.row(k).head(k) = u.transpose();
      l(k, k) = std::sqrt(residual);
      accepted.push_back(j);
      continue;
    }
    // Coefficients of column j on the accepted columns.
    const Eigen::VectorXd coef =
        l.topLeftCorner(k, k).transpose().triangularView<Eigen::Upper>().solve(
            u);
    const double largest = k > 0 ? coef.cwiseAbs().maxCoeff() : 0;
    std::vector<Eigen::Index> partners;
    for (Eigen::Index a = 0; a < k; ++a) {
      if (std::abs(coef[a]) >= kInvolvedShare * largest) {
        partners.push_back(accepted[a]);
      }
    }
    if (partners.size() == 1) {
      problems.push_back(absl::StrFormat(
          "columns '%s' and '%s' are collinear (correlation %.9f)",
          ColumnName(column_names, partners[0]), ColumnName(column_names, j),
          corr(partners[0], j)));
    } else {
      problems.push_back(absl::StrFormat(
          "column '%s' is a linear combination of columns %s (1 - R^2 = %.1e)",
          ColumnName(column_names, j), QuotedList(column_names, partners),
          std::max(residual, 0.0)));
    }
  }
  if (problems.empty()) return absl::OkStatus();
  return absl::FailedPreconditionError(absl::StrCat(
      "the design matrix is rank deficient, so the coefficients are not "
      "identified: ",
      absl::StrJoin(problems, "; "),
      ". Drop one column of each group, or fit with an L2 penalty "
      "(l2_lambda > 0)"));
}

absl::Status SeparationStatus(const Eigen::VectorXd& v,
                              const DirectionMargins& margins,
                              int64_t perfect_rows,
                              absl::Span<const std::string> column_names) {
  if (!(margins.max > kSeparatedCosine) || perfect_rows == 0 ||
      margins.min < -kOpposingCosine) {
    return absl::OkStatus();
  }
  const Eigen::Index d = v.size() - 1;
  const double largest = d > 0 ? v.tail(d).cwiseAbs().maxCoeff() : 0;
  std::vector<Eigen::Index> diverging;
  for (Eigen::Index j = 0; j < d; ++j) {
    if (largest > 0 && std::abs(v[j + 1]) >= kDivergingShare * largest) {
      diverging.push_back(j);
    }
  }
  const bool one = diverging.size() <= 1;
  const std::string columns =
      diverging.empty() ? std::string("the intercept")
                        : absl::StrCat(one ? "column " : "columns ",
                                       QuotedList(column_names, diverging));
  const char* advice =
      "the maximum-likelihood estimate does not exist. Drop or coarsen "
      "the columns named (merge sparse levels, widen bins), add rows, or "
      "fit with an L2 penalty (l2_lambda > 0)";
  if (margins.strictly_positive == margins.rows) {
    return absl::FailedPreconditionError(absl::StrCat(
        "complete separation: ", one ? "" : "a linear combination of ", columns,
        one ? " (with the intercept)" : "",
        " predicts the label of every row perfectly, so ",
        one ? "its coefficient grows" : "their coefficients grow",
        " without bound and ", advice));
  }
  return absl::FailedPreconditionError(absl::StrFormat(
      "quasi-complete separation: %d of %d rows are predicted perfectly "
      "(fitted probability within rounding of the label) as the "
      "%s of %s %s without bound, so %s",
      margins.strictly_positive, margins.rows,
      one ? "coefficient" : "coefficients", columns, one ? "grows" : "grow",
      advice));
}

}  // namespace plumbline::scorer::fit_internal
