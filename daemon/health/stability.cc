// File: daemon/health/stability.cc
#include "daemon/health/stability.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <utility>

#include "absl/strings/str_cat.h"
#include "daemon/health/pictures.h"
#include "daemon/policy/figures.h"
#include "monitor/stability_significance.h"

namespace plumbline::daemon {
namespace {

using Mode = StabilityLayout::Feature::Mode;

constexpr char kNoRecords[] = "no scored records in the window";

// Everything is in range: for a feature whose baseline gives no [min, max].
constexpr monitor::ValueRange kWholeLine = {
    -std::numeric_limits<double>::infinity(),
    std::numeric_limits<double>::infinity()};

// n of the PSI test: the baseline's non-missing records, since its
// proportions are among them.
int64_t NonMissingCount(const v1::Distribution& d) {
  if (d.count() <= 0) return 0;
  const double missing = std::clamp(d.missing_proportion(), 0.0, 1.0);
  return std::llround(static_cast<double>(d.count()) * (1 - missing));
}

int NonzeroBins(absl::Span<const double> proportions) {
  int n = 0;
  for (double p : proportions) n += p > 0 ? 1 : 0;
  return n;
}

// The test of one PSI: `figures` of the window, the baseline's count and
// non-empty bins.
v1::PsiTest Test(const monitor::StabilityFigures& figures,
                 int64_t baseline_count, int bins, double test_alpha) {
  v1::PsiTest t;
  t.set_baseline_count(baseline_count);
  t.set_window_count(figures.count - figures.missing);
  t.set_test_alpha(test_alpha);
  if (!figures.psi) {
    t.set_note("no PSI: every record had the value missing");
    return t;
  }
  if (baseline_count <= 0) {
    t.set_note(
        "the baseline records no count (n): no test; the PSI judges on its "
        "effect size alone");
    return t;
  }
  if (bins < 2) {
    t.set_note("the baseline has fewer than 2 non-empty bins: no test");
    return t;
  }
  absl::StatusOr<monitor::PsiSignificance> s =
      monitor::TestPsi({.psi = *figures.psi,
                        .baseline_count = baseline_count,
                        .window_count = figures.count - figures.missing,
                        .bins = bins},
                       test_alpha);
  if (!s.ok()) {
    t.set_note(std::string(s.status().message()));
    return t;
  }
  t.set_defined(true);
  t.set_p_value(s->p_value);
  t.set_critical_psi(s->critical_psi);
  t.set_degrees_of_freedom(s->degrees_of_freedom);
  return t;
}

absl::StatusOr<std::shared_ptr<const monitor::BinnedBaseline>> Bins(
    const v1::Distribution& d) {
  absl::StatusOr<monitor::BinnedBaseline> b = monitor::BinnedBaseline::Create(
      {d.edges().begin(), d.edges().end()},
      {d.proportions().begin(), d.proportions().end()});
  if (!b.ok()) return b.status();
  return std::make_shared<const monitor::BinnedBaseline>(*std::move(b));
}

StabilityLayout::Feature NumericFeature(const v1::Feature& f) {
  StabilityLayout::Feature out;
  out.name = f.name();
  const v1::Distribution& d = f.baseline();
  if (!f.has_baseline() ||
      (d.proportions_size() == 0 && d.level_proportions().empty())) {
    out.no_baseline = "no baseline";
    return out;
  }
  if (d.proportions_size() == 0) {
    out.no_baseline =
        "baseline unusable: a numeric or binned feature needs "
        "edges/proportions, not level_proportions";
    return out;
  }
  auto bins = Bins(d);
  if (!bins.ok()) {
    out.no_baseline =
        absl::StrCat("baseline unusable: ", bins.status().message());
    return out;
  }
  out.mode = Mode::kNumeric;
  out.bins = *std::move(bins);
  out.baseline_count = NonMissingCount(d);
  out.nonzero_bins = NonzeroBins(out.bins->proportions());
  if (d.has_min() && d.has_max())
    out.range = monitor::ValueRange{d.min(), d.max()};
  return out;
}

StabilityLayout::Feature CategoricalFeature(const v1::Feature& f) {
  StabilityLayout::Feature out;
  out.name = f.name();
  for (const auto& level : f.categorical().levels()) {
    out.level_by_index.push_back(level.value());
  }
  const v1::Distribution& d = f.baseline();
  if (!f.has_baseline() ||
      (d.proportions_size() == 0 && d.level_proportions().empty())) {
    out.no_baseline = "no baseline";
    return out;
  }
  if (d.level_proportions().empty()) {
    out.no_baseline =
        "baseline unusable: a categorical feature needs level_proportions";
    return out;
  }
  std::vector<std::pair<std::string, double>> levels(
      d.level_proportions().begin(), d.level_proportions().end());
  std::sort(levels.begin(), levels.end());  // a map has no order of its own
  absl::StatusOr<monitor::CategoricalBaseline> b =
      monitor::CategoricalBaseline::Create(std::move(levels));
  if (!b.ok()) {
    out.no_baseline = absl::StrCat("baseline unusable: ", b.status().message());
    return out;
  }
  out.mode = Mode::kCategorical;
  out.levels =
      std::make_shared<const monitor::CategoricalBaseline>(*std::move(b));
  out.baseline_count = NonMissingCount(d);
  out.nonzero_bins = NonzeroBins(out.levels->proportions());
  return out;
}

}  // namespace

std::shared_ptr<const StabilityLayout> StabilityLayout::Create(
    const scorer::ScoringPlan& plan) {
  std::shared_ptr<StabilityLayout> layout(new StabilityLayout());
  // One bin, no edge: cannot fail.
  layout->counting_ = std::make_shared<const monitor::BinnedBaseline>(
      *monitor::BinnedBaseline::Create({}, {1.0}));
  const v1::CoefficientSet& set = plan.set();
  if (!set.has_score_baseline() ||
      set.score_baseline().proportions_size() == 0) {
    layout->score_note_ = "no baseline: the set has no score_baseline";
  } else if (auto bins = Bins(set.score_baseline()); !bins.ok()) {
    layout->score_note_ =
        absl::StrCat("score_baseline unusable: ", bins.status().message());
  } else {
    layout->score_ = *std::move(bins);
    layout->score_count_ = NonMissingCount(set.score_baseline());
    layout->score_bins_ = NonzeroBins(layout->score_->proportions());
  }
  for (const v1::Feature& f : set.features()) {
    layout->features_.push_back(f.has_categorical() ? CategoricalFeature(f)
                                                    : NumericFeature(f));
  }
  return layout;
}

int StabilityLayout::Testable() const {
  int n = score_ && score_count_ > 0 && score_bins_ >= 2 ? 1 : 0;
  for (const Feature& f : features_) {
    if (f.mode != Feature::Mode::kNoBaseline && f.baseline_count > 0 &&
        f.nonzero_bins >= 2) {
      ++n;
    }
  }
  return n;
}

ScoredAccumulator::ScoredAccumulator(
    std::shared_ptr<const StabilityLayout> layout)
    : layout_(std::move(layout)) {
  // The Create calls below only fail for a null baseline or an empty range,
  // which the layout never holds.
  if (layout_->score()) {
    score_ = *monitor::NumericStabilityAccumulator::Create(layout_->score(),
                                                           kWholeLine);
  }
  features_.reserve(layout_->features().size());
  for (const StabilityLayout::Feature& f : layout_->features()) {
    switch (f.mode) {
      case Mode::kNumeric:
        features_.emplace_back(*monitor::NumericStabilityAccumulator::Create(
            f.bins, f.range.value_or(kWholeLine)));
        break;
      case Mode::kCategorical:
        features_.emplace_back(
            *monitor::CategoricalStabilityAccumulator::Create(f.levels));
        break;
      case Mode::kNoBaseline:
        features_.emplace_back(*monitor::NumericStabilityAccumulator::Create(
            layout_->counting(), kWholeLine));
        break;
    }
  }
}

void ScoredAccumulator::Add(double probability,
                            absl::Span<const scorer::RawValue> values) {
  using Kind = scorer::RawValue::Kind;
  constexpr double kMissing = std::numeric_limits<double>::quiet_NaN();
  ++count_;
  if (score_) score_->Add(probability);
  const std::vector<StabilityLayout::Feature>& layout = layout_->features();
  for (size_t i = 0; i < features_.size(); ++i) {
    const scorer::RawValue& v = values[i];
    const StabilityLayout::Feature& f = layout[i];
    switch (f.mode) {
      case Mode::kNumeric:
        std::get<0>(features_[i])
            .Add(v.kind == Kind::kNumber ? v.number : kMissing);
        break;
      case Mode::kCategorical: {
        std::optional<absl::string_view> level;
        if (v.kind == Kind::kText) {
          level = v.text;
        } else if (v.kind == Kind::kNumber && v.number >= 0 &&
                   v.number < static_cast<double>(f.level_by_index.size())) {
          // The dense form's level index.
          level = f.level_by_index[static_cast<size_t>(v.number)];
        }
        std::get<1>(features_[i]).Add(level);
        break;
      }
      case Mode::kNoBaseline: {
        const bool missing = v.kind == Kind::kMissing ||
                             (v.kind == Kind::kNumber && std::isnan(v.number));
        std::get<0>(features_[i]).Add(missing ? kMissing : 0.0);
        break;
      }
    }
  }
}

absl::Status ScoredAccumulator::Merge(const ScoredAccumulator& other) {
  if (layout_ != other.layout_) {
    return absl::InvalidArgumentError(
        "scored records: cannot merge windows of different set versions");
  }
  count_ += other.count_;
  if (score_) score_->Merge(*other.score_).IgnoreError();  // same baseline
  for (size_t i = 0; i < features_.size(); ++i) {
    std::visit(
        [&](auto& mine) {
          mine.Merge(std::get<std::decay_t<decltype(mine)>>(other.features_[i]))
              .IgnoreError();  // same layout, so same baselines
        },
        features_[i]);
  }
  return absl::OkStatus();
}

void ScoredAccumulator::Fill(v1::WindowHealth* out, double test_alpha) const {
  out->set_scored(count_);
  if (!score_) {
    *out->mutable_score_psi() = UndefinedFigure(layout_->score_note());
    out->mutable_score_psi_test()->set_note(layout_->score_note());
  } else if (count_ == 0) {
    *out->mutable_score_psi() = UndefinedFigure(kNoRecords);
    out->mutable_score_psi_test()->set_note(kNoRecords);
  } else if (auto r = score_->Result(); r.ok() && r->psi) {
    *out->mutable_score_psi() = DefinedFigure(*r->psi);
    *out->mutable_score_shares() = NumericShares(*layout_->score(), *r);
    *out->mutable_score_psi_test() =
        Test(*r, layout_->score_baseline_count(), layout_->score_nonzero_bins(),
             test_alpha);
  } else {
    *out->mutable_score_psi() = UndefinedFigure("no probability to compare");
    out->mutable_score_psi_test()->set_note("no probability to compare");
  }
  const std::vector<StabilityLayout::Feature>& layout = layout_->features();
  for (size_t i = 0; i < features_.size(); ++i) {
    const StabilityLayout::Feature& f = layout[i];
    v1::FeatureHealth* fh = out->add_features();
    fh->set_feature(f.name);
    absl::StatusOr<monitor::StabilityFigures> r =
        std::visit([](const auto& acc) { return acc.Result(); }, features_[i]);
    if (!r.ok()) {  // no records
      fh->mutable_psi_test()->set_note(kNoRecords);
      *fh->mutable_psi() = UndefinedFigure(kNoRecords);
      *fh->mutable_missing_rate() = UndefinedFigure(kNoRecords);
      *fh->mutable_out_of_range_rate() = UndefinedFigure(kNoRecords);
      continue;
    }
    *fh->mutable_missing_rate() = DefinedFigure(r->missing_rate);
    if (f.mode == Mode::kNoBaseline) {
      fh->mutable_psi_test()->set_note(f.no_baseline);
      *fh->mutable_psi() = UndefinedFigure(f.no_baseline);
      *fh->mutable_out_of_range_rate() = UndefinedFigure(f.no_baseline);
      continue;
    }
    *fh->mutable_psi() =
        r->psi ? DefinedFigure(*r->psi)
               : UndefinedFigure("every record had the value missing");
    *fh->mutable_shares() = f.mode == Mode::kNumeric
                                ? NumericShares(*f.bins, *r)
                                : CategoricalShares(*f.levels, *r);
    *fh->mutable_psi_test() =
        Test(*r, f.baseline_count, f.nonzero_bins, test_alpha);
    if (f.mode == Mode::kNumeric && !f.range) {
      *fh->mutable_out_of_range_rate() =
          UndefinedFigure("the baseline has no min and max");
    } else {
      *fh->mutable_out_of_range_rate() = DefinedFigure(r->out_of_range_rate);
    }
  }
}

const monitor::StabilityCounts* ScoredAccumulator::score_counts() const {
  return score_ ? &score_->counts() : nullptr;
}

const monitor::StabilityCounts& ScoredAccumulator::feature_counts(
    size_t i) const {
  return std::visit(
      [](const auto& acc) -> const monitor::StabilityCounts& {
        return acc.counts();
      },
      features_[i]);
}

absl::Status ScoredAccumulator::Restore(
    int64_t count, std::optional<monitor::StabilityCounts> score,
    std::vector<monitor::StabilityCounts> features) {
  if (count < 0) {
    return absl::InvalidArgumentError(
        absl::StrCat("scored bucket state: count is ", count));
  }
  if (score.has_value() != score_.has_value()) {
    return absl::InvalidArgumentError(
        score_ ? "scored bucket state: no score counts, but the set has a "
                 "score baseline"
               : "scored bucket state: score counts, but the set has no "
                 "usable score baseline");
  }
  if (features.size() != features_.size()) {
    return absl::InvalidArgumentError(
        absl::StrCat("scored bucket state: ", features.size(),
                     " features; the set has ", features_.size()));
  }
  std::optional<monitor::NumericStabilityAccumulator> new_score = score_;
  if (new_score) {
    if (absl::Status s = new_score->Restore(*std::move(score)); !s.ok()) {
      return absl::InvalidArgumentError(absl::StrCat("score: ", s.message()));
    }
    if (new_score->count() != count) {
      return absl::InvalidArgumentError(
          absl::StrCat("scored bucket state: the score counts ",
                       new_score->count(), " records, the bucket ", count));
    }
  }
  std::vector<FeatureAccumulator> new_features = features_;
  const std::vector<StabilityLayout::Feature>& layout = layout_->features();
  for (size_t i = 0; i < new_features.size(); ++i) {
    absl::Status s = std::visit(
        [&](auto& acc) {
          if (absl::Status r = acc.Restore(std::move(features[i])); !r.ok()) {
            return r;
          }
          if (acc.count() != count) {
            return absl::InvalidArgumentError(absl::StrCat(
                "counts ", acc.count(), " records, the bucket ", count));
          }
          return absl::OkStatus();
        },
        new_features[i]);
    if (!s.ok()) {
      return absl::InvalidArgumentError(
          absl::StrCat("scored bucket state: feature '", layout[i].name,
                       "': ", s.message()));
    }
  }
  score_ = std::move(new_score);
  features_ = std::move(new_features);
  count_ = count;
  return absl::OkStatus();
}

}  // namespace plumbline::daemon
