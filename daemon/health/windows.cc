// File: daemon/health/windows.cc
#include "daemon/health/windows.h"

#include <algorithm>
#include <optional>
#include <utility>

#include "absl/status/status.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "daemon/health/pictures.h"
#include "daemon/policy/figures.h"
#include "scorer/logistic.h"

namespace plumbline::daemon {
namespace {

constexpr int kLabelled = 0, kScored = 1;

int Index(WindowKind window) { return window == WindowKind::kCount ? 0 : 1; }

// Times later than `now` count as `now`; so do infinite ones.
absl::Time Clamp(absl::Time at, absl::Time now) {
  if (at == absl::InfinitePast() || at == absl::InfiniteFuture()) return now;
  return std::min(at, now);
}

absl::Status CountError(absl::string_view field, int64_t records, int buckets) {
  return absl::InvalidArgumentError(absl::StrFormat(
      "windows.%s: %d records cannot be split into windows.buckets = %d "
      "equal buckets; choose a count that is a multiple of buckets",
      field, records, buckets));
}

void FillOutcome(const monitor::OutcomeAccumulator& acc, v1::WindowHealth* w) {
  w->set_labelled(acc.count());
  absl::StatusOr<monitor::OutcomeFigures> r = acc.Result();
  if (!r.ok()) {
    const v1::Figure none =
        UndefinedFigure("no labelled records in the window");
    for (v1::Figure* f :
         {w->mutable_log_loss(), w->mutable_brier_score(), w->mutable_auc(),
          w->mutable_expected_calibration_error(),
          w->mutable_calibration_in_the_large(),
          w->mutable_calibration_intercept(), w->mutable_calibration_slope(),
          w->mutable_hosmer_lemeshow_statistic(),
          w->mutable_hosmer_lemeshow_p_value()}) {
      *f = none;
    }
    return;
  }
  w->set_positives(r->loss.positives);
  *w->mutable_log_loss() = DefinedFigure(r->loss.log_loss);
  *w->mutable_brier_score() = DefinedFigure(r->loss.brier_score);
  *w->mutable_calibration_in_the_large() =
      DefinedFigure(r->loss.calibration_in_the_large);
  *w->mutable_expected_calibration_error() =
      DefinedFigure(r->fixed_bins.expected_calibration_error);
  FillReliability(r->fixed_bins.table, w);
  if (r->grid.auc.ok()) {
    *w->mutable_auc() = DefinedFigure(r->grid.auc->auc);
    w->set_auc_grid_bound(r->grid.auc->quantisation_bound);
  } else {
    *w->mutable_auc() = UndefinedFigure(r->grid.auc.status().message());
  }
  if (r->grid.calibration.ok()) {
    *w->mutable_calibration_intercept() =
        DefinedFigure(r->grid.calibration->intercept);
    *w->mutable_calibration_slope() = DefinedFigure(r->grid.calibration->slope);
  } else {
    const absl::string_view why = r->grid.calibration.status().message();
    *w->mutable_calibration_intercept() = UndefinedFigure(why);
    *w->mutable_calibration_slope() = UndefinedFigure(why);
  }
  if (r->grid.hosmer_lemeshow.ok()) {
    *w->mutable_hosmer_lemeshow_statistic() =
        DefinedFigure(r->grid.hosmer_lemeshow->statistic);
    *w->mutable_hosmer_lemeshow_p_value() =
        DefinedFigure(r->grid.hosmer_lemeshow->p_value);
  } else {
    const absl::string_view why = r->grid.hosmer_lemeshow.status().message();
    *w->mutable_hosmer_lemeshow_statistic() = UndefinedFigure(why);
    *w->mutable_hosmer_lemeshow_p_value() = UndefinedFigure(why);
  }
}

}  // namespace

absl::StatusOr<HealthWindowOptions> HealthWindowOptions::FromConfig(
    const v1::WindowConfig& config) {
  HealthWindowOptions o;
  if (config.labelled_count() != 0) o.labelled_count = config.labelled_count();
  if (config.scored_count() != 0) o.scored_count = config.scored_count();
  if (config.time_seconds() != 0) {
    // Longer than ten years is taken as ten years: no window needs more and
    // absl::Seconds stays far from overflow.
    o.time_span = absl::Seconds(static_cast<int64_t>(
        std::min<uint64_t>(config.time_seconds(), uint64_t{10} * 366 * 86400)));
  }
  if (config.buckets() != 0) {
    if (config.buckets() > 100000) {
      return absl::InvalidArgumentError(absl::StrCat(
          "windows.buckets: ", config.buckets(), " is more than 100000"));
    }
    o.buckets = static_cast<int>(config.buckets());
  }
  if (o.labelled_count % o.buckets != 0) {
    return CountError("labelled_count", o.labelled_count, o.buckets);
  }
  if (o.scored_count % o.buckets != 0) {
    return CountError("scored_count", o.scored_count, o.buckets);
  }
  return o;
}

HealthWindows::HealthWindows(std::shared_ptr<const scorer::ScoringPlan> plan,
                             HealthWindowOptions options,
                             OutcomeCount labelled_count,
                             OutcomeTime labelled_time,
                             ScoredCount scored_count, ScoredTime scored_time)
    : plan_(std::move(plan)),
      options_(options),
      labelled_count_(std::move(labelled_count)),
      labelled_time_(std::move(labelled_time)),
      scored_count_(std::move(scored_count)),
      scored_time_(std::move(scored_time)) {}

absl::StatusOr<std::unique_ptr<HealthWindows>> HealthWindows::Create(
    std::shared_ptr<const scorer::ScoringPlan> plan,
    const HealthWindowOptions& options) {
  absl::StatusOr<monitor::OutcomeAccumulator> outcome =
      monitor::OutcomeAccumulator::Create({});
  if (!outcome.ok()) return outcome.status();
  auto labelled_count =
      OutcomeCount::Create(options.labelled_count, options.buckets, *outcome);
  if (!labelled_count.ok()) return labelled_count.status();
  auto labelled_time =
      OutcomeTime::Create(options.time_span, options.buckets, *outcome);
  if (!labelled_time.ok()) return labelled_time.status();
  const ScoredAccumulator scored(StabilityLayout::Create(*plan));
  auto scored_count =
      ScoredCount::Create(options.scored_count, options.buckets, scored);
  if (!scored_count.ok()) return scored_count.status();
  auto scored_time =
      ScoredTime::Create(options.time_span, options.buckets, scored);
  if (!scored_time.ok()) return scored_time.status();
  return std::unique_ptr<HealthWindows>(
      new HealthWindows(std::move(plan), options, *std::move(labelled_count),
                        *std::move(labelled_time), *std::move(scored_count),
                        *std::move(scored_time)));
}

void HealthWindows::AddScored(double log_odds,
                              absl::Span<const scorer::RawValue> values,
                              absl::Time scored_at, absl::Time now) {
  const double probability = Logistic(log_odds);
  const absl::Time at = Clamp(scored_at, now);
  absl::MutexLock lock(&scored_mu_);
  scored_count_.Add(probability, values).IgnoreError();  // Add cannot fail
  if (!scored_time_.Add(at, probability, values).ok()) {
    refused_[kScored][1].fetch_add(1, std::memory_order_relaxed);
  }
}

void HealthWindows::AddLabelled(double log_odds, int label,
                                absl::Time observed_at, absl::Time now) {
  const absl::Time at = Clamp(observed_at, now);
  absl::MutexLock lock(&labelled_mu_);
  ++labelled_since_start_;
  if (!labelled_count_.Add(log_odds, label).ok()) {
    refused_[kLabelled][0].fetch_add(1, std::memory_order_relaxed);
  }
  if (!labelled_time_.Add(at, log_odds, label).ok()) {
    refused_[kLabelled][1].fetch_add(1, std::memory_order_relaxed);
  }
}

void HealthWindows::AddScoredTo(WindowKind window, double log_odds,
                                absl::Span<const scorer::RawValue> values,
                                absl::Time at, absl::Time now) {
  const double probability = Logistic(log_odds);
  absl::MutexLock lock(&scored_mu_);
  const absl::Status s =
      window == WindowKind::kCount
          ? scored_count_.Add(probability, values)
          : scored_time_.Add(Clamp(at, now), probability, values);
  if (!s.ok()) {
    refused_[kScored][Index(window)].fetch_add(1, std::memory_order_relaxed);
  }
}

void HealthWindows::AddLabelledTo(WindowKind window, double log_odds, int label,
                                  absl::Time at, absl::Time now) {
  absl::MutexLock lock(&labelled_mu_);
  const absl::Status s =
      window == WindowKind::kCount
          ? labelled_count_.Add(log_odds, label)
          : labelled_time_.Add(Clamp(at, now), log_odds, label);
  if (!s.ok()) {
    refused_[kLabelled][Index(window)].fetch_add(1, std::memory_order_relaxed);
  }
}

absl::Time HealthWindows::TimeWindowStart(absl::Time now) const {
  const absl::Duration bucket = options_.time_span / options_.buckets;
  absl::Duration rem;
  int64_t last = absl::IDivDuration(now - absl::UnixEpoch(), bucket, &rem);
  if (rem < absl::ZeroDuration()) --last;
  return absl::UnixEpoch() + (last - options_.buckets + 1) * bucket;
}

v1::SetHealth HealthWindows::Figures(absl::Time now) const {
  std::optional<monitor::OutcomeAccumulator> outcome[2];
  int64_t labelled_since_start = 0;
  {
    absl::MutexLock lock(&labelled_mu_);
    outcome[0].emplace(labelled_count_.Merged());
    outcome[1].emplace(labelled_time_.Merged(now));
    labelled_since_start = labelled_since_start_;
  }
  std::optional<ScoredAccumulator> scored[2];
  {
    absl::MutexLock lock(&scored_mu_);
    scored[0].emplace(scored_count_.Merged());
    scored[1].emplace(scored_time_.Merged(now));
  }
  v1::SetHealth health;
  health.set_set(plan_->name());
  health.set_version(plan_->version());
  health.set_labelled_since_start(labelled_since_start);
  for (int i = 0; i < 2; ++i) {
    v1::WindowHealth* w = health.add_windows();
    if (i == 0) {
      w->set_window("count");
      w->set_span(absl::StrCat("last ", options_.labelled_count,
                               " labelled / last ", options_.scored_count,
                               " scored records"));
    } else {
      w->set_window("time");
      w->set_span(absl::StrCat("last ",
                               absl::ToInt64Seconds(options_.time_span), " s"));
    }
    FillOutcome(*outcome[i], w);
    scored[i]->Fill(w);
    w->set_refused_labelled(
        refused_[kLabelled][i].load(std::memory_order_relaxed));
    w->set_refused_scored(refused_[kScored][i].load(std::memory_order_relaxed));
  }
  return health;
}

}  // namespace plumbline::daemon
