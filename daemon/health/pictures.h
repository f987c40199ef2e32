// File: daemon/health/pictures.h
//
// The numbers behind the model-health page's pictures, copied from the
// monitor's accumulators into plumbline.v1.WindowHealth: the reliability
// table of a window's labelled records and the distribution of the score
// and of each feature over its baseline's bins. HealthWindows and
// ScoredAccumulator call these while they fill a window's figures, so the
// page, GetSetHealth and the gauges come from one evaluation.
//
//   FillReliability(figures.fixed_bins.table, &window_health);
//   *window_health.mutable_score_shares() = NumericShares(*baseline, *r);
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_HEALTH_PICTURES_H_
#define PLUMBLINE_DAEMON_HEALTH_PICTURES_H_

#include "monitor/reliability.h"
#include "monitor/stability.h"
#include "plumbline/v1/monitor.pb.h"

namespace plumbline::daemon {

// Appends every bin of `table` (empty ones with zero means) to
// out->reliability.
void FillReliability(const monitor::ReliabilityTable& table,
                     v1::WindowHealth* out);

// The baseline's bins with the window's shares of them (figures.proportions;
// none when every value was missing).
v1::BinShares NumericShares(const monitor::BinnedBaseline& baseline,
                            const monitor::StabilityFigures& figures);
v1::BinShares CategoricalShares(const monitor::CategoricalBaseline& baseline,
                                const monitor::StabilityFigures& figures);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_HEALTH_PICTURES_H_
