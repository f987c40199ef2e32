// File: daemon/health/windows.cc
#include "daemon/health/windows.h"

#include <algorithm>
#include <cmath>
#include <optional>
#include <utility>

#include "absl/status/status.h"
#include "absl/strings/escaping.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "daemon/health/pictures.h"
#include "daemon/health/window_state.h"
#include "daemon/policy/figures.h"
#include "scorer/logistic.h"

namespace plumbline::daemon {
namespace {

constexpr int kLabelled = 0, kScored = 1;

// Bound of one window's record store or waiting records: half of
// monitor::LabelledRecordStore::kMaxCapacity, so a merged window (its
// buckets plus the empty start) always fits.
constexpr int64_t kMaxStoredRecords = 50'000'000;
constexpr uint64_t kMaxHorizonSeconds = uint64_t{10} * 366 * 86400;

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

// The horizon in effect: the set's, else the options'.
absl::Duration HorizonOf(const scorer::ScoringPlan& plan,
                         const HealthWindowOptions& options) {
  if (!plan.set().has_outcome_horizon_seconds()) return options.outcome_horizon;
  return absl::Seconds(static_cast<int64_t>(std::min<uint64_t>(
      plan.set().outcome_horizon_seconds(), kMaxHorizonSeconds)));
}

}  // namespace

absl::StatusOr<HealthWindowOptions> HealthWindowOptions::FromConfig(
    const v1::WindowConfig& config, const v1::DriftPolicy& policy) {
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
  // The count window's store holds labelled_count records (plus one
  // bucket's share for the merge's empty start).
  if (o.labelled_count > kMaxStoredRecords) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "windows.labelled_count: %d records is more than the %d the exact "
        "outcome figures can keep",
        o.labelled_count, kMaxStoredRecords));
  }
  if (policy.record_store_max_records() != 0) {
    if (policy.record_store_max_records() >
        static_cast<uint64_t>(kMaxStoredRecords)) {
      return absl::InvalidArgumentError(absl::StrFormat(
          "drift_policy.record_store_max_records: %d is more than %d",
          policy.record_store_max_records(), kMaxStoredRecords));
    }
    o.record_store_max_records =
        static_cast<int64_t>(policy.record_store_max_records());
  }
  if (o.record_store_max_records < o.buckets) {
    return absl::InvalidArgumentError(absl::StrFormat(
        "drift_policy.record_store_max_records: %d is fewer than one record "
        "per bucket (windows.buckets = %d)",
        o.record_store_max_records, o.buckets));
  }
  if (policy.outcome_horizon_seconds() != 0) {
    if (policy.outcome_horizon_seconds() > kMaxHorizonSeconds) {
      return absl::InvalidArgumentError(absl::StrFormat(
          "drift_policy.outcome_horizon_seconds: %d is more than ten years",
          policy.outcome_horizon_seconds()));
    }
    o.outcome_horizon =
        absl::Seconds(static_cast<int64_t>(policy.outcome_horizon_seconds()));
  }
  if (policy.max_immature_records() != 0) {
    if (policy.max_immature_records() >
        static_cast<uint64_t>(kMaxStoredRecords)) {
      return absl::InvalidArgumentError(absl::StrFormat(
          "drift_policy.max_immature_records: %d is more than %d",
          policy.max_immature_records(), kMaxStoredRecords));
    }
    o.max_immature_records =
        static_cast<int64_t>(policy.max_immature_records());
  }
  if (policy.alpha() != 0) {
    if (!(policy.alpha() > 0 && policy.alpha() < 1)) {
      return absl::InvalidArgumentError(absl::StrFormat(
          "drift_policy.alpha: must lie in (0, 1), got %g", policy.alpha()));
    }
    o.alpha = policy.alpha();
  }
  const v1::CusumPolicy& c = policy.cusum();
  o.cusum.enabled = !c.disabled();
  if (c.upper_odds_ratio() != 0)
    o.cusum.upper_odds_ratio = c.upper_odds_ratio();
  if (c.lower_odds_ratio() != 0)
    o.cusum.lower_odds_ratio = c.lower_odds_ratio();
  if (c.has_slope_alternative()) {
    o.cusum.slope_alternative = c.slope_alternative();
  }
  if (c.in_control_arl_records() != 0) {
    o.cusum.in_control_arl = c.in_control_arl_records();
  }
  if (absl::Status s = o.cusum.Check(); !s.ok()) return s;
  return o;
}

