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
#include "absl/strings/str_join.h"
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

// Release thresholds `ratio` of the way from 0 to the entry threshold on
// the bad side (ABOVE, DISTANCE), or the entry threshold divided by `ratio`
// (BELOW).
void DefaultReleases(double ratio, DriftThreshold& t) {
  if (t.direction == DriftThreshold::Direction::kBelow) {
    t.watch_release = t.watch / ratio;
    t.drifting_release = t.drifting / ratio;
  } else {
    t.watch_release = t.watch * ratio;
    t.drifting_release = t.drifting * ratio;
  }
}

absl::StatusOr<DriftThreshold> ThresholdFromConfig(int index,
                                                   const v1::MetricThreshold& c,
                                                   double release_ratio) {
  DriftThreshold t;
  t.metric = c.metric();
  if (t.metric == "calibration_in_the_large") {
    return FieldError(
        index, "metric",
        "'calibration_in_the_large' was the difference of means and is now "
        "named 'mean_predicted_minus_observed'; the calibration-in-the-large "
        "intercept (slope fixed at 1) is 'calibration_intercept'. Choose the "
        "one you mean (their scales differ: probability vs log-odds)");
  }
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
  DefaultReleases(release_ratio, t);
  if (c.has_watch_release()) t.watch_release = c.watch_release();
  if (c.has_drifting_release()) t.drifting_release = c.drifting_release();
  struct Release {
    const char* field;
    double release;
    double enter;
  };
  for (const Release& r :
       {Release{"watch_release", t.watch_release, t.watch},
        Release{"drifting_release", t.drifting_release, t.drifting}}) {
    const bool below = t.direction == Direction::kBelow;
    if (!std::isfinite(r.release) ||
        (below ? r.release < r.enter : r.release > r.enter)) {
      return FieldError(
          index, r.field,
          absl::StrFormat("a release threshold must be finite and on the good "
                          "side of its entry threshold (%s %g); got %g",
                          below ? ">=" : "<=", r.enter, r.release));
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
  // practice, no source. They are the effect sizes; the test at alpha
  // decides significance.
  t.push_back(Above("score_psi", 0.10, 0.25));
  t.push_back(Above("feature_psi", 0.10, 0.25));
  // Release at 0.8 x the entry threshold: Plumbline default, no source.
  for (DriftThreshold& d : t) DefaultReleases(0.8, d);
  return t;
}

absl::StatusOr<DriftPolicy> DriftPolicy::FromConfig(
    const v1::DriftPolicy& config) {
  DriftPolicy policy;
  if (config.alpha() != 0) {
    if (!(config.alpha() > 0 && config.alpha() < 1)) {
      return absl::InvalidArgumentError(absl::StrFormat(
          "drift_policy.alpha: must lie in (0, 1), got %g", config.alpha()));
    }
    policy.alpha_ = config.alpha();
  }
  if (config.release_ratio() != 0) {
    if (!(config.release_ratio() > 0 && config.release_ratio() <= 1)) {
      return absl::InvalidArgumentError(
          absl::StrFormat("drift_policy.release_ratio: must lie in (0, 1], "
                          "got %g",
                          config.release_ratio()));
    }
    policy.release_ratio_ = config.release_ratio();
  }
  if (config.release_evaluations() != 0) {
    if (config.release_evaluations() > 1'000'000) {
      return absl::InvalidArgumentError(absl::StrCat(
          "drift_policy.release_evaluations: ", config.release_evaluations(),
          " is more than 1000000"));
    }
    policy.release_evaluations_ =
        static_cast<int>(config.release_evaluations());
  }
  for (DriftThreshold& d : policy.thresholds_) {
    DefaultReleases(policy.release_ratio_, d);
  }
  if (config.thresholds_size() > 0) {
    policy.thresholds_.clear();
    absl::flat_hash_set<std::string> seen;
    for (int i = 0; i < config.thresholds_size(); ++i) {
      absl::StatusOr<DriftThreshold> t =
          ThresholdFromConfig(i, config.thresholds(i), policy.release_ratio_);
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

namespace {

// One condition of one evaluation, with what a reason needs.
struct Condition {
  std::string metric;
  v1::DriftState level = v1::STEADY;  // the worst level entered now
  bool watch_entered = false, watch_released = true;
  bool drifting_entered = false, drifting_released = true;
  v1::DriftReason reason;  // when level != STEADY
  std::string holding;     // words for a condition not yet released
};

bool Crosses(const DriftThreshold& t, double limit, double value) {
  switch (t.direction) {
    case Direction::kAbove:
      return value > limit;
    case Direction::kBelow:
      return value < limit;
    case Direction::kDistance:
      return std::abs(value - t.target) > limit;
  }
  return false;
}

// Combines the conditions of one level: entered if any is, released if all
// are; the reason names the conditions that decide it.
monitor::LevelCondition Combine(const std::vector<Condition>& all,
                                v1::DriftState level, std::string* trigger) {
  monitor::LevelCondition out;
  out.released = true;
  std::vector<std::string> entered, holding;
  for (const Condition& c : all) {
    const bool e = level == v1::DRIFTING ? c.drifting_entered : c.watch_entered;
    const bool r =
        level == v1::DRIFTING ? c.drifting_released : c.watch_released;
    if (e) {
      if (trigger->empty()) *trigger = c.metric;
      entered.push_back(c.reason.text());
    }
    if (!r) holding.push_back(c.holding);
    out.entered = out.entered || e;
    out.released = out.released && r;
  }
  if (out.entered) {
    out.reason = absl::StrJoin(entered, "; ");
  } else if (out.released) {
    out.reason = "every figure back within its release threshold";
  } else {
    out.reason = absl::StrJoin(holding, "; ");
  }
  return out;
}

}  // namespace

PolicyConditions DriftPolicy::Judge(
    const v1::Provenance& provenance, v1::SetHealth* health,
    const absl::flat_hash_map<std::string, int64_t>* alarms_seen) const {
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

  std::vector<Condition> conditions;
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
      // The figures this threshold looks at: one, or one per feature, each
      // with its PSI test when it is a PSI.
      struct Judged {
        std::string feature;
        const v1::Figure* figure;
        const v1::PsiTest* test;
      };
      std::vector<Judged> figures;
      if (const WindowFigure* wf = FindWindowFigure(t.metric); wf != nullptr) {
        if (!(wf->source == FigureSource::kOutcome ? enough_labelled
                                                   : enough_scored)) {
          continue;
        }
        figures.push_back(
            {"", &(w.*(wf->get))(),
             t.metric == "score_psi" ? &w.score_psi_test() : nullptr});
      } else if (const FeatureFigure* ff = FindFeatureFigure(t.metric);
                 ff != nullptr) {
        if (!enough_scored) continue;
        for (const v1::FeatureHealth& f : w.features()) {
          figures.push_back(
              {f.feature(), &(f.*(ff->get))(),
               t.metric == "feature_psi" ? &f.psi_test() : nullptr});
        }
      }
      double scale = 1;
      if (t.relative_to_training) {
        if (!training_log_loss) {
          notes.Add(absl::StrCat(t.metric,
                                 " cannot judge: the set has no "
                                 "provenance.training_log_loss"));
          continue;
        }
        scale = *training_log_loss;
      }
      const double watch = t.watch * scale, drifting = t.drifting * scale;
      const double watch_release = t.watch_release * scale;
      const double drifting_release = t.drifting_release * scale;
      for (const Judged& j : figures) {
        const std::string subject =
            j.feature.empty() ? t.metric
                              : absl::StrCat(t.metric, " of '", j.feature, "'");
        if (!j.figure->defined()) {
          notes.Add(absl::StrCat(subject, " cannot judge: ", j.figure->note()));
          continue;
        }
        const double value = j.figure->value();
        // A PSI needs significance too, when its test can be run.
        bool significant = true;
        const bool tested = j.test != nullptr && j.test->defined();
        if (j.test != nullptr && !j.test->defined()) {
          notes.Add(absl::StrCat(subject, ": ", j.test->note()));
        }
        if (tested) significant = j.test->p_value() < j.test->test_alpha();
        Condition c;
        c.metric = t.metric;
        c.watch_entered = significant && Crosses(t, watch, value);
        c.drifting_entered = significant && Crosses(t, drifting, value);
        c.watch_released = !(significant && Crosses(t, watch_release, value));
        c.drifting_released =
            !(significant && Crosses(t, drifting_release, value));
        c.holding = absl::StrFormat(
            "%s window: %s %.4g not yet %s its release threshold%s", w.window(),
            subject, value,
            t.direction == Direction::kBelow ? "above" : "within",
            tested ? absl::StrFormat(" (p-value %.3g)", j.test->p_value())
                   : "");
        c.level = c.drifting_entered ? v1::DRIFTING
                  : c.watch_entered  ? v1::WATCH
                                     : v1::STEADY;
        if (c.level != v1::STEADY) {
          const double crossed = c.level == v1::DRIFTING ? drifting : watch;
          v1::DriftReason& r = c.reason;
          r.set_metric(t.metric);
          r.set_window(w.window());
          r.set_feature(j.feature);
          r.set_value(value);
          r.set_threshold(crossed);
          r.set_state(c.level);
          std::string text = absl::StrFormat(
              "%s window: %s %.4g %s the %s threshold %.4g", w.window(),
              subject, value, DirectionWord(t.direction),
              DriftStateName(c.level), crossed);
          if (t.direction == Direction::kDistance) {
            absl::StrAppendFormat(&text, " (distance %.4g from %.4g)",
                                  std::abs(value - t.target), t.target);
          }
          if (t.relative_to_training) {
            absl::StrAppendFormat(
                &text, " (%.4g x training log-loss %.4g)",
                c.level == v1::DRIFTING ? t.drifting : t.watch, scale);
          }
          if (tested) {
            absl::StrAppendFormat(
                &text,
                " and significant: PSI test p-value %.3g < %.3g (critical "
                "PSI %.4g at n = %d, m = %d, %d degrees of freedom)",
                j.test->p_value(), j.test->test_alpha(), j.test->critical_psi(),
                j.test->baseline_count(), j.test->window_count(),
                j.test->degrees_of_freedom());
            r.set_test("psi_test");
            r.set_p_value(j.test->p_value());
          } else if (j.test != nullptr) {
            absl::StrAppend(&text,
                            " (no significance test: the baseline records "
                            "no count)");
            r.set_test("psi");
          } else {
            r.set_test("threshold");
          }
          r.set_text(std::move(text));
        }
        conditions.push_back(std::move(c));
      }
    }
  }

  // The CUSUM charts: an alarm since the last evaluation enters drifting.
  for (const v1::CusumChart& chart : health->cusum()) {
    if (!chart.ready()) {
      notes.Add(absl::StrCat("cusum ", chart.chart(),
                             " cannot judge: ", chart.note()));
      continue;
    }
    int64_t seen = 0;
    if (alarms_seen != nullptr) {
      if (auto it = alarms_seen->find(chart.chart());
          it != alarms_seen->end()) {
        seen = it->second;
      }
    }
    Condition c;
    c.metric = absl::StrCat("cusum_", chart.chart());
    const int64_t fresh = chart.alarms() - seen;
    c.drifting_entered = fresh > 0;
    c.drifting_released = !c.drifting_entered;
    c.holding = absl::StrCat("cusum ", chart.chart(), " alarmed");
    if (c.drifting_entered) {
      c.level = v1::DRIFTING;
      v1::DriftReason& r = c.reason;
      r.set_metric(c.metric);
      r.set_value(chart.last_alarm_value());
      r.set_threshold(chart.limit());
      r.set_state(v1::DRIFTING);
      r.set_test("cusum");
      r.set_p_value(chart.last_alarm_value());
      const std::string alternative =
          chart.alternative_slope() == 1
              ? absl::StrFormat("odds ratio %.4g",
                                std::exp(chart.alternative_shift()))
              : absl::StrFormat("calibration slope %.4g",
                                chart.alternative_slope());
      r.set_text(absl::StrFormat(
          "cusum %s (%s): %d alarm%s since the last evaluation, the last at "
          "chart value %.4g >= limit %.4g (in-control ARL %.0f labelled "
          "records)",
          chart.chart(), alternative, fresh, fresh == 1 ? "" : "s",
          chart.last_alarm_value(), chart.limit(), chart.arl_records()));
    }
    conditions.push_back(std::move(c));
  }

  PolicyConditions out;
  out.conditions.watch = Combine(conditions, v1::WATCH, &out.watch_trigger);
  out.conditions.drifting =
      Combine(conditions, v1::DRIFTING, &out.drifting_trigger);

  std::vector<v1::DriftReason> reasons;
  for (Condition& c : conditions) {
    if (c.level != v1::STEADY) reasons.push_back(std::move(c.reason));
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
  return out;
}

namespace {

v1::DriftState ToProto(monitor::DriftState s) {
  switch (s) {
    case monitor::DriftState::kWatch:
      return v1::WATCH;
    case monitor::DriftState::kDrifting:
      return v1::DRIFTING;
    default:
      return v1::STEADY;
  }
}

}  // namespace

absl::StatusOr<DriftTracker> DriftTracker::Create(const DriftPolicy& policy) {
  absl::StatusOr<monitor::DriftStateMachine> machine =
      monitor::DriftStateMachine::Create(
          {.release_evaluations = policy.release_evaluations()});
  if (!machine.ok()) return machine.status();
  return DriftTracker(*std::move(machine));
}

v1::DriftState DriftTracker::state() const { return ToProto(machine_.state()); }

std::optional<PolicyTransition> DriftTracker::Evaluate(
    const DriftPolicy& policy, const v1::Provenance& provenance,
    v1::SetHealth* health) {
  PolicyConditions c = policy.Judge(provenance, health, &alarms_seen_);
  for (const v1::CusumChart& chart : health->cusum()) {
    alarms_seen_[chart.chart()] = chart.alarms();
  }
  std::optional<monitor::DriftTransition> t = machine_.Evaluate(c.conditions);
  std::optional<PolicyTransition> out;
  if (t) {
    PolicyTransition p;
    p.from = ToProto(t->from);
    p.to = ToProto(t->to);
    p.reason = t->reason;
    if (t->kind == monitor::TransitionKind::kReleased) {
      p.trigger = "released";
    } else {
      p.trigger = p.to == v1::DRIFTING ? c.drifting_trigger : c.watch_trigger;
    }
    v1::DriftTransition record;
    record.set_from(p.from);
    record.set_to(p.to);
    record.set_reason(p.reason);
    if (health->has_evaluated_at())
      *record.mutable_at() = health->evaluated_at();
    last_ = std::move(record);
    out = std::move(p);
  }
  const v1::DriftState now = ToProto(machine_.state());
  if (now != health->state() && now != v1::STEADY) {
    // Held by hysteresis: the figures alone would give a lower level.
    health->add_notes(absl::StrFormat(
        "%s held: its release condition has held for %d of %d evaluations "
        "(hysteresis); now: %s",
        DriftStateName(now), machine_.release_run(),
        policy.release_evaluations(),
        now == v1::DRIFTING ? c.conditions.drifting.reason
                            : c.conditions.watch.reason));
  }
  health->set_state(now);
  health->set_release_run(machine_.release_run());
  health->set_release_evaluations(policy.release_evaluations());
  if (last_) *health->mutable_last_transition() = *last_;
  return out;
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
