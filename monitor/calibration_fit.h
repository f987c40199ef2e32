// File: monitor/calibration_fit.h
//
// Calibration intercept and slope, in the two fits of the calibration
// hierarchy (Van Calster et al. 2016, J Clin Epidemiol, "A calibration
// hierarchy for risk models"):
//
//  - CalibrationIntercept: the calibration intercept with the slope fixed
//    at 1, i.e. the model's log-odds as an offset,
//        logit P(label = 1) = a + log_odds,
//    which is what the literature means by the "calibration-in-the-large"
//    intercept (0 when the mean predicted risk matches the event rate;
//    > 0 when the model under-predicts). Newton on one parameter.
//  - CalibrationInterceptSlope: the joint fit below; its slope is the
//    calibration slope. Its intercept is not the calibration-in-the-large
//    intercept (it depends on the slope) and should not be reported as one.
//
// (LossFigures::calibration_in_the_large in outcome_accumulators.h is the
// difference of means, mean predicted - observed rate, on the probability
// scale: a related figure, not this intercept.)
//
// The joint fit: the logistic regression of the outcome on the model's own
// log-odds,
//
//   logit P(label = 1) = intercept + slope * log_odds,
//
// fitted by maximum likelihood (Newton / IRLS on two parameters, Eigen). A
// well-calibrated model has intercept 0 and slope 1; slope < 1 says its
// log-odds are too extreme (over-fitted), slope > 1 too timid.
//
//   absl::StatusOr<CalibrationFit> fit =
//       monitor::CalibrationInterceptSlope(log_odds, labels);
//
// The fit runs on groups of equal log-odds (LogOddsGroup), so the pure
// function and the streaming ScoreGridAccumulator::Calibration (which sees
// only grid cells) share one routine: given the same grid-quantised log-odds
// the two return the same doubles. Thread-safe (pure functions).
//
// Errors: INVALID_ARGUMENT for bad input (see monitor/metrics.h; log-odds
// must be finite here); FAILED_PRECONDITION when the fit is undefined (one
// class only, all log-odds equal) or does not converge in 100 Newton steps,
// which happens when the log-odds separate the outcomes perfectly.
#ifndef PLUMBLINE_MONITOR_CALIBRATION_FIT_H_
#define PLUMBLINE_MONITOR_CALIBRATION_FIT_H_

#include <cstdint>

#include "absl/status/statusor.h"
#include "absl/types/span.h"

namespace plumbline::monitor {

struct CalibrationFit {
  double intercept = 0;
  double slope = 1;
  // Square roots of the diagonal of the inverse Fisher information at the
  // estimate (as statsmodels' Logit reports them).
  double intercept_standard_error = 0;
  double slope_standard_error = 0;
  int iterations = 0;  // Newton steps taken
};

// Records sharing one log-odds value.
struct LogOddsGroup {
  double log_odds = 0;
  int64_t positives = 0;
  int64_t negatives = 0;
};

absl::StatusOr<CalibrationFit> CalibrationInterceptSlope(
    absl::Span<const double> log_odds, absl::Span<const int> labels);

// The calibration intercept with the slope fixed at 1 (log-odds as offset).
struct CalibrationInterceptFit {
  double intercept = 0;
  // 1 / sqrt(Fisher information) at the estimate (as statsmodels' GLM
  // reports it).
  double standard_error = 0;
  int iterations = 0;  // Newton steps taken
};

// Errors as for CalibrationInterceptSlope, except that equal log-odds are
// fine (the intercept is defined whenever both labels occur).
absl::StatusOr<CalibrationInterceptFit> CalibrationIntercept(
    absl::Span<const double> log_odds, absl::Span<const int> labels);
absl::StatusOr<CalibrationInterceptFit> FitCalibrationInterceptGroups(
    absl::Span<const LogOddsGroup> groups);

// The joint fit over grouped records. REQUIRES: finite log_odds, counts >= 0.
// Groups with equal log-odds may repeat; order matters only in the last bits.
absl::StatusOr<CalibrationFit> FitCalibrationGroups(
    absl::Span<const LogOddsGroup> groups);

}  // namespace plumbline::monitor

#endif  // PLUMBLINE_MONITOR_CALIBRATION_FIT_H_
