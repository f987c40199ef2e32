// File: daemon/policy/figures.h
//
// The one list of the monitor's per-window figures: the metric name the
// drift policy's thresholds use, the field of plumbline.v1.WindowHealth that
// holds it, whether it comes from labelled records (outcome figures) or from
// scored records (stability figures), and the help text of its Prometheus
// gauge (named "plumbline_" + metric; feature figures have their own names).
// The drift policy, the metrics exporter and plumbctl's table all walk these
// lists, so a figure is added in one place.
//
// Thread-safe: constant tables.
#ifndef PLUMBLINE_DAEMON_POLICY_FIGURES_H_
#define PLUMBLINE_DAEMON_POLICY_FIGURES_H_

#include "absl/strings/string_view.h"
#include "plumbline/v1/monitor.pb.h"

namespace plumbline::daemon {

enum class FigureSource {
  kOutcome,    // labelled records; judged once a window has min_labelled
  kStability,  // scored records; judged once a window has min_scored
};

struct WindowFigure {
  absl::string_view metric;
  FigureSource source;
  const v1::Figure& (v1::WindowHealth::*get)() const;
  absl::string_view help;
};

inline constexpr WindowFigure kWindowFigures[] = {
    {"log_loss", FigureSource::kOutcome, &v1::WindowHealth::log_loss,
     "Mean negative log-likelihood of the window's labelled records."},
    {"brier_score", FigureSource::kOutcome, &v1::WindowHealth::brier_score,
     "Mean squared difference between probability and outcome."},
    {"auc", FigureSource::kOutcome, &v1::WindowHealth::auc,
     "Area under the ROC curve: exact Mann-Whitney statistic over the "
     "window's records, tied scores counting 1/2."},
    {"expected_calibration_error", FigureSource::kOutcome,
     &v1::WindowHealth::expected_calibration_error,
     "Expected calibration error over 10 equal-width probability bins."},
    {"mean_predicted_minus_observed", FigureSource::kOutcome,
     &v1::WindowHealth::mean_predicted_minus_observed,
     "Mean predicted probability minus observed rate of the event (a "
     "difference of means; named calibration_in_the_large before)."},
    {"calibration_intercept", FigureSource::kOutcome,
     &v1::WindowHealth::calibration_intercept,
     "Calibration-in-the-large: intercept of the logistic fit of the "
     "outcome with the log-odds as offset, slope fixed at 1 (0 when "
     "calibrated)."},
    {"calibration_slope", FigureSource::kOutcome,
     &v1::WindowHealth::calibration_slope,
     "Calibration slope: slope of the joint logistic fit of the outcome on "
     "the log-odds (1 when calibrated)."},
    {"hosmer_lemeshow_statistic", FigureSource::kOutcome,
     &v1::WindowHealth::hosmer_lemeshow_statistic,
     "Hosmer-Lemeshow statistic over deciles of risk (10 groups of sorted "
     "predicted probability)."},
    {"hosmer_lemeshow_p_value", FigureSource::kOutcome,
     &v1::WindowHealth::hosmer_lemeshow_p_value,
     "Chi-square p-value of the Hosmer-Lemeshow statistic, groups - 2 "
     "degrees of freedom."},
    {"score_psi", FigureSource::kStability, &v1::WindowHealth::score_psi,
     "Population stability index of the probability against the set's "
     "score baseline."},
};

struct FeatureFigure {
  // Threshold metric name.
  absl::string_view metric;
  const v1::Figure& (v1::FeatureHealth::*get)() const;
  // Prometheus metric name.
  absl::string_view exported_name;
  absl::string_view help;
};

inline constexpr FeatureFigure kFeatureFigures[] = {
    {"feature_psi", &v1::FeatureHealth::psi, "plumbline_feature_psi",
     "Population stability index of a feature against its baseline."},
    {"missing_rate", &v1::FeatureHealth::missing_rate,
     "plumbline_feature_missing_ratio",
     "Share of scored records without a value for the feature."},
    {"out_of_range_rate", &v1::FeatureHealth::out_of_range_rate,
     "plumbline_feature_out_of_range_ratio",
     "Share of scored records with a value outside the baseline's range or "
     "a level the baseline does not know."},
};

// The entry for `metric`, or nullptr.
const WindowFigure* FindWindowFigure(absl::string_view metric);
const FeatureFigure* FindFeatureFigure(absl::string_view metric);

// Figure constructors.
v1::Figure DefinedFigure(double value);
v1::Figure UndefinedFigure(absl::string_view note);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_POLICY_FIGURES_H_
