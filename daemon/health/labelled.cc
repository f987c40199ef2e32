// File: daemon/health/labelled.cc
#include "daemon/health/labelled.h"

#include <string>
#include <utility>

#include "absl/strings/str_cat.h"
#include "daemon/health/pictures.h"
#include "daemon/policy/figures.h"

namespace plumbline::daemon {

absl::StatusOr<LabelledAccumulator> LabelledAccumulator::Create(
    int64_t store_capacity) {
  absl::StatusOr<monitor::OutcomeAccumulator> streaming =
      monitor::OutcomeAccumulator::Create({});
  if (!streaming.ok()) return streaming.status();
  absl::StatusOr<monitor::LabelledRecordStore> store =
      monitor::LabelledRecordStore::Create(store_capacity);
  if (!store.ok()) return store.status();
  return LabelledAccumulator(*std::move(streaming), *std::move(store));
}

absl::Status LabelledAccumulator::Add(double log_odds, int label) {
  if (absl::Status s = streaming_.Add(log_odds, label); !s.ok()) return s;
  // RESOURCE_EXHAUSTED is counted in store_.refused(); the record was
  // validated above, so no other error is possible.
  store_.Add(log_odds, label).IgnoreError();
  return absl::OkStatus();
}

absl::Status LabelledAccumulator::Merge(const LabelledAccumulator& other) {
  if (absl::Status s = streaming_.Merge(other.streaming_); !s.ok()) return s;
  return store_.Merge(other.store_);
}

absl::Status LabelledAccumulator::Restore(
    monitor::OutcomeAccumulator::State streaming,
    monitor::LabelledRecordStore::State store) {
  monitor::OutcomeAccumulator new_streaming = streaming_;
  monitor::LabelledRecordStore new_store = store_;
  if (absl::Status s = new_streaming.Restore(std::move(streaming)); !s.ok()) {
    return s;
  }
  if (absl::Status s = new_store.Restore(std::move(store)); !s.ok()) return s;
  if (new_store.size() + new_store.refused() != new_streaming.count()) {
    return absl::InvalidArgumentError(absl::StrCat(
        "labelled bucket state: the store keeps ", new_store.size(),
        " records and refused ", new_store.refused(),
        ", but the streaming figures count ", new_streaming.count()));
  }
  streaming_ = std::move(new_streaming);
  store_ = std::move(new_store);
  return absl::OkStatus();
}

void FillOutcome(const LabelledAccumulator& acc, v1::WindowHealth* w) {
  w->set_labelled(acc.count());
  absl::StatusOr<monitor::OutcomeFigures> r = acc.streaming().Result();
  if (!r.ok()) {
    const v1::Figure none =
        UndefinedFigure("no labelled records in the window");
    for (v1::Figure* f :
         {w->mutable_log_loss(), w->mutable_brier_score(), w->mutable_auc(),
          w->mutable_expected_calibration_error(),
          w->mutable_mean_predicted_minus_observed(),
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
  *w->mutable_mean_predicted_minus_observed() =
      DefinedFigure(r->loss.calibration_in_the_large);
  *w->mutable_expected_calibration_error() =
      DefinedFigure(r->fixed_bins.expected_calibration_error);
  FillReliability(r->fixed_bins.table, w);

  const monitor::LabelledRecordStore& store = acc.store();
  w->set_exact_records(store.size());
  w->set_unstored_labelled(store.refused());
  // Over a subset when the store was full: said beside every exact figure.
  std::string caveat;
  if (store.refused() > 0) {
    caveat = absl::StrCat("over the first ", store.size(), " of ", acc.count(),
                          " labelled records (the earliest of each bucket): "
                          "the record store's bound");
  }
  auto defined = [&](double value) {
    v1::Figure f = DefinedFigure(value);
    f.set_note(caveat);
    return f;
  };
  absl::StatusOr<monitor::ExactOutcomeFigures> exact = store.Result();
  if (!exact.ok()) {
    const absl::string_view why = exact.status().message();
    for (v1::Figure* f : {w->mutable_auc(), w->mutable_calibration_intercept(),
                          w->mutable_calibration_slope(),
                          w->mutable_hosmer_lemeshow_statistic(),
                          w->mutable_hosmer_lemeshow_p_value()}) {
      *f = UndefinedFigure(why);
    }
    return;
  }
  *w->mutable_auc() = exact->auc.ok()
                          ? defined(*exact->auc)
                          : UndefinedFigure(exact->auc.status().message());
  *w->mutable_calibration_intercept() =
      exact->calibration_intercept.ok()
          ? defined(exact->calibration_intercept->intercept)
          : UndefinedFigure(exact->calibration_intercept.status().message());
  *w->mutable_calibration_slope() =
      exact->calibration_slope.ok()
          ? defined(exact->calibration_slope->slope)
          : UndefinedFigure(exact->calibration_slope.status().message());
  if (exact->hosmer_lemeshow.ok()) {
    *w->mutable_hosmer_lemeshow_statistic() =
        defined(exact->hosmer_lemeshow->statistic);
    *w->mutable_hosmer_lemeshow_p_value() =
        defined(exact->hosmer_lemeshow->p_value);
  } else {
    const absl::string_view why = exact->hosmer_lemeshow.status().message();
    *w->mutable_hosmer_lemeshow_statistic() = UndefinedFigure(why);
    *w->mutable_hosmer_lemeshow_p_value() = UndefinedFigure(why);
  }
}

}  // namespace plumbline::daemon
