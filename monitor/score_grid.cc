#include "monitor/score_grid.h"

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <utility>
#include <vector>

#include "absl/status/status.h"
#include "absl/strings/str_format.h"
#include "monitor/auc.h"
#include "monitor/input_check.h"
#include "scorer/logistic.h"

namespace plumbline::monitor {
namespace {

absl::Status Empty(absl::string_view figure) {
  return absl::FailedPreconditionError(
      absl::StrFormat("%s is undefined: no labelled records", figure));
}

}  // namespace

absl::StatusOr<ScoreGrid> ScoreGrid::Create(double low, double high,
                                            int cells) {
  if (!std::isfinite(low) || !std::isfinite(high) || !(low < high) ||
      cells < 1) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "score grid: need finite low < high and cells >= 1; got low = %g, "
        "high = %g, cells = %d",
        low, high, cells));
  }
  return ScoreGrid(low, high, cells);
}

absl::StatusOr<ScoreGridAccumulator> ScoreGridAccumulator::Create(
    ScoreGrid grid, int equal_count_bins, int hosmer_lemeshow_groups) {
  if (absl::Status s = internal::CheckBinCount("score grid", "equal-count bins",
                                               equal_count_bins, 1);
      !s.ok()) {
    return s;
  }
  if (absl::Status s = internal::CheckBinCount(
          "score grid", "Hosmer-Lemeshow groups", hosmer_lemeshow_groups, 3);
      !s.ok()) {
    return s;
  }
  return ScoreGridAccumulator(grid, equal_count_bins, hosmer_lemeshow_groups);
}

absl::Status ScoreGridAccumulator::Add(double log_odds, int label) {
  if (absl::Status s = internal::CheckRecord("score grid", log_odds, label);
      !s.ok()) {
    return s;
  }
  Record(log_odds, Logistic(log_odds), label);
  return absl::OkStatus();
}

absl::Status ScoreGridAccumulator::Merge(const ScoreGridAccumulator& other) {
  if (!(grid_ == other.grid_) || equal_count_bins_ != other.equal_count_bins_ ||
      hosmer_lemeshow_groups_ != other.hosmer_lemeshow_groups_) {
    return absl::InvalidArgumentError(
        "score grid: cannot merge accumulators with different grids or bins");
  }
  for (size_t c = 0; c < cells_.size(); ++c) {
    cells_[c].positives += other.cells_[c].positives;
    cells_[c].negatives += other.cells_[c].negatives;
    cells_[c].predicted.Merge(other.cells_[c].predicted);
  }
  count_ += other.count_;
  return absl::OkStatus();
}

ScoreGridAccumulator::State ScoreGridAccumulator::state() const {
  State state;
  for (size_t c = 0; c < cells_.size(); ++c) {
    const Cell& cell = cells_[c];
    if (cell.positives == 0 && cell.negatives == 0) continue;
    state.cells.push_back(CellState{static_cast<int>(c), cell.positives,
                                    cell.negatives, cell.predicted});
  }
  return state;
}

int64_t ScoreGridAccumulator::positives() const {
  int64_t n = 0;
  for (const Cell& cell : cells_) n += cell.positives;
  return n;
}

absl::Status ScoreGridAccumulator::Restore(State state) {
  constexpr absl::string_view kWhat = "score grid state";
  std::vector<Cell> cells(cells_.size());
  int64_t count = 0;
  int previous = -1;
  for (size_t i = 0; i < state.cells.size(); ++i) {
    const CellState& c = state.cells[i];
    if (c.cell <= previous || c.cell >= grid_.num_cells()) {
      return absl::InvalidArgumentError(absl::StrFormat(
          "%s: cells[%d] is cell %d; cells must be ascending, distinct and "
          "below %d",
          kWhat, i, c.cell, grid_.num_cells()));
    }
    previous = c.cell;
    if (absl::Status s = internal::CheckStateCount(
            kWhat, absl::StrFormat("cells[%d].positives", i), c.positives);
        !s.ok()) {
      return s;
    }
    if (absl::Status s = internal::CheckStateCount(
            kWhat, absl::StrFormat("cells[%d].negatives", i), c.negatives);
        !s.ok()) {
      return s;
    }
    if (c.positives == 0 && c.negatives == 0) {
      return absl::InvalidArgumentError(absl::StrFormat(
          "%s: cells[%d] (cell %d) holds no record; only non-empty cells are "
          "saved",
          kWhat, i, c.cell));
    }
    if (absl::Status s = internal::CheckStateSum(
            kWhat, absl::StrFormat("cells[%d].predicted", i), c.predicted.sum(),
            c.predicted.compensation());
        !s.ok()) {
      return s;
    }
    cells[static_cast<size_t>(c.cell)] =
        Cell{c.positives, c.negatives, c.predicted};
    count += c.positives + c.negatives;  // at most 2 x cells x 2^40
  }
  cells_ = std::move(cells);
  count_ = count;
  return absl::OkStatus();
}

