// File: daemon/health/pictures.cc
#include "daemon/health/pictures.h"

#include <cmath>

namespace plumbline::daemon {

void FillReliability(const monitor::ReliabilityTable& table,
                     v1::WindowHealth* out) {
  for (const monitor::ReliabilityBin& b : table.bins) {
    v1::ReliabilityBin* bin = out->add_reliability();
    bin->set_lower(b.lower);
    bin->set_upper(b.upper);
    bin->set_count(b.count);
    bin->set_positives(b.positives);
    if (b.count > 0) {
      bin->set_mean_predicted(b.mean_predicted);
      bin->set_observed_rate(b.observed_rate);
    }
  }
}

v1::BinShares NumericShares(const monitor::BinnedBaseline& baseline,
                            const monitor::StabilityFigures& figures) {
  v1::BinShares out;
  for (double e : baseline.edges()) out.add_edges(e);
  for (double p : baseline.proportions()) out.add_baseline(p);
  for (double p : figures.proportions) out.add_window(p);
  return out;
}

v1::BinShares CategoricalShares(const monitor::CategoricalBaseline& baseline,
                                const monitor::StabilityFigures& figures) {
  v1::BinShares out;
  for (const std::string& level : baseline.levels()) out.add_levels(level);
  out.add_levels("unseen");
  for (double p : baseline.proportions()) out.add_baseline(p);
  for (double p : figures.proportions) out.add_window(p);
  return out;
}

}  // namespace plumbline::daemon