HealthWindows::HealthWindows(std::shared_ptr<const scorer::ScoringPlan> plan,
                             HealthWindowOptions options,
                             absl::Duration horizon, int layout_tests,
                             OutcomeCount labelled_count,
                             OutcomeTime labelled_time,
                             ScoredCount scored_count, ScoredTime scored_time,
                             OutcomeCoverage coverage)
    : plan_(std::move(plan)),
      options_(options),
      horizon_(horizon),
      layout_tests_(layout_tests),
      fingerprint_(Fingerprint(*plan_, options_)),
      labelled_count_(std::move(labelled_count)),
      labelled_time_(std::move(labelled_time)),
      charts_(options_.cusum),
      scored_count_(std::move(scored_count)),
      scored_time_(std::move(scored_time)),
      coverage_(std::move(coverage)) {}

absl::StatusOr<std::unique_ptr<HealthWindows>> HealthWindows::Create(
    std::shared_ptr<const scorer::ScoringPlan> plan,
    const HealthWindowOptions& options) {
  if (options.buckets < 1 || options.labelled_count % options.buckets != 0) {
    return CountError("labelled_count", options.labelled_count,
                      options.buckets);
  }
  absl::StatusOr<LabelledAccumulator> count_bucket =
      LabelledAccumulator::Create(options.labelled_count / options.buckets);
  if (!count_bucket.ok()) return count_bucket.status();
  absl::StatusOr<LabelledAccumulator> time_bucket = LabelledAccumulator::Create(
      std::max<int64_t>(1, options.record_store_max_records / options.buckets));
  if (!time_bucket.ok()) return time_bucket.status();
  auto labelled_count = OutcomeCount::Create(options.labelled_count,
                                             options.buckets, *count_bucket);
  if (!labelled_count.ok()) return labelled_count.status();
  auto labelled_time =
      OutcomeTime::Create(options.time_span, options.buckets, *time_bucket);
  if (!labelled_time.ok()) return labelled_time.status();
  const absl::Duration horizon = HorizonOf(*plan, options);
  absl::StatusOr<OutcomeCoverage> coverage =
      OutcomeCoverage::Create(horizon, options.time_span);
  if (!coverage.ok()) return coverage.status();
  std::shared_ptr<const StabilityLayout> layout =
      StabilityLayout::Create(*plan);
  const int tests = layout->Testable();
  const ScoredAccumulator scored(std::move(layout));
  auto scored_count =
      ScoredCount::Create(options.scored_count, options.buckets, scored);
  if (!scored_count.ok()) return scored_count.status();
  auto scored_time =
      ScoredTime::Create(options.time_span, options.buckets, scored);
  if (!scored_time.ok()) return scored_time.status();
  return std::unique_ptr<HealthWindows>(new HealthWindows(
      std::move(plan), options, horizon, tests, *std::move(labelled_count),
      *std::move(labelled_time), *std::move(scored_count),
      *std::move(scored_time), *std::move(coverage)));
}

void HealthWindows::AddScored(double log_odds,
                              absl::Span<const scorer::RawValue> values,
                              absl::Time scored_at, absl::Time now) {
  const double probability = Logistic(log_odds);
  const absl::Time at = Clamp(scored_at, now);
  {
    absl::MutexLock lock(&scored_mu_);
    scored_count_.Add(probability, values).IgnoreError();  // Add cannot fail
    if (!scored_time_.Add(at, probability, values).ok()) {
      refused_[kScored][1].fetch_add(1, std::memory_order_relaxed);
    }
  }
  absl::MutexLock lock(&coverage_mu_);
  coverage_.AddScored(at, now);
}

