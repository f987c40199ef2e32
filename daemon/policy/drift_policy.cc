// File: daemon/policy/drift_policy.cc
#include "daemon/policy/drift_policy.h"

#include <algorithm>
#include <cmath>
#include <optional>
#include <utility>

#include "absl/container/flat_hash_set.h"
#include "absl/status/status.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "daemon/policy/figures.h"

namespace plumbline::daemon {
namespace {

using Direction = DriftThreshold::Direction;

DriftThreshold Above(std::string metric, double watch, double drifting,
                     bool relative = false) {
  DriftThreshold t;
  t.metric = std::move(metric);
  t.watch = watch;
  t.drifting = drifting;
  t.relative_to_training = relative;
  return t;
}

absl::Status FieldError(int index, absl::string_view field,
                        absl::string_view what) {
  return absl::InvalidArgumentError(
      absl::StrCat("drift_policy.thresholds[", index, "].", field, ": ", what));
}

absl::StatusOr<DriftThreshold> ThresholdFromConfig(
    int index, const v1::MetricThreshold& c) {
  DriftThreshold t;
  t.metric = c.metric();
  if (FindWindowFigure(t.metric) == nullptr &&
      FindFeatureFigure(t.metric) == nullptr) {
    std::string known;
    for (const WindowFigure& f : kWindowFigures)
      absl::StrAppend(&known, f.metric, ", ");
    for (const FeatureFigure& f : kFeatureFigures)
      absl::StrAppend(&known, f.metric, ", ");
    known.resize(known.size() - 2);
    return FieldError(index, "metric",
                      absl::StrCat("unknown metric '", t.metric,
                                   "'; known metrics: ", known));
  }
  t.watch = c.watch();
  t.drifting = c.drifting();
  t.target = c.target();
  t.relative_to_training = c.relative_to_training();
  if (!std::isfinite(t.watch) || !std::isfinite(t.drifting) ||
      !std::isfinite(t.target)) {
    return FieldError(index, "watch",
                      "watch, drifting and target must be finite");
  }
  if (c.direction() == v1::MetricThreshold::BELOW) {
    t.direction = Direction::kBelow;
    if (t.watch < t.drifting) {
      return FieldError(index, "watch",
                        absl::StrFormat("direction BELOW needs watch >= "
                                        "drifting; got watch %g, drifting %g",
                                        t.watch, t.drifting));
    }
  } else {
    t.direction = c.direction() == v1::MetricThreshold::DISTANCE
                      ? Direction::kDistance
                      : Direction::kAbove;
    if (t.direction == Direction::kDistance && t.watch < 0) {
      return FieldError(index, "watch", "a DISTANCE threshold must be >= 0");
    }
    if (t.watch > t.drifting) {
      return FieldError(
          index, "watch",
          absl::StrFormat("direction %s needs watch <= drifting; got watch "
                          "%g, drifting %g",
                          v1::MetricThreshold::Direction_Name(c.direction()),
                          t.watch, t.drifting));
    }
  }
  if (t.relative_to_training) {
    if (t.metric != "log_loss") {
      return FieldError(index, "relative_to_training",
                        absl::StrCat("only log_loss has a training figure "
                                     "(provenance.training_log_loss); '",
                                     t.metric, "' cannot be relative"));
    }
    if (t.watch <= 0 || t.direction == Direction::kDistance) {
      return FieldError(index, "relative_to_training",
                        "a relative threshold needs ABOVE or BELOW and "
                        "multiples > 0");
    }
  }
  return t;
}

const char* DirectionWord(Direction d) {
  switch (d) {
    case Direction::kAbove:
      return "above";
    case Direction::kBelow:
      return "below";
    case Direction::kDistance:
      return "beyond";
  }
  return "";
}

// The level `value` reaches under `t` with absolute thresholds
// (watch, drifting); STEADY when none.
v1::DriftState Level(const DriftThreshold& t, double watch, double drifting,
                     double value, double* crossed) {
  auto over = [&](double limit) {
    switch (t.direction) {
      case Direction::kAbove:
        return value > limit;
      case Direction::kBelow:
        return value < limit;
      case Direction::kDistance:
        return std::abs(value - t.target) > limit;
    }
    return false;
  };
  if (over(drifting)) {
    *crossed = drifting;
    return v1::DRIFTING;
  }
  if (over(watch)) {
    *crossed = watch;
    return v1::WATCH;
  }
  return v1::STEADY;
}

// Adds `note` to health->notes unless it is there already.
class Notes {
 public:
  explicit Notes(v1::SetHealth* health) : health_(health) {}
  void Add(std::string note) {
    if (seen_.insert(note).second) health_->add_notes(std::move(note));
  }