absl::StatusOr<AucEstimate> ScoreGridAccumulator::Auc() const {
  if (count_ == 0) return Empty("AUC");
  std::vector<int64_t> positives(cells_.size()), negatives(cells_.size());
  double tied_pairs = 0;
  for (size_t c = 0; c < cells_.size(); ++c) {
    positives[c] = cells_[c].positives;
    negatives[c] = cells_[c].negatives;
    tied_pairs +=
        static_cast<double>(positives[c]) * static_cast<double>(negatives[c]);
  }
  absl::StatusOr<double> auc = AucFromGroups(positives, negatives);
  if (!auc.ok()) return auc.status();
  int64_t total_positives = 0;
  for (int64_t p : positives) total_positives += p;
  const double pairs = static_cast<double>(total_positives) *
                       static_cast<double>(count_ - total_positives);
  return AucEstimate{*auc, tied_pairs / (2 * pairs)};
}

absl::StatusOr<CalibrationFit> ScoreGridAccumulator::Calibration() const {
  if (count_ == 0) return Empty("calibration intercept/slope");
  std::vector<LogOddsGroup> groups;
  for (size_t c = 0; c < cells_.size(); ++c) {
    if (cells_[c].positives + cells_[c].negatives == 0) continue;
    groups.push_back({grid_.Centre(static_cast<int>(c)), cells_[c].positives,
                      cells_[c].negatives});
  }
  return FitCalibrationGroups(groups);
}

absl::StatusOr<ReliabilityTable> ScoreGridAccumulator::EqualCountTable(
    int bins) const {
  // Cumulative counts: cell c holds sorted ranks [end[c-1], end[c]).
  std::vector<int64_t> end(cells_.size());
  int64_t running = 0;
  for (size_t c = 0; c < cells_.size(); ++c) {
    running += cells_[c].positives + cells_[c].negatives;
    end[c] = running;
  }
  auto quantised_probability = [this](size_t c) {
    return Logistic(grid_.Centre(static_cast<int>(c)));
  };
  const std::vector<double> edges =
      EqualCountEdges(count_, bins, [&](int64_t rank) {
        const size_t c = static_cast<size_t>(
            std::upper_bound(end.begin(), end.end(), rank) - end.begin());
        return quantised_probability(c);
      });
  std::vector<BinSums> sums(bins);
  for (size_t c = 0; c < cells_.size(); ++c) {
    const Cell& cell = cells_[c];
    if (cell.positives + cell.negatives == 0) continue;
    BinSums& bin = sums[ReliabilityBinOf(edges, quantised_probability(c))];
    bin.count += cell.positives + cell.negatives;
    bin.positives += cell.positives;
    bin.predicted.Merge(cell.predicted);
  }
  return MakeReliabilityTable(edges, sums);
}

absl::StatusOr<ReliabilityTable> ScoreGridAccumulator::EqualCountReliability()
    const {
  if (count_ == 0) return Empty("equal-count reliability table");
  return EqualCountTable(equal_count_bins_);
}

absl::StatusOr<HosmerLemeshowResult> ScoreGridAccumulator::HosmerLemeshow()
    const {
  if (count_ == 0) return Empty("Hosmer-Lemeshow");
  absl::StatusOr<ReliabilityTable> table =
      EqualCountTable(hosmer_lemeshow_groups_);
  if (!table.ok()) return table.status();
  return HosmerLemeshowFromTable(*table);
}

ScoreGridFigures ScoreGridAccumulator::Result() const {
  ScoreGridFigures f;
  f.count = count_;
  f.auc = Auc();
  f.calibration = Calibration();
  f.equal_count = EqualCountReliability();
  f.hosmer_lemeshow = HosmerLemeshow();
  return f;
}

}  // namespace plumbline::monitor