void HealthWindows::AddMatureToCount(double log_odds, int label) {
  if (!labelled_count_.Add(log_odds, label).ok()) {
    refused_[kLabelled][0].fetch_add(1, std::memory_order_relaxed);
    return;
  }
  charts_.Add(log_odds, label);
}

void HealthWindows::AddMatureToTime(double log_odds, int label,
                                    absl::Time scored_at,
                                    absl::Time observed_at, absl::Time now) {
  // Without a horizon the window is by outcome time; with one, by score
  // time (the cohorts).
  const absl::Time at = horizon_ == absl::ZeroDuration()
                            ? Clamp(observed_at, now)
                            : Clamp(scored_at, now);
  if (!labelled_time_.Add(at, log_odds, label).ok()) {
    refused_[kLabelled][1].fetch_add(1, std::memory_order_relaxed);
  }
}

void HealthWindows::Wait(double log_odds, int label, absl::Time scored_at) {
  // A record no window would take is refused by both now, as it would be
  // when it matured: the waiting records then hold only valid ones.
  if ((label != 0 && label != 1) || !std::isfinite(log_odds)) {
    refused_[kLabelled][0].fetch_add(1, std::memory_order_relaxed);
    refused_[kLabelled][1].fetch_add(1, std::memory_order_relaxed);
    return;
  }
  if (static_cast<int64_t>(waiting_.size()) >= options_.max_immature_records) {
    ++waiting_refused_;
    return;
  }
  waiting_.emplace(scored_at, Waiting{log_odds, label});
}

void HealthWindows::Mature(absl::Time now) {
  while (!waiting_.empty() && IsMature(waiting_.begin()->first, now)) {
    const auto& [scored_at, w] = *waiting_.begin();
    AddMatureToCount(w.log_odds, w.label);
    AddMatureToTime(w.log_odds, w.label, scored_at, scored_at, now);
    waiting_.erase(waiting_.begin());
  }
}

void HealthWindows::AddLabelled(double log_odds, int label,
                                absl::Time scored_at, absl::Time observed_at,
                                absl::Time now) {
  const absl::Time scored = Clamp(scored_at, now);
  {
    absl::MutexLock lock(&labelled_mu_);
    ++labelled_since_start_;
    if (horizon_ == absl::ZeroDuration() || IsMature(scored, now)) {
      AddMatureToCount(log_odds, label);
      AddMatureToTime(log_odds, label, scored, observed_at, now);
    } else {
      Wait(log_odds, label, scored);
    }
  }
  absl::MutexLock lock(&coverage_mu_);
  coverage_.AddLabelled(scored, now);
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
                                  absl::Time scored_at, absl::Time observed_at,
                                  absl::Time now) {
  const absl::Time scored = Clamp(scored_at, now);
  const bool mature = horizon_ == absl::ZeroDuration() || IsMature(scored, now);
  absl::MutexLock lock(&labelled_mu_);
  if (window == WindowKind::kCount) {
    if (mature) AddMatureToCount(log_odds, label);
  } else if (mature) {
    AddMatureToTime(log_odds, label, scored, observed_at, now);
  } else {
    Wait(log_odds, label, scored);
  }
}

void HealthWindows::AddCoverage(absl::Time scored_at, bool labelled,
                                absl::Time now) {
  absl::MutexLock lock(&coverage_mu_);
  if (labelled) {
    coverage_.AddLabelled(Clamp(scored_at, now), now);
  } else {
    coverage_.AddScored(Clamp(scored_at, now), now);
  }
}

