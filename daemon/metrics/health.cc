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

  for (const v1::SetHealth& h : monitor_->AllHealth()) {
    if (!h.has_evaluated_at()) continue;
    AddSample(state, VersionLabels(h), static_cast<double>(h.state()));
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
      for (size_t i = 0; i < std::size(kWindowFigures); ++i) {
        const v1::Figure& f = (w.*(kWindowFigures[i].get))();
        if (f.defined()) AddSample(figures[i], base, f.value());
      }
      for (const v1::FeatureHealth& fh : w.features()) {
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

  std::vector<prometheus::MetricFamily> out;
  auto keep = [&](prometheus::MetricFamily& f) {
    if (!f.metric.empty()) out.push_back(std::move(f));
  };
  keep(state);
  keep(evaluated);
  keep(records);
  keep(refused);
  for (auto& f : figures) keep(f);
  for (auto& f : feature_figures) keep(f);
  keep(unmonitored);
  return out;
}

}  // namespace plumbline::daemon
