#include "scorer/design_set.h"

#include <vector>

#include "absl/status/status.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "absl/strings/str_join.h"
#include "scorer/coefficient_set.h"

namespace plumbline::scorer {
namespace {

// The score baseline cuts fitted probabilities at their deciles.
constexpr int kScoreBaselineBins = 10;

void SetCoefficient(const DesignColumn& c, double value,
                    v1::CoefficientSet& set) {
  v1::Feature* f = set.mutable_features(c.feature);
  switch (c.slot) {
    case DesignColumn::Slot::kNumeric:
      f->mutable_numeric()->set_coefficient(value);
      break;
    case DesignColumn::Slot::kLevel:
      f->mutable_categorical()->mutable_levels(c.index)->set_coefficient(value);
      break;
    case DesignColumn::Slot::kBin:
      f->mutable_binned()->set_coefficients(c.index, value);
      break;
    case DesignColumn::Slot::kIndicator:
      f->mutable_missing()->set_indicator_coefficient(value);
      break;
  }
}

std::string Notes(const DesignLayout& layout, const FitResult& fit) {
  std::vector<std::string> se;
  se.push_back(absl::StrFormat("intercept %.6g", fit.intercept_standard_error));
  for (int j = 0; j < layout.num_columns(); ++j) {
    se.push_back(absl::StrFormat("%s %.6g",
                                 layout.column_names()[static_cast<size_t>(j)],
                                 fit.standard_errors[j]));
  }
  return absl::StrFormat(
      "converged in %d Newton iterations (max |gradient| per unit weight "
      "%.3g); null log-likelihood %.17g; McFadden pseudo-R^2 %.6f; "
      "AIC %.10g; standard errors%s: %s",
      fit.iterations, fit.max_abs_gradient, fit.null_log_likelihood,
      fit.pseudo_r2, fit.aic,
      fit.penalized ? " (from the penalised information matrix)" : "",
      absl::StrJoin(se, ", "));
}

}  // namespace

absl::StatusOr<v1::CoefficientSet> CoefficientSetFromFit(
    const DesignLayout& layout, const FitResult& fit,
    const SetDescription& description) {
  if (fit.coefficients.size() != layout.num_columns()) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "the fit has %d coefficients but the design has %d columns; fit the "
        "matrix this layout encoded",
        fit.coefficients.size(), layout.num_columns()));
  }
  if (!fit.converged) {
    return absl::FailedPreconditionError(
        absl::StrCat("the fit did not converge (", fit.stop_reason,
                     "); a coefficient set is only made from a converged fit"));
  }
  if (fit.fitted_probabilities.size() != fit.rows) {
    return absl::InvalidArgumentError(
        "the fit kept no fitted probabilities (FitOptions::"
        "keep_fitted_probabilities is false); they are needed for the score "
        "baseline");
  }
  v1::CoefficientSet set = layout.skeleton();
  set.set_name(description.name);
  set.set_version(description.version);
  set.set_description(description.description);
  set.set_intercept(fit.intercept);
  for (int j = 0; j < layout.num_columns(); ++j) {
    SetCoefficient(layout.columns()[static_cast<size_t>(j)],
                   fit.coefficients[j], set);
  }
  *set.mutable_score_baseline() =
      QuantileDistribution(std::vector<double>(fit.fitted_probabilities.begin(),
                                               fit.fitted_probabilities.end()),
                           kScoreBaselineBins, 0);

  v1::Provenance* p = set.mutable_provenance();
  const absl::Duration since_epoch = description.created_at - absl::UnixEpoch();
  const int64_t seconds = absl::ToInt64Seconds(since_epoch);
  p->mutable_created_at()->set_seconds(seconds);
  p->mutable_created_at()->set_nanos(static_cast<int32_t>(
      absl::ToInt64Nanoseconds(since_epoch - absl::Seconds(seconds))));
  p->set_created_by(description.created_by);
  p->set_method(fit.penalized
                    ? absl::StrFormat("IRLS, L2 lambda=%g", fit.l2_lambda)
                    : std::string("IRLS"));
  p->set_training_data(description.training_data);
  p->set_training_rows(fit.rows);
  p->set_training_log_likelihood(fit.log_likelihood);
  p->set_training_log_loss(-fit.log_likelihood / fit.weight_sum);
  p->set_notes(Notes(layout, fit));
  if (absl::Status st = ValidateCoefficientSet(set, "fitted set"); !st.ok()) {
    return st;
  }
  return set;
}

}  // namespace plumbline::scorer