 private:
  v1::SetHealth* health_;
  absl::flat_hash_set<std::string> seen_;
};

}  // namespace

DriftPolicy::DriftPolicy() : thresholds_(DefaultThresholds()) {}

std::vector<DriftThreshold> DriftPolicy::DefaultThresholds() {
  std::vector<DriftThreshold> t;
  // PSI 0.10 / 0.25: rule of thumb of credit-scoring practice; common
  // practice, no source.
  t.push_back(Above("score_psi", 0.10, 0.25));
  t.push_back(Above("feature_psi", 0.10, 0.25));
  // Log-loss 10% / 25% worse than on the training data: Plumbline default,
  // no source.
  t.push_back(Above("log_loss", 1.10, 1.25, /*relative=*/true));
  // ECE 0.05 / 0.10: Plumbline default, no source.
  t.push_back(Above("expected_calibration_error", 0.05, 0.10));
  // Calibration-in-the-large 0.05 / 0.10 away from 0: Plumbline default, no
  // source.
  DriftThreshold citl = Above("calibration_in_the_large", 0.05, 0.10);
  citl.direction = Direction::kDistance;
  t.push_back(citl);
  return t;
}

absl::StatusOr<DriftPolicy> DriftPolicy::FromConfig(
    const v1::DriftPolicy& config) {
  DriftPolicy policy;
  if (config.thresholds_size() > 0) {
    policy.thresholds_.clear();
    absl::flat_hash_set<std::string> seen;
    for (int i = 0; i < config.thresholds_size(); ++i) {
      absl::StatusOr<DriftThreshold> t =
          ThresholdFromConfig(i, config.thresholds(i));
      if (!t.ok()) return t.status();
      if (!seen.insert(t->metric).second) {
        return FieldError(i, "metric",
                          absl::StrCat("'", t->metric,
                                       "' has a threshold already; give each "
                                       "metric one entry"));
      }
      policy.thresholds_.push_back(*std::move(t));
    }
  }
  if (config.min_labelled() != 0) policy.min_labelled_ = config.min_labelled();
  if (config.min_scored() != 0) policy.min_scored_ = config.min_scored();
  if (config.tick_seconds() != 0) {
    policy.tick_ = absl::Seconds(static_cast<int64_t>(
        std::min<uint64_t>(config.tick_seconds(), 86400 * 365)));
  }
  return policy;
}

void DriftPolicy::Judge(const v1::Provenance& provenance,
                        v1::SetHealth* health) const {
  health->clear_reasons();
  health->clear_notes();
  Notes notes(health);
  std::optional<double> training_log_loss;
  if (provenance.training_log_loss() > 0 &&
      std::isfinite(provenance.training_log_loss())) {
    training_log_loss = provenance.training_log_loss();
  }
  bool has_outcome = false, has_stability = false;
  for (const DriftThreshold& t : thresholds_) {
    const WindowFigure* wf = FindWindowFigure(t.metric);
    if (wf != nullptr && wf->source == FigureSource::kOutcome) {
      has_outcome = true;
    } else {
      has_stability = true;
    }
  }

  std::vector<v1::DriftReason> reasons;
  for (const v1::WindowHealth& w : health->windows()) {
    const bool enough_labelled = w.labelled() >= min_labelled_;
    const bool enough_scored = w.scored() >= min_scored_;
    if (has_outcome && !enough_labelled) {
      notes.Add(absl::StrFormat(
          "%s window: %d labelled records, fewer than min_labelled %d: "
          "outcome figures do not judge",
          w.window(), w.labelled(), min_labelled_));
    }
    if (has_stability && !enough_scored) {
      notes.Add(absl::StrFormat(
          "%s window: %d scored records, fewer than min_scored %d: "
          "stability figures do not judge",
          w.window(), w.scored(), min_scored_));
    }
    for (const DriftThreshold& t : thresholds_) {
      // The figures this threshold looks at: one, or one per feature.
      std::vector<std::pair<std::string, const v1::Figure*>> figures;
      if (const WindowFigure* wf = FindWindowFigure(t.metric); wf != nullptr) {
        if (!(wf->source == FigureSource::kOutcome ? enough_labelled
                                                   : enough_scored)) {
          continue;
        }
        figures.emplace_back("", &(w.*(wf->get))());
      } else if (const FeatureFigure* ff = FindFeatureFigure(t.metric);
                 ff != nullptr) {
        if (!enough_scored) continue;
        for (const v1::FeatureHealth& f : w.features()) {
          figures.emplace_back(f.feature(), &(f.*(ff->get))());
        }
      }
      double watch = t.watch, drifting = t.drifting;
      std::string relative_note;
      if (t.relative_to_training) {
        if (!training_log_loss) {
          notes.Add(absl::StrCat(t.metric,
                                 " cannot judge: the set has no "
                                 "provenance.training_log_loss"));
          continue;
        }
        watch *= *training_log_loss;
        drifting *= *training_log_loss;
      }
      for (const auto& [feature, figure] : figures) {
        const std::string subject =
            feature.empty() ? t.metric
                            : absl::StrCat(t.metric, " of '", feature, "'");
        if (!figure->defined()) {
          notes.Add(absl::StrCat(subject, " cannot judge: ", figure->note()));
          continue;
        }
        double crossed = 0;
        const v1::DriftState level =
            Level(t, watch, drifting, figure->value(), &crossed);
        if (level == v1::STEADY) continue;
        v1::DriftReason r;
        r.set_metric(t.metric);
        r.set_window(w.window());
        r.set_feature(feature);
        r.set_value(figure->value());
        r.set_threshold(crossed);
        r.set_state(level);
        std::string text = absl::StrFormat(
            "%s window: %s %.4g %s the %s threshold %.4g", w.window(), subject,
            figure->value(), DirectionWord(t.direction), DriftStateName(level),
            crossed);
        if (t.direction == Direction::kDistance) {
          absl::StrAppendFormat(&text, " (distance %.4g from %.4g)",
                                std::abs(figure->value() - t.target), t.target);
        }
        if (t.relative_to_training) {
          absl::StrAppendFormat(&text, " (%.4g x training log-loss %.4g)",
                                level == v1::DRIFTING ? t.drifting : t.watch,
                                *training_log_loss);
        }
        r.set_text(std::move(text));
        reasons.push_back(std::move(r));
      }
    }
  }
  std::stable_sort(reasons.begin(), reasons.end(),
                   [](const v1::DriftReason& a, const v1::DriftReason& b) {
                     return a.state() > b.state();
                   });
  v1::DriftState state = v1::STEADY;
  for (v1::DriftReason& r : reasons) {
    state = std::max(state, r.state());
    *health->add_reasons() = std::move(r);
  }
  health->set_state(state);
}

std::string DriftStateName(v1::DriftState state) {
  switch (state) {
    case v1::WATCH:
      return "watch";
    case v1::DRIFTING:
      return "drifting";
    default:
      return "steady";
  }
}

}  // namespace plumbline::daemon
