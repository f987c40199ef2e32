// File: daemon/health/coverage.cc
#include "daemon/health/coverage.h"

#include <algorithm>

#include "absl/status/status.h"
#include "absl/strings/str_cat.h"
#include "daemon/policy/figures.h"

namespace plumbline::daemon {

absl::StatusOr<OutcomeCoverage> OutcomeCoverage::Create(
    absl::Duration horizon, absl::Duration span_without_horizon) {
  if (horizon < absl::ZeroDuration() || horizon == absl::InfiniteDuration()) {
    return absl::InvalidArgumentError(
        absl::StrCat("outcome horizon ", absl::FormatDuration(horizon),
                     " must be finite and >= 0"));
  }
  const absl::Duration span =
      horizon > absl::ZeroDuration() ? 2 * horizon : span_without_horizon;
  if (span == absl::InfiniteDuration() || span < absl::Microseconds(kBuckets)) {
    return absl::InvalidArgumentError(
        absl::StrCat("outcome coverage span ", absl::FormatDuration(span),
                     " must be finite and at least ", kBuckets, " us"));
  }
  return OutcomeCoverage(horizon,
                         absl::Trunc(span / kBuckets, absl::Microseconds(1)));
}

int64_t OutcomeCoverage::BucketOf(absl::Time t) const {
  absl::Duration rem;
  int64_t q = absl::IDivDuration(t - absl::UnixEpoch(), bucket_, &rem);
  if (rem < absl::ZeroDuration()) --q;
  return q;
}

absl::Time OutcomeCoverage::Start(absl::Time now) const {
  return absl::UnixEpoch() + (BucketOf(now) - kSlots + 1) * bucket_;
}

int OutcomeCoverage::Slot(absl::Time t, absl::Time now) {
  if (t == absl::InfinitePast() || t == absl::InfiniteFuture()) return -1;
  const int64_t current = BucketOf(now);
  const int64_t b = std::min(BucketOf(t), current);  // future counts as now
  if (b <= current - kSlots) return -1;
  const int slot = static_cast<int>(((b % kSlots) + kSlots) % kSlots);
  if (ring_[static_cast<size_t>(slot)].bucket != b) {
    ring_[static_cast<size_t>(slot)] = Cohort{b, 0, 0};
  }
  return slot;
}

void OutcomeCoverage::AddScored(absl::Time scored_at, absl::Time now) {
  if (int s = Slot(scored_at, now); s >= 0) {
    ++ring_[static_cast<size_t>(s)].scored;
  }
}

void OutcomeCoverage::AddLabelled(absl::Time scored_at, absl::Time now) {
  if (int s = Slot(scored_at, now); s >= 0) {
    ++ring_[static_cast<size_t>(s)].labelled;
  }
}

void OutcomeCoverage::Fill(absl::Time now, v1::SetHealth* out) const {
  const int64_t current = BucketOf(now);
  constexpr int kPerBand = kBuckets / kBands;
  for (int band = 0; band < kBands; ++band) {
    int64_t scored = 0, labelled = 0;
    bool mature = true;
    // Band 0: current - 5 .. current; band j: the 5 buckets before band
    // j - 1's oldest.
    const int64_t newest = band == 0 ? current : current - band * kPerBand - 1;
    const int64_t oldest = current - (band + 1) * kPerBand;
    for (int64_t b = newest; b >= oldest; --b) {
      const int slot = static_cast<int>(((b % kSlots) + kSlots) % kSlots);
      const Cohort& c = ring_[static_cast<size_t>(slot)];
      // The bucket ends at (b + 1) * bucket_: mature once that is a
      // horizon ago.
      if (horizon_ > absl::ZeroDuration() &&
          absl::UnixEpoch() + (b + 1) * bucket_ > now - horizon_) {
        mature = false;
      }
      if (c.bucket != b) continue;
      scored += c.scored;
      labelled += c.labelled;
    }
    v1::AgeCoverage* a = out->add_outcome_coverage();
    a->set_min_age_seconds(absl::ToInt64Seconds(bucket_ * (band * kPerBand)));
    a->set_max_age_seconds(
        absl::ToInt64Seconds(bucket_ * ((band + 1) * kPerBand)));
    a->set_scored(scored);
    a->set_labelled(labelled);
    *a->mutable_coverage() =
        scored > 0 ? DefinedFigure(static_cast<double>(labelled) /
                                   static_cast<double>(scored))
                   : UndefinedFigure("no record scored at this age");
    a->set_mature(mature);
  }
}

absl::Status OutcomeCoverage::Restore(const std::array<Cohort, kSlots>& ring) {
  constexpr int64_t kMaxNumber = int64_t{1} << 53;
  constexpr int64_t kMaxCount = int64_t{1} << 40;
  for (int s = 0; s < kSlots; ++s) {
    const Cohort& c = ring[static_cast<size_t>(s)];
    const bool used = c.bucket != INT64_MIN;
    if (!used) {
      if (c.scored != 0 || c.labelled != 0) {
        return absl::InvalidArgumentError(absl::StrCat(
            "coverage state: slot ", s, " has no bucket but counts ", c.scored,
            " scored and ", c.labelled, " labelled records"));
      }
      continue;
    }
    if (c.bucket < -kMaxNumber || c.bucket > kMaxNumber ||
        ((c.bucket % kSlots) + kSlots) % kSlots != s) {
      return absl::InvalidArgumentError(
          absl::StrCat("coverage state: slot ", s, " holds bucket number ",
                       c.bucket, ", which does not belong there"));
    }
    if (c.scored < 0 || c.scored > kMaxCount || c.labelled < 0 ||
        c.labelled > kMaxCount || (c.scored == 0 && c.labelled == 0)) {
      return absl::InvalidArgumentError(absl::StrCat(
          "coverage state: slot ", s, " counts ", c.scored, " scored and ",
          c.labelled,
          " labelled records; each must lie in [0, 2^40], not both 0"));
    }
  }
  ring_ = ring;
  return absl::OkStatus();
}

}  // namespace plumbline::daemon
