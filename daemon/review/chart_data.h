// File: daemon/review/chart_data.h
//
// From plumbd's messages to the charts' plain structs (daemon/charts), for
// the model-health page and the refit dossier: a reliability table, shares
// over a baseline's bins, per-feature stability with the drift policy's
// thresholds and states, and an SVG chart or, when it cannot be drawn, a
// short note in its place (a chart never takes the page down).
//
//   charts::ReliabilityDiagram r;
//   r.series.push_back(ReliabilitySeriesOf("count window", w.reliability()));
//   absl::StrAppend(&html, ChartOrNote(charts::RenderReliabilityDiagram(r)));
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_REVIEW_CHART_DATA_H_
#define PLUMBLINE_DAEMON_REVIEW_CHART_DATA_H_

#include <string>

#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "daemon/charts/charts.h"
#include "daemon/policy/drift_policy.h"
#include "google/protobuf/repeated_ptr_field.h"
#include "plumbline/v1/monitor.pb.h"

namespace plumbline::daemon {

charts::ReliabilitySeries ReliabilitySeriesOf(
    absl::string_view name,
    const google::protobuf::RepeatedPtrField<v1::ReliabilityBin>& bins);

// The histogram of `shares` (its bins, window and baseline shares).
charts::BaselineHistogram HistogramOf(const v1::BinShares& shares);

// PSI per feature with the policy's feature_psi thresholds (the defaults
// when it has none) and each feature's state from `health`'s reasons in
// `window` (steady unless a reason names it).
charts::StabilityBars StabilityBarsOf(
    const google::protobuf::RepeatedPtrField<v1::FeatureHealth>& features,
    const DriftPolicy& policy, const v1::SetHealth* health,
    absl::string_view window);

charts::Level LevelOf(v1::DriftState state);

// The chart, or a note saying why it is missing.
std::string ChartOrNote(const absl::StatusOr<std::string>& svg);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_REVIEW_CHART_DATA_H_
