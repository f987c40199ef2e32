// File: daemon/metrics/health.cc
#include "daemon/metrics/health.h"

#include <string>
#include <utility>

#include "absl/strings/str_cat.h"
#include "daemon/policy/figures.h"
#include "prometheus/client_metric.h"

namespace plumbline::daemon {
namespace {

using Labels = std::vector<prometheus::ClientMetric::Label>;

prometheus::MetricFamily Family(std::string name, absl::string_view help,
                                prometheus::MetricType type) {
  prometheus::MetricFamily f;
  f.name = std::move(name);
  f.help = std::string(help);
  f.type = type;
  return f;
}

void AddSample(prometheus::MetricFamily& family, Labels labels, double value) {
  prometheus::ClientMetric m;
  m.label = std::move(labels);
  if (family.type == prometheus::MetricType::Counter) {
    m.counter.value = value;
  } else {
    m.gauge.value = value;
  }
  family.metric.push_back(std::move(m));
}

Labels VersionLabels(const v1::SetHealth& h) {
  return {{"set", h.set()}, {"version", h.version()}};
}

Labels WindowLabels(const v1::SetHealth& h, const v1::WindowHealth& w) {
  Labels l = VersionLabels(h);
  l.push_back({"window", w.window()});
  return l;
}

}  // namespace

std::vector<prometheus::MetricFamily> HealthMetrics::Collect() const {
  using prometheus::MetricType;
  auto state = Family("plumbline_drift_state",
                      "Drift policy state of a set version: 0 steady, 1 watch, "
                      "2 drifting.",
                      MetricType::Gauge);
  auto evaluated = Family("plumbline_health_evaluated_timestamp_seconds",
                          "Unix time of the evaluation the health metrics "
                          "come from.",
                          MetricType::Gauge);
  auto records = Family("plumbline_window_records",
                        "Records in a window: labelled (outcome figures) or "
                        "scored (stability figures).",
                        MetricType::Gauge);
  auto refused = Family("plumbline_window_refused_records_total",
                        "Records a window refused: older than a time window's "
                        "oldest bucket, or not a valid record.",
                        MetricType::Counter);
  std::vector<prometheus::MetricFamily> figures;
  for (const WindowFigure& wf : kWindowFigures) {
    figures.push_back(Family(absl::StrCat("plumbline_", wf.metric), wf.help,
                             MetricType::Gauge));
  }
  std::vector<prometheus::MetricFamily> feature_figures;
  for (const FeatureFigure& ff : kFeatureFigures) {
    feature_figures.push_back(
        Family(std::string(ff.exported_name), ff.help, MetricType::Gauge));
  }
  auto score_p = Family("plumbline_score_psi_p_value",
                        "p-value of the score PSI's test of stability at the "
                        "window's counts: chi-square tail of PSI / (1/n + "
                        "1/m), B - 1 degrees of freedom.",
                        MetricType::Gauge);
  auto score_critical = Family("plumbline_score_psi_critical",
                               "Score PSI whose p-value equals the level of "
                               "one test at the window's counts.",
                               MetricType::Gauge);
  auto feature_p = Family("plumbline_feature_psi_p_value",
                          "p-value of a feature PSI's test of stability at "
                          "the window's counts.",
                          MetricType::Gauge);
  auto feature_critical = Family("plumbline_feature_psi_critical",
                                 "Feature PSI whose p-value equals the level "
                                 "of one test at the window's counts.",
                                 MetricType::Gauge);
  auto test_alpha = Family("plumbline_stability_test_alpha",
                           "Level of one PSI test: drift_policy.alpha over "
                           "the version's number of tests (Bonferroni).",
                           MetricType::Gauge);
  auto unstored = Family("plumbline_window_unstored_labelled_records",
                         "Labelled records of a window left out of the exact "
                         "figures (AUC, Hosmer-Lemeshow, calibration "
                         "intercept and slope) by the record store's bound.",
                         MetricType::Gauge);
  auto cusum_value = Family("plumbline_cusum_value",
                            "Risk-adjusted Bernoulli CUSUM chart value S "
                            "(log-likelihood ratio units).",
                            MetricType::Gauge);
  auto cusum_limit = Family("plumbline_cusum_limit",
                            "Control limit h of a CUSUM chart: an alarm when "
                            "S >= h.",
                            MetricType::Gauge);
  auto cusum_arl = Family("plumbline_cusum_in_control_arl_records",
                          "In-control average run length of a CUSUM chart at "
                          "its limit, in labelled records (Markov chain).",
                          MetricType::Gauge);
  auto cusum_alarms = Family("plumbline_cusum_alarms_total",
                             "Alarms of a CUSUM chart since its version was "
                             "loaded.",
                             MetricType::Counter);
  auto horizon = Family("plumbline_outcome_horizon_seconds",
                        "Outcome horizon of a set version: outcome figures "
                        "and charts take records at least this old.",
                        MetricType::Gauge);
  auto immature = Family("plumbline_immature_labelled_records",
                         "Labelled records waiting for their score to reach "
                         "the outcome horizon.",
                         MetricType::Gauge);
  auto coverage = Family("plumbline_outcome_coverage_ratio",
                         "Share of the records scored in an age band that "
                         "have an outcome.",
                         MetricType::Gauge);

  for (const v1::SetHealth& h : monitor_->AllHealth()) {
    if (!h.has_evaluated_at()) {
      // A version not evaluated yet (just activated, approved or loaded):
      // its series start at once, steady with empty windows, so alerts and
      // dashboards see no gap until the next tick.
      AddSample(state, VersionLabels(h), 0);
      for (const char* window : {"count", "time"}) {
        for (const char* kind : {"labelled", "scored"}) {
          Labels l = VersionLabels(h);
          l.push_back({"window", window});
          l.push_back({"kind", kind});
          AddSample(records, l, 0);
        }
      }
      continue;
    }
    AddSample(state, VersionLabels(h), static_cast<double>(h.state()));
    AddSample(test_alpha, VersionLabels(h), h.stability_test_alpha());
    AddSample(horizon, VersionLabels(h),
              static_cast<double>(h.outcome_horizon_seconds()));
    AddSample(immature, VersionLabels(h),
              static_cast<double>(h.immature_labelled()));
    for (const v1::CusumChart& c : h.cusum()) {
      if (!c.ready()) continue;
      Labels l = VersionLabels(h);
      l.push_back({"chart", c.chart()});
      AddSample(cusum_value, l, c.value());
      AddSample(cusum_limit, l, c.limit());
      AddSample(cusum_arl, l, c.arl_records());
      AddSample(cusum_alarms, l, static_cast<double>(c.alarms()));
    }
    for (const v1::AgeCoverage& a : h.outcome_coverage()) {
      if (!a.coverage().defined()) continue;
      Labels l = VersionLabels(h);
      l.push_back({"min_age_seconds", absl::StrCat(a.min_age_seconds())});
      l.push_back({"max_age_seconds", absl::StrCat(a.max_age_seconds())});
      l.push_back({"mature", a.mature() ? "true" : "false"});
      AddSample(coverage, l, a.coverage().value());
    }
    AddSample(evaluated, VersionLabels(h),
              static_cast<double>(h.evaluated_at().seconds()) +
                  h.evaluated_at().nanos() * 1e-9);
    for (const v1::WindowHealth& w : h.windows()) {
      const Labels base = WindowLabels(h, w);
      auto with = [&](absl::string_view name, absl::string_view value) {
        Labels l = base;
        l.push_back({std::string(name), std::string(value)});
        return l;
      };
      AddSample(records, with("kind", "labelled"),
                static_cast<double>(w.labelled()));
      AddSample(records, with("kind", "scored"),
                static_cast<double>(w.scored()));
      AddSample(refused, with("kind", "labelled"),
                static_cast<double>(w.refused_labelled()));
      AddSample(refused, with("kind", "scored"),
                static_cast<double>(w.refused_scored()));
      AddSample(unstored, base, static_cast<double>(w.unstored_labelled()));
      if (w.score_psi_test().defined()) {
        AddSample(score_p, base, w.score_psi_test().p_value());
        AddSample(score_critical, base, w.score_psi_test().critical_psi());
      }
      for (size_t i = 0; i < std::size(kWindowFigures); ++i) {
        const v1::Figure& f = (w.*(kWindowFigures[i].get))();
        if (f.defined()) AddSample(figures[i], base, f.value());
      }
      for (const v1::FeatureHealth& fh : w.features()) {
        if (fh.psi_test().defined()) {
          AddSample(feature_p, with("feature", fh.feature()),
                    fh.psi_test().p_value());
          AddSample(feature_critical, with("feature", fh.feature()),
                    fh.psi_test().critical_psi());
        }
        for (size_t i = 0; i < std::size(kFeatureFigures); ++i) {
          const v1::Figure& f = (fh.*(kFeatureFigures[i].get))();
          if (f.defined()) {
            AddSample(feature_figures[i], with("feature", fh.feature()),
                      f.value());
          }
        }
      }
    }
  }
  auto unmonitored = Family("plumbline_unmonitored_records_total",
                            "Records of a set version the monitor has no "
                            "windows for (e.g. an outcome for a score of a "
                            "replaced version).",
                            MetricType::Counter);
  for (const UnmonitoredCount& c : monitor_->Unmonitored()) {
    AddSample(unmonitored,
              {{"set", c.set}, {"version", c.version}, {"kind", c.kind}},
              static_cast<double>(c.records));
  }

  auto transitions = Family("plumbline_drift_transitions_total",
                            "Changes of drift state of a set version, by the "
                            "metric or chart that entered the new state "
                            "(trigger), or released after the dwell.",
                            MetricType::Counter);
  for (const TransitionCount& t : monitor_->Transitions()) {
    AddSample(transitions,
              {{"set", t.set},
               {"version", t.version},
               {"from", t.from},
               {"to", t.to},
               {"trigger", t.trigger}},
              static_cast<double>(t.transitions));
  }

  std::vector<prometheus::MetricFamily> out;
  auto keep = [&](prometheus::MetricFamily& f) {
    if (!f.metric.empty()) out.push_back(std::move(f));
  };
  keep(state);
  keep(evaluated);
  keep(records);
  keep(refused);
  keep(unstored);
  for (auto& f : figures) keep(f);
  keep(score_p);
  keep(score_critical);
  for (auto& f : feature_figures) keep(f);
  keep(feature_p);
  keep(feature_critical);
  keep(test_alpha);
  keep(cusum_value);
  keep(cusum_limit);
  keep(cusum_arl);
  keep(cusum_alarms);
  keep(horizon);
  keep(immature);
  keep(coverage);
  keep(transitions);
  keep(unmonitored);
  return out;
}

}  // namespace plumbline::daemon