std::string HealthWindows::Fingerprint(const scorer::ScoringPlan& plan,
                                       const HealthWindowOptions& options) {
  const HealthWindowOptions& o = options;
  const CusumOptions& c = o.cusum;
  // Doubles in %a: exact, so any change shows.
  return absl::StrFormat(
      "state=1\nset=%s\nversion=%s\nhorizon_ns=%d\nlabelled_count=%d\n"
      "scored_count=%d\ntime_span_ns=%d\nbuckets=%d\n"
      "record_store_max_records=%d\ndefault_horizon_ns=%d\n"
      "max_immature_records=%d\nalpha=%a\ncusum=%d %a %a %a %a %d\n"
      "features=%d\nlayout=%s",
      absl::CEscape(plan.name()), absl::CEscape(plan.version()),
      absl::ToInt64Nanoseconds(HorizonOf(plan, o)), o.labelled_count,
      o.scored_count, absl::ToInt64Nanoseconds(o.time_span), o.buckets,
      o.record_store_max_records, absl::ToInt64Nanoseconds(o.outcome_horizon),
      o.max_immature_records, o.alpha, c.enabled ? 1 : 0, c.upper_odds_ratio,
      c.lower_odds_ratio, c.slope_alternative, c.in_control_arl,
      c.lattice_states, plan.set().features_size(),
      LayoutHash(*StabilityLayout::Create(plan)));
}

bool HealthWindows::NeedsCusumLimits() const {
  absl::MutexLock lock(&labelled_mu_);
  return charts_.needs_limits();
}

void HealthWindows::SetCusumLimits(std::vector<CusumLimit> limits) {
  absl::MutexLock lock(&labelled_mu_);
  charts_.SetLimits(std::move(limits));
}

absl::Time HealthWindows::TimeWindowStart(absl::Time now) const {
  const absl::Duration bucket = options_.time_span / options_.buckets;
  absl::Duration rem;
  int64_t last = absl::IDivDuration(now - absl::UnixEpoch(), bucket, &rem);
  if (rem < absl::ZeroDuration()) --last;
  return absl::UnixEpoch() + (last - options_.buckets + 1) * bucket;
}

absl::Time HealthWindows::LabelledReadStart(absl::Time now) const {
  // With a horizon the window ends at now - H and is by score time; an
  // outcome is observed after its score, so reading by outcome time from
  // the window's start finds every record of it and every waiting one.
  return TimeWindowStart(now - horizon_);
}

absl::Time HealthWindows::CoverageStart(absl::Time now) const {
  absl::MutexLock lock(&coverage_mu_);
  return coverage_.Start(now);
}

v1::SetHealth HealthWindows::Figures(absl::Time now) {
  std::optional<LabelledAccumulator> outcome[2];
  int64_t labelled_since_start = 0;
  v1::SetHealth health;
  {
    absl::MutexLock lock(&labelled_mu_);
    Mature(now);
    outcome[0].emplace(labelled_count_.Merged());
    outcome[1].emplace(labelled_time_.Merged(now - horizon_));
    labelled_since_start = labelled_since_start_;
    charts_.Fill(&health);
    health.set_immature_labelled(static_cast<int64_t>(waiting_.size()));
    health.set_immature_refused(waiting_refused_);
  }
  std::optional<ScoredAccumulator> scored[2];
  {
    absl::MutexLock lock(&scored_mu_);
    scored[0].emplace(scored_count_.Merged());
    scored[1].emplace(scored_time_.Merged(now));
  }
  {
    absl::MutexLock lock(&coverage_mu_);
    coverage_.Fill(now, &health);
  }
  const int tests = stability_tests();
  const double test_alpha = tests > 0 ? options_.alpha / tests : options_.alpha;
  health.set_set(plan_->name());
  health.set_version(plan_->version());
  health.set_labelled_since_start(labelled_since_start);
  health.set_outcome_horizon_seconds(absl::ToInt64Seconds(horizon_));
  health.set_stability_tests(tests);
  health.set_stability_test_alpha(test_alpha);
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
      if (horizon_ > absl::ZeroDuration()) {
        absl::StrAppend(w->mutable_span(), " (labelled: cohorts scored in the ",
                        absl::ToInt64Seconds(options_.time_span),
                        " s before the outcome horizon, ",
                        absl::ToInt64Seconds(horizon_), " s ago)");
      }
    }
    FillOutcome(*outcome[i], w);
    scored[i]->Fill(w, test_alpha);
    w->set_refused_labelled(
        refused_[kLabelled][i].load(std::memory_order_relaxed));
    w->set_refused_scored(refused_[kScored][i].load(std::memory_order_relaxed));
  }
  return health;
}

}  // namespace plumbline::daemon
