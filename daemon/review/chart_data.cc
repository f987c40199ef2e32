// File: daemon/review/chart_data.cc
#include "daemon/review/chart_data.h"

#include "absl/strings/str_cat.h"
#include "daemon/charts/html.h"

namespace plumbline::daemon {

charts::Level LevelOf(v1::DriftState state) {
  switch (state) {
    case v1::DRIFTING:
      return charts::Level::kDrifting;
    case v1::WATCH:
      return charts::Level::kWatch;
    default:
      return charts::Level::kSteady;
  }
}

charts::ReliabilitySeries ReliabilitySeriesOf(
    absl::string_view name,
    const google::protobuf::RepeatedPtrField<v1::ReliabilityBin>& bins) {
  charts::ReliabilitySeries s;
  s.name = std::string(name);
  for (const v1::ReliabilityBin& b : bins) {
    charts::ReliabilityBin c;
    c.lower = b.lower();
    c.upper = b.upper();
    c.count = b.count();
    if (b.count() > 0) {
      c.mean_predicted = b.mean_predicted();
      c.observed_rate = b.observed_rate();
    }
    s.bins.push_back(c);
  }
  return s;
}

charts::BaselineHistogram HistogramOf(const v1::BinShares& shares) {
  charts::BaselineHistogram h;
  h.edges.assign(shares.edges().begin(), shares.edges().end());
  h.levels.assign(shares.levels().begin(), shares.levels().end());
  h.baseline.assign(shares.baseline().begin(), shares.baseline().end());
  h.window.assign(shares.window().begin(), shares.window().end());
  if (h.window.empty()) {
    h.window.assign(h.baseline.size(), charts::kUndefined);
  }
  return h;
}

charts::StabilityBars StabilityBarsOf(
    const google::protobuf::RepeatedPtrField<v1::FeatureHealth>& features,
    const DriftPolicy& policy, const v1::SetHealth* health,
    absl::string_view window) {
  charts::StabilityBars bars;
  for (const DriftThreshold& t : policy.thresholds()) {
    if (t.metric == "feature_psi" &&
        t.direction == DriftThreshold::Direction::kAbove) {
      bars.watch = t.watch;
      bars.drifting = t.drifting;
    }
  }
  for (const v1::FeatureHealth& f : features) {
    charts::FeatureStability s;
    s.feature = f.feature();
    if (f.psi().defined()) s.psi = f.psi().value();
    if (health != nullptr) {
      s.state = charts::Level::kSteady;
      for (const v1::DriftReason& r : health->reasons()) {
        if (r.metric() == "feature_psi" && r.feature() == f.feature() &&
            r.window() == window) {
          const charts::Level l = LevelOf(r.state());
          if (static_cast<int>(l) > static_cast<int>(*s.state)) s.state = l;
        }
      }
      if (!f.psi().defined()) s.state.reset();
    }
    bars.features.push_back(std::move(s));
  }
  return bars;
}

std::string ChartOrNote(const absl::StatusOr<std::string>& svg) {
  if (svg.ok()) return *svg;
  return absl::StrCat("<p class=\"note\">chart not drawn: ",
                      charts::Html(svg.status().message()), "</p>");
}

}  // namespace plumbline::daemon
