// File: daemon/refit/job.cc
#include "daemon/refit/job.h"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <deque>
#include <utility>
#include <vector>

#include "absl/container/flat_hash_set.h"
#include "absl/status/status.h"
#include "absl/strings/match.h"
#include "absl/strings/numbers.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "absl/strings/str_join.h"
#include "daemon/registry/compatibility.h"
#include "daemon/review/dossier_data.h"
#include "daemon/review/dossier_html.h"
#include "daemon/review/version_view.h"
#include "daemon/scoring/packed_row.h"
#include "daemon/util/event_log.h"
#include "daemon/util/time.h"
#include "monitor/paired_comparison.h"
#include "monitor/updating_ladder.h"
#include "scorer/coefficient_set.h"
#include "scorer/design_matrix.h"
#include "scorer/design_set.h"
#include "scorer/fit.h"
#include "scorer/logistic.h"

namespace plumbline::daemon {
namespace {

// Audit actor and created_by of a job: "refit job N (kind[, actor])".
constexpr char kJobActorPrefix[] = "refit job ";

// One labelled record as the job reads it. Text values view into the
// arena of RefitRows.
struct LabelledRecord {
  std::string record_id;
  std::vector<scorer::RawValue> values;
  int label = 0;
  absl::Time scored_at;
  absl::Time observed_at;
};

// The labelled records a job works on, and how they were chosen.
struct RefitRows {
  std::deque<std::string> arena;
  std::vector<std::vector<scorer::RawValue>> train, holdout;
  std::vector<int> train_labels, holdout_labels;
  int64_t unusable = 0;  // rows whose stored features the set cannot read
  int64_t read = 0;      // usable labelled records read from the ledger
  absl::Time first_observed = absl::InfiniteFuture();
  absl::Time last_observed = absl::InfinitePast();
  // Score times of the fitted and the held-out records.
  absl::Time train_from = absl::InfiniteFuture(),
             train_to = absl::InfinitePast();
  absl::Time holdout_from = absl::InfiniteFuture(),
             holdout_to = absl::InfinitePast();
  // How the records were chosen and split, for people.
  std::string selection;
  std::string split;
};

std::string Utc(absl::Time t) {
  return absl::FormatTime("%Y-%m-%dT%H:%M:%SZ", t, absl::UTCTimeZone());
}

// Step 1 and 2 of job.h: reads, chooses by time and count, splits.
absl::Status LoadRows(Ledger& ledger, const scorer::ScoringPlan& plan,
                      const RefitSettings& settings,
                      const RefitTrigger& trigger, RefitRows& rows) {
  absl::flat_hash_set<std::string> seen;
  StoredFeatureReader reader;
  std::vector<scorer::RawValue> values;
  std::vector<LabelledRecord> all;
  // Shadow scores share record ids with active ones, and the ledger hands
  // rows out by outcome time: ask for more rows than needed, keep the
  // active role's, then rank them by score time.
  absl::Status read = ledger.ForEachLabelled(
      plan.name(), settings.window_labelled * 4, absl::InfinitePast(),
      [&](const LabelledScore& l) {
        if (l.role != ScoreRole::kActive || !seen.insert(l.record_id).second) {
          return;
        }
        if (!reader.Read(plan, l.layout.get(), l.features, &values).ok()) {
          ++rows.unusable;
          return;
        }
        for (scorer::RawValue& v : values) {
          if (v.kind == scorer::RawValue::Kind::kText) {
            v.text = rows.arena.emplace_back(v.text);
          }
        }
        all.push_back(
            {l.record_id, values, l.label, l.scored_at, l.observed_at});
      });
  if (!read.ok()) return read;
  rows.read = static_cast<int64_t>(all.size());
  // Oldest first by score time; equal times by record id (bytes), an order
  // a reader of the ledger can repeat (tests/daemon/refit/lifecycle_check.py).
  std::sort(all.begin(), all.end(),
            [](const LabelledRecord& a, const LabelledRecord& b) {
              return a.scored_at != b.scored_at ? a.scored_at < b.scored_at
                                                : a.record_id < b.record_id;
            });
  const int64_t total = static_cast<int64_t>(all.size());
  int64_t take = std::min(total, settings.window_labelled);
  if (settings.training_window == v1::RefitPolicy::SINCE_DRIFT_ONSET &&
      trigger.drift_onset.has_value()) {
    const absl::Time onset = *trigger.drift_onset;
    const int64_t since = static_cast<int64_t>(
        all.end() - std::lower_bound(all.begin(), all.end(), onset,
                                     [](const LabelledRecord& r, absl::Time t) {
                                       return r.scored_at < t;
                                     }));
    if (since >= settings.min_labelled) {
      take = std::min(since, settings.window_labelled);
      rows.selection = absl::StrCat(
          "since the drift onset ", Utc(onset), ": ", since,
          " labelled records scored since",
          since > take ? absl::StrCat(", the most recent ", take,
                                      " taken (refit.window_labelled)")
                       : std::string(),
          " (of ", total, " read)");
    } else {
      take = std::min(total, settings.min_labelled);
      rows.selection = absl::StrCat(
          "since the drift onset ", Utc(onset), ": only ", since,
          " labelled records scored since, fewer than refit.min_labelled ",
          settings.min_labelled, ", so extended back to the ", take,
          " most recent (", take - since, " from before the onset; of ", total,
          " read)");
    }
  } else {
    rows.selection = absl::StrCat(
        "the most recent ", take, " labelled records by score time",
        take < total ? absl::StrCat(" (of ", total, " read)") : std::string(),
        trigger.kind == RefitTriggerKind::kDrift &&
                settings.training_window == v1::RefitPolicy::SINCE_DRIFT_ONSET
            ? " (no drift onset was recorded)"
            : "");
  }
  const int64_t first = total - take;
  int64_t holdout_from_index = total;  // OUT_OF_TIME: [this, total)
  if (settings.holdout == v1::RefitPolicy::OUT_OF_TIME) {
    const int64_t k = static_cast<int64_t>(std::floor(
        static_cast<double>(take) * settings.holdout_fraction + 0.5));
    holdout_from_index = total - k;
    rows.split =
        absl::StrCat("out of time: the latest ", k, " by score time held out");
  } else {
    rows.split = "random by record id (FNV-1a 64 + fmix64)";
  }
  for (int64_t i = first; i < total; ++i) {
    LabelledRecord& r = all[static_cast<size_t>(i)];
    rows.first_observed = std::min(rows.first_observed, r.observed_at);
    rows.last_observed = std::max(rows.last_observed, r.observed_at);
    const bool held = settings.holdout == v1::RefitPolicy::OUT_OF_TIME
                          ? i >= holdout_from_index
                          : InHoldout(r.record_id, settings.holdout_fraction);
    if (held) {
      rows.holdout.push_back(std::move(r.values));
      rows.holdout_labels.push_back(r.label);
      rows.holdout_from = std::min(rows.holdout_from, r.scored_at);
      rows.holdout_to = std::max(rows.holdout_to, r.scored_at);
    } else {
      rows.train.push_back(std::move(r.values));
      rows.train_labels.push_back(r.label);
      rows.train_from = std::min(rows.train_from, r.scored_at);
      rows.train_to = std::max(rows.train_to, r.scored_at);
    }
  }
  return absl::OkStatus();
}

// The active version's features, to be learned again from new data.
std::vector<scorer::FeatureSpec> SpecsFrom(const v1::CoefficientSet& set) {
  std::vector<scorer::FeatureSpec> specs;
  for (const v1::Feature& f : set.features()) {
    scorer::FeatureSpec spec;
    spec.name = f.name();
    spec.missing = f.missing().kind();
    switch (f.transform_case()) {
      case v1::Feature::kCategorical:
        spec.kind = scorer::FeatureKind::kCategorical;
        spec.unseen = f.categorical().unseen();
        // The serving version's level order: dense codes keep their
        // meaning across the refit (daemon/registry/compatibility.h).
        for (const auto& level : f.categorical().levels()) {
          spec.known_levels.push_back(level.value());
        }
        break;
      case v1::Feature::kBinned:
        spec.kind = scorer::FeatureKind::kBinned;
        spec.bins = f.binned().edges_size() + 1;
        break;
      default:
        spec.kind = scorer::FeatureKind::kNumeric;
        spec.standardize =
            f.numeric().center() != 0 || f.numeric().scale() != 1;
        break;
    }
    specs.push_back(std::move(spec));
  }
  return specs;
}

// Log-odds of `records` under `plan`; records it cannot score are marked
// in `ok` (0) and get 0.
std::vector<double> ScoreAll(
    const scorer::ScoringPlan& plan,
    const std::vector<std::vector<scorer::RawValue>>& records,
    std::vector<uint8_t>& ok) {
  std::vector<double> out(records.size(), 0.0);
  for (size_t i = 0; i < records.size(); ++i) {
    absl::StatusOr<scorer::ScoreResult> r = plan.Score(records[i], {});
    if (r.ok()) {
      out[i] = r->log_odds;
    } else {
      ok[i] = 0;
    }
  }
  return out;
}

std::string Window(const RefitRows& rows) {
  return absl::StrCat(
      rows.train.size() + rows.holdout.size(), " labelled records, ",
      rows.selection, "; observed ", Utc(rows.first_observed), " to ",
      Utc(rows.last_observed), "; ", rows.train.size(), " fit (scored ",
      Utc(rows.train_from), " to ", Utc(rows.train_to), "), ",
      rows.holdout.size(), " held out (", rows.split, "; scored ",
      Utc(rows.holdout_from), " to ", Utc(rows.holdout_to), ")",
      rows.unusable > 0 ? absl::StrCat("; ", rows.unusable, " unreadable")
                        : std::string());
}

// The ladder as one line of text: the audit row, the summary.
std::string LadderText(const v1::RefitLadder& ladder) {
  std::string out = absl::StrFormat(
      "updating ladder on %d training records (closed testing, alpha %g): "
      "active ll %.6f",
      ladder.training_records(), ladder.alpha(),
      ladder.active_log_likelihood());
  for (const v1::RefitLadder::Rung& r : ladder.rungs()) {
    if (!r.fitted()) {
      absl::StrAppend(&out, "; rung ", r.rung(), " ", r.name(),
                      ": not fitted (", r.note(), ")");
      continue;
    }
    absl::StrAppend(
        &out, absl::StrFormat("; rung %d %s: ll %.6f, df %g, LR %.4f, p %.4g",
                              r.rung(), r.name(), r.log_likelihood(), r.df(),
                              r.lr_statistic(), r.p_value()));
    if (r.rung() == 3 && !r.note().empty()) {
      absl::StrAppend(&out, " (", r.note(), ")");
    }
  }
  for (const v1::RefitLadder::Step& s : ladder.steps()) {
    absl::StrAppend(
        &out, absl::StrFormat(
                  "; test rung %d vs %s: LR %.4f, df %g, p %.4g%s", s.rung(),
                  s.against() == 0 ? std::string("active")
                                   : absl::StrCat("rung ", s.against()),
                  s.lr_statistic(), s.df(), s.p_value(),
                  s.significant() ? " (significant)" : ""));
  }
  absl::StrAppend(&out, "; chose rung ", ladder.chosen(), ": ",
                  ladder.reason());
  return out;
}

// A rung 1-3 update of the active set: its transforms kept, coefficients
// changed as the rung says.
struct UpdatedSet {
  int rung = 0;
  double intercept_shift = 0;                        // rungs 1, 2
  double slope = 1;                                  // rung 2
  const monitor::RidgeTowardPrior* ridge = nullptr;  // rung 3
  std::string method;
};

// Writes `beta` (the serving encoding's order: each feature's transform
// columns, then its missing indicator; scorer/scoring_plan.h) into `set`.
void SetEncodedCoefficients(const Eigen::VectorXd& beta,
                            v1::CoefficientSet& set) {
  Eigen::Index j = 0;
  for (v1::Feature& f : *set.mutable_features()) {
    switch (f.transform_case()) {
      case v1::Feature::kNumeric:
        f.mutable_numeric()->set_coefficient(beta[j++]);
        break;
      case v1::Feature::kCategorical:
        for (auto& level : *f.mutable_categorical()->mutable_levels()) {
          level.set_coefficient(beta[j++]);
        }
        break;
      case v1::Feature::kBinned:
        for (double& c : *f.mutable_binned()->mutable_coefficients()) {
          c = beta[j++];
        }
        break;
      case v1::Feature::TRANSFORM_NOT_SET:
        break;
    }
    if (f.missing().kind() == v1::MissingRule::INDICATOR) {
      f.mutable_missing()->set_indicator_coefficient(beta[j++]);
    }
  }
}

// Every coefficient of `set` times `slope` (rung 2).
void ScaleCoefficients(double slope, v1::CoefficientSet& set) {
  for (v1::Feature& f : *set.mutable_features()) {
    switch (f.transform_case()) {
      case v1::Feature::kNumeric:
        f.mutable_numeric()->set_coefficient(slope * f.numeric().coefficient());
        break;
      case v1::Feature::kCategorical:
        for (auto& level : *f.mutable_categorical()->mutable_levels()) {
          level.set_coefficient(slope * level.coefficient());
        }
        break;
      case v1::Feature::kBinned:
        for (double& c : *f.mutable_binned()->mutable_coefficients()) {
          c *= slope;
        }
        break;
      case v1::Feature::TRANSFORM_NOT_SET:
        break;
    }
    if (f.missing().kind() == v1::MissingRule::INDICATOR) {
      f.mutable_missing()->set_indicator_coefficient(
          slope * f.missing().indicator_coefficient());
    }
  }
}

// The candidate of rungs 1-3: the active set with new coefficients (rung 1:
// only the intercept changes, every other number stays bit for bit), fresh
// baselines (features: those `layout` learned from the training part, when
// it could; score: deciles of the new fitted probabilities) and provenance.
absl::StatusOr<v1::CoefficientSet> UpdateActiveSet(
    const scorer::ScoringPlan& active, const UpdatedSet& update,
    const scorer::DesignLayout* layout, const monitor::LadderMatrix& x,
    const std::vector<int>& labels, const std::vector<double>& active_z,
    const scorer::SetDescription& description) {
  v1::CoefficientSet set = active.set();
  set.set_name(description.name);
  set.set_version(description.version);
  set.set_description(description.description);
  std::vector<double> z(active_z.size());
  if (update.rung == 1) {
    set.set_intercept(active.intercept() + update.intercept_shift);
    for (size_t i = 0; i < z.size(); ++i) {
      z[i] = update.intercept_shift + active_z[i];
    }
  } else if (update.rung == 2) {
    set.set_intercept(update.intercept_shift +
                      update.slope * active.intercept());
    ScaleCoefficients(update.slope, set);
    for (size_t i = 0; i < z.size(); ++i) {
      z[i] = update.intercept_shift + update.slope * active_z[i];
    }
  } else {
    set.set_intercept(update.ridge->intercept);
    SetEncodedCoefficients(update.ridge->coefficients, set);
    const Eigen::VectorXd fitted =
        (x * update.ridge->coefficients).array() + update.ridge->intercept;
    for (size_t i = 0; i < z.size(); ++i) {
      z[i] = fitted[static_cast<Eigen::Index>(i)];
    }
  }
  if (layout != nullptr) {
    const v1::CoefficientSet& fresh = layout->skeleton();
    for (int i = 0; i < set.features_size() && i < fresh.features_size(); ++i) {
      if (fresh.features(i).name() == set.features(i).name()) {
        *set.mutable_features(i)->mutable_baseline() =
            fresh.features(i).baseline();
      }
    }
  }
  std::vector<double> probabilities(z.size());
  double ll = 0;
  for (size_t i = 0; i < z.size(); ++i) {
    probabilities[i] = plumbline::Logistic(z[i]);
    ll += labels[i] == 1 ? plumbline::LogLogistic(z[i])
                         : plumbline::LogLogistic(-z[i]);
  }
  *set.mutable_score_baseline() =
      scorer::QuantileDistribution(std::move(probabilities), 10, 0);
  v1::Provenance* p = set.mutable_provenance();
  *p->mutable_created_at() = ToTimestamp(description.created_at);
  p->set_created_by(description.created_by);
  p->set_method(update.method);
  p->set_training_data(description.training_data);
  p->set_training_rows(static_cast<int64_t>(z.size()));
  p->set_training_log_likelihood(ll);
  p->set_training_log_loss(-ll / static_cast<double>(z.size()));
  p->set_notes(absl::StrCat(
      "Rung ", update.rung,
      " of the updating ladder: transforms and levels "
      "of version ",
      active.version(), " kept",
      layout == nullptr ? "; feature baselines kept from it (the training "
                          "part's could not be learned)"
                        : "; feature baselines from the training part"));
  if (absl::Status s = scorer::ValidateCoefficientSet(set, "updated set");
      !s.ok()) {
    return s;
  }
  return set;
}

}  // namespace

absl::string_view RefitTriggerName(RefitTriggerKind kind) {
  switch (kind) {
    case RefitTriggerKind::kDrift:
      return "drift";
    case RefitTriggerKind::kSchedule:
      return "schedule";
    case RefitTriggerKind::kManual:
      break;
  }
  return "manual";
}

absl::StatusOr<RefitSettings> RefitSettingsFrom(const v1::RefitPolicy& p) {
  RefitSettings s;
  s.mode = p.mode();
  s.schedule = absl::Seconds(static_cast<int64_t>(p.schedule_seconds()));
  if (p.cooldown_seconds() > 0) {
    s.cooldown = absl::Seconds(static_cast<int64_t>(p.cooldown_seconds()));
  }
  if (p.min_labelled() > 0) s.min_labelled = p.min_labelled();
  if (p.window_labelled() > 0) s.window_labelled = p.window_labelled();
  if (p.holdout_fraction() != 0) s.holdout_fraction = p.holdout_fraction();
  if (p.margin() != 0) s.margin = p.margin();
  s.l2 = p.l2();
  s.min_new_labelled = p.min_new_labelled();
  s.holdout = p.holdout();
  s.training_window = p.training_window();
  if (p.ladder_alpha() != 0) s.ladder_alpha = p.ladder_alpha();
  if (!v1::RefitPolicy::Holdout_IsValid(s.holdout)) {
    return absl::InvalidArgumentError(
        absl::StrCat("refit.holdout: ", static_cast<int>(s.holdout),
                     " is not OUT_OF_TIME or RANDOM_BY_ID"));
  }
  if (!v1::RefitPolicy::TrainingWindow_IsValid(s.training_window)) {
    return absl::InvalidArgumentError(absl::StrCat(
        "refit.training_window: ", static_cast<int>(s.training_window),
        " is not SINCE_DRIFT_ONSET or MOST_RECENT"));
  }
  if (!(s.ladder_alpha > 0 && s.ladder_alpha < 1)) {
    return absl::InvalidArgumentError(
        absl::StrCat("refit.ladder_alpha: ", s.ladder_alpha,
                     " is not between 0 and 1 (exclusive)"));
  }
  if (!(s.holdout_fraction > 0 && s.holdout_fraction < 1)) {
    return absl::InvalidArgumentError(
        absl::StrCat("refit.holdout_fraction: ", s.holdout_fraction,
                     " is not between 0 and 1 (exclusive)"));
  }
  if (!(s.margin >= 0) || !std::isfinite(s.margin)) {
    return absl::InvalidArgumentError(
        absl::StrCat("refit.margin: ", s.margin, " must be >= 0"));
  }
  if (!(s.l2 >= 0) || !std::isfinite(s.l2)) {
    return absl::InvalidArgumentError(
        absl::StrCat("refit.l2: ", s.l2, " must be >= 0"));
  }
  if (s.window_labelled < s.min_labelled) {
    return absl::InvalidArgumentError(
        absl::StrCat("refit.window_labelled: ", s.window_labelled,
                     " is below refit.min_labelled ", s.min_labelled,
                     ": no refit could ever start"));
  }
  return s;
}

bool InHoldout(absl::string_view record_id, double holdout_fraction) {
  // FNV-1a, 64 bit: a fixed, documented hash (absl::Hash is seeded per
  // process, std::hash is unspecified), so the split never changes.
  uint64_t h = 14695981039346656037ull;
  for (unsigned char c : record_id) {
    h ^= c;
    h *= 1099511628211ull;
  }
  // FNV-1a alone leaves the high bits of similar ids ("parcel-000123",
  // "parcel-000124") close together; MurmurHash3's 64-bit finalizer mixes
  // every input bit into every output bit, so the share held out is the
  // fraction asked for.
  h ^= h >> 33;
  h *= 0xff51afd7ed558ccdull;
  h ^= h >> 33;
  h *= 0xc4ceb9fe1a85ec53ull;
  h ^= h >> 33;
  return static_cast<double>(h >> 11) * 0x1.0p-53 < holdout_fraction;
}

absl::string_view RefitResultName(RefitOutcome::Result result) {
  switch (result) {
    case RefitOutcome::Result::kPromoted:
      return "promoted";
    case RefitOutcome::Result::kProposed:
      return "proposed";
    case RefitOutcome::Result::kNotBetter:
      return "not_better";
    case RefitOutcome::Result::kFailed:
      return "failed";
  }
  return "failed";
}

RefitRunner::RefitRunner(Ledger* ledger, Lifecycle* lifecycle,
                         SetRegistry* registry, RefitSettings settings,
                         std::function<absl::Time()> now)
    : ledger_(ledger),
      lifecycle_(lifecycle),
      registry_(registry),
      settings_(settings),
      now_(std::move(now)) {}

bool RefitRunner::HasWaitingCandidate(const std::string& set) {
  absl::StatusOr<std::vector<VersionRecord>> versions = lifecycle_->List(set);
  if (!versions.ok()) return false;
  for (const VersionRecord& v : *versions) {
    if (v.state == VersionState::kCandidate &&
        absl::StartsWith(v.created_by, kJobActorPrefix)) {
      return true;
    }
  }
  return false;
}

int64_t RefitRunner::LastJobId() {
  absl::StatusOr<std::vector<std::string>> actors =
      lifecycle_->AuditActors(kJobActorPrefix);
  int64_t last = 0;
  if (!actors.ok()) return last;  // numbering restarts; names stay unique
  for (const std::string& actor : *actors) {
    // "refit job N (kind...)"
    absl::string_view rest = absl::string_view(actor).substr(
        absl::string_view(kJobActorPrefix).size());
    int64_t id = 0;
    if (absl::SimpleAtoi(rest.substr(0, rest.find(' ')), &id)) {
      last = std::max(last, id);
    }
  }
  return last;
}

RefitOutcome RefitRunner::Run(const RefitTrigger& trigger, int64_t job_id) {
  const std::string actor = absl::StrCat(
      kJobActorPrefix, job_id, " (", RefitTriggerName(trigger.kind),
      trigger.actor.empty() ? "" : ", ", trigger.actor, ")");
  RefitOutcome outcome;
  outcome.job = job_id;
  PlanPtr active = registry_->Find(trigger.set);
  const std::string active_version = active ? active->version() : "";
  // The job's evidence, filled as it goes (daemon/review/dossier_html.h).
  v1::Dossier dossier;
  dossier.set_set(trigger.set);
  dossier.set_job(job_id);
  *dossier.mutable_started_at() = ToTimestamp(now_());
  dossier.set_trigger(std::string(RefitTriggerName(trigger.kind)));
  dossier.set_trigger_actor(trigger.actor);
  dossier.set_trigger_reason(trigger.reason);
  if (trigger.evidence) *dossier.mutable_evidence() = *trigger.evidence;
  dossier.set_active_version(active_version);
  dossier.set_holdout_fraction(settings_.holdout_fraction);
  dossier.set_margin(settings_.margin);
  dossier.set_l2(settings_.l2);
  // Writes the dossier once the outcome is known (the audit rows of the job
  // are written by then, so its trail holds them).
  auto write_dossier = [&] {
    if (dossiers_ == nullptr) return;
    dossier.set_result(std::string(RefitResultName(outcome.result)));
    dossier.set_summary(outcome.summary);
    const absl::Time finished = now_();
    *dossier.mutable_finished_at() = ToTimestamp(finished);
    if (absl::StatusOr<std::vector<AuditRecord>> audit =
            lifecycle_->Audit(trigger.set);
        audit.ok()) {
      RefreshTrail(*audit, finished, &dossier);
    }
    const DriftPolicy fallback;
    absl::Status s = dossiers_->Write(
        dossier,
        RenderDossier(dossier, policy_ != nullptr ? *policy_ : fallback));
    if (s.ok()) {
      outcome.dossier_path = dossiers_->HtmlPath(trigger.set, job_id);
      LogEvent(LogLevel::kInfo, "refit_dossier",
               {{"set", trigger.set},
                {"job", absl::StrCat(job_id)},
                {"path", outcome.dossier_path}});
    } else {
      LogEvent(LogLevel::kError, "refit_dossier_failed",
               {{"set", trigger.set},
                {"job", absl::StrCat(job_id)},
                {"error", s.message()}});
    }
  };
  auto fail = [&](std::string why) {
    outcome.result = RefitOutcome::Result::kFailed;
    outcome.summary = std::move(why);
    if (absl::Status s = lifecycle_->AppendAudit(
            {kNoTime, trigger.set, active_version, "fit_failed", actor,
             absl::StrCat(outcome.summary, "; trigger: ", trigger.reason)});
        !s.ok()) {
      LogEvent(LogLevel::kError, "audit_write_failed",
               {{"set", trigger.set}, {"error", s.message()}});
    }
    LogEvent(LogLevel::kWarning, "refit_failed",
             {{"set", trigger.set},
              {"job", absl::StrCat(job_id)},
              {"reason", outcome.summary}});
    write_dossier();
    return outcome;
  };
  if (active == nullptr) {
    return fail(
        absl::StrCat("set '", trigger.set, "' has no active version to refit"));
  }

  RefitRows rows;
  if (absl::Status s = LoadRows(*ledger_, *active, settings_, trigger, rows);
      !s.ok()) {
    return fail(absl::StrCat("reading the ledger: ", s.message()));
  }
  const int64_t labelled =
      static_cast<int64_t>(rows.train.size() + rows.holdout.size());
  dossier.set_training_records(static_cast<int64_t>(rows.train.size()));
  dossier.set_holdout_records(static_cast<int64_t>(rows.holdout.size()));
  dossier.set_unreadable_records(rows.unusable);
  if (labelled > 0) {
    *dossier.mutable_first_observed() = ToTimestamp(rows.first_observed);
    *dossier.mutable_last_observed() = ToTimestamp(rows.last_observed);
    for (v1::FeatureHealth& f :
         StabilityOf(*active, {rows.train, rows.holdout})) {
      *dossier.add_stability() = std::move(f);
    }
  }
  if (labelled < settings_.min_labelled) {
    return fail(absl::StrCat("too few labelled records: ", labelled,
                             " usable, refit.min_labelled is ",
                             settings_.min_labelled));
  }
  if (rows.holdout.size() < 2 || rows.train.size() < 2) {
    return fail(absl::StrCat("the holdout split left ", rows.train.size(),
                             " records to fit and ", rows.holdout.size(),
                             " to compare: adjust refit.holdout_fraction"));
  }
  const std::string window = Window(rows);
  dossier.set_holdout_split(settings_.holdout == v1::RefitPolicy::OUT_OF_TIME
                                ? "out_of_time"
                                : "random_by_id");

  // The ladder's rungs are compared on the same records: those of the
  // training part the active version can encode and score.
  const int width = active->encoded_width();
  std::vector<std::vector<scorer::RawValue>> train;
  std::vector<int> train_labels;
  std::vector<double> active_z;
  std::vector<Eigen::RowVectorXd> encoded;
  Eigen::RowVectorXd row(width);
  for (size_t i = 0; i < rows.train.size(); ++i) {
    row.setZero();
    absl::StatusOr<scorer::ScoreResult> r = active->Score(rows.train[i], {});
    if (!r.ok() || !active->Encode(rows.train[i], row).ok()) continue;
    train.push_back(rows.train[i]);
    train_labels.push_back(rows.train_labels[i]);
    active_z.push_back(r->log_odds);
    encoded.push_back(row);
  }
  const int64_t unscorable =
      static_cast<int64_t>(rows.train.size() - train.size());
  if (train.size() < 2) {
    return fail(absl::StrCat("the active version scores only ", train.size(),
                             " of the ", rows.train.size(),
                             " training records; data: ", window));
  }
  v1::RefitLadder ladder;
  ladder.set_training_records(static_cast<int64_t>(train.size()));
  ladder.set_alpha(settings_.ladder_alpha);
  ladder.set_window(window);
  absl::StatusOr<double> active_ll =
      monitor::LogisticLogLikelihood(active_z, train_labels);
  if (!active_ll.ok()) {
    return fail(absl::StrCat("the active version's log-likelihood: ",
                             active_ll.status().message()));
  }
  ladder.set_active_log_likelihood(*active_ll);
  std::vector<monitor::RungFit> fits(4);
  std::vector<std::string> notes(4);
  // Rungs 1 and 2.
  absl::StatusOr<monitor::RecalibrationFit> rung1 =
      monitor::FitInterceptRecalibration(active_z, train_labels);
  absl::StatusOr<monitor::RecalibrationFit> rung2 =
      monitor::FitLogisticRecalibration(active_z, train_labels);
  if (rung1.ok()) {
    fits[0] = {true, rung1->log_likelihood, 1};
  } else {
    notes[0] = std::string(rung1.status().message());
  }
  if (rung2.ok()) {
    fits[1] = {true, rung2->log_likelihood, 2};
  } else {
    notes[1] = std::string(rung2.status().message());
  }
  // Rung 4: transforms learned again (as every refit did before issue 20).
  absl::StatusOr<scorer::DesignLayout> layout =
      scorer::DesignLayout::Learn(SpecsFrom(active->set()), train);
  std::optional<scorer::FitResult> full;
  // A rung 4 whose re-learned transforms would refuse or re-read calls the
  // active version takes (a level absent from the window, ...) is no
  // drop-in replacement: it is not fitted, and rung 3, which keeps the
  // active transforms, can take its place.
  const std::vector<std::string> changes =
      layout.ok() ? SchemaChanges(active->set(), layout->skeleton())
                  : std::vector<std::string>();
  if (!layout.ok()) {
    notes[3] =
        absl::StrCat("learning the transforms: ", layout.status().message());
  } else if (!changes.empty()) {
    notes[3] = absl::StrCat(
        "the transforms learned from the training part would change what "
        "callers may send: ",
        absl::StrJoin(changes, "; "));
  } else if (absl::StatusOr<scorer::RowMatrix> x = layout->Encode(train);
             !x.ok()) {
    notes[3] = absl::StrCat("encoding: ", x.status().message());
  } else {
    Eigen::VectorXd y(static_cast<Eigen::Index>(train_labels.size()));
    for (size_t i = 0; i < train_labels.size(); ++i) {
      y[static_cast<Eigen::Index>(i)] = train_labels[i];
    }
    scorer::FitOptions options;
    options.l2_lambda = settings_.l2;
    absl::StatusOr<scorer::FitResult> fit = scorer::FitLogistic(
        *x, y, Eigen::VectorXd(), layout->column_names(), options);
    if (!fit.ok()) {
      notes[3] = absl::StrCat("fit refused: ", fit.status().message());
    } else if (!fit->converged) {
      notes[3] = absl::StrCat("fit did not converge: ", fit->stop_reason);
    } else {
      full = *std::move(fit);
      fits[3] = {true, full->log_likelihood,
                 static_cast<double>(layout->num_columns() + 1)};
    }
  }
  // Rung 3: the active encoding, penalised toward the active coefficients.
  // Its df is p, the full re-estimate's parameters (by convention; the
  // penalised fit's effective df is smaller).
  const double params = layout.ok() ? layout->num_columns() + 1.0 : width + 1.0;
  monitor::LadderMatrix xa(static_cast<Eigen::Index>(encoded.size()), width);
  for (size_t i = 0; i < encoded.size(); ++i) {
    xa.row(static_cast<Eigen::Index>(i)) = encoded[i];
  }
  encoded.clear();
  std::optional<monitor::RidgeTowardPrior> ridge;
  constexpr int kRidgeFolds = 5;
  if (static_cast<int64_t>(train.size()) < kRidgeFolds) {
    notes[2] = "too few records for 5-fold cross-validation";
  } else if (absl::StatusOr<monitor::PenaltyChoice> penalty =
                 monitor::ChooseRidgePenalty(xa, train_labels,
                                             active->intercept(),
                                             active->beta(), kRidgeFolds);
             !penalty.ok()) {
    notes[2] =
        absl::StrCat("choosing the penalty: ", penalty.status().message());
  } else if (absl::StatusOr<monitor::RidgeTowardPrior> r =
                 monitor::FitRidgeTowardPrior(xa, train_labels,
                                              active->intercept(),
                                              active->beta(), penalty->lambda);
             !r.ok()) {
    notes[2] = std::string(r.status().message());
  } else {
    ridge = *std::move(r);
    fits[2] = {true, ridge->log_likelihood, params};
    ladder.set_ridge_lambda(ridge->lambda);
    ladder.set_ridge_folds(kRidgeFolds);
    notes[2] = absl::StrFormat(
        "lambda %.6g chosen from %d values by %d-fold cross-validated "
        "log-likelihood",
        ridge->lambda, penalty->grid.size(), kRidgeFolds);
  }
  if (unscorable > 0) {
    notes[0] = absl::StrCat(notes[0], notes[0].empty() ? "" : "; ", unscorable,
                            " training records the active version cannot "
                            "score left out of every rung");
  }
  absl::StatusOr<monitor::LadderChoice> choice =
      monitor::ChooseRung(*active_ll, fits, settings_.ladder_alpha);
  if (!choice.ok()) {
    return fail(absl::StrCat("the updating ladder: ", choice.status().message(),
                             " (", notes[0].empty() ? notes[3] : notes[0],
                             "); data: ", window));
  }
  for (int k = 1; k <= 4; ++k) {
    v1::RefitLadder::Rung* r = ladder.add_rungs();
    r->set_rung(k);
    r->set_name(monitor::RungName(k));
    r->set_fitted(fits[static_cast<size_t>(k - 1)].fitted);
    r->set_note(notes[static_cast<size_t>(k - 1)]);
    r->set_log_likelihood(fits[static_cast<size_t>(k - 1)].log_likelihood);
    r->set_df(fits[static_cast<size_t>(k - 1)].df);
    for (const monitor::LadderTest& t : choice->against_active) {
      if (t.rung != k) continue;
      r->set_lr_statistic(t.test.statistic);
      r->set_p_value(t.test.p_value);
    }
  }
  for (const monitor::LadderTest& t : choice->steps) {
    v1::RefitLadder::Step* s = ladder.add_steps();
    s->set_rung(t.rung);
    s->set_against(t.against);
    s->set_lr_statistic(t.test.statistic);
    s->set_df(t.test.df);
    s->set_p_value(t.test.p_value);
    s->set_significant(t.significant);
  }
  ladder.set_decided_by(choice->decided_by);
  ladder.set_chosen(choice->chosen);
  ladder.set_reason(choice->reason);
  const std::string ladder_detail = LadderText(ladder);
  outcome.ladder = ladder;
  *dossier.mutable_ladder() = ladder;
  auto audit = [&](const std::string& version, const std::string& action,
                   const std::string& detail) {
    if (absl::Status s = lifecycle_->AppendAudit(
            {kNoTime, trigger.set, version, action, actor, detail});
        !s.ok()) {
      LogEvent(LogLevel::kError, "audit_write_failed",
               {{"set", trigger.set}, {"error", s.message()}});
    }
  };
  LogEvent(LogLevel::kInfo, "refit_ladder",
           {{"set", trigger.set},
            {"job", absl::StrCat(job_id)},
            {"chosen", absl::StrCat(choice->chosen)}});
  if (choice->chosen == 0) {
    outcome.result = RefitOutcome::Result::kNotBetter;
    outcome.summary = absl::StrCat("closed testing keeps the active version ",
                                   active_version, ": ", ladder_detail);
    audit(active_version, "ladder", ladder_detail);
    write_dossier();
    return outcome;
  }

  const absl::Time now = now_();
  const std::string version = absl::StrCat(
      "refit-", absl::FormatTime("%Y%m%dT%H%M%SZ", now, absl::UTCTimeZone()),
      "-j", job_id);
  scorer::SetDescription description;
  description.name = trigger.set;
  description.version = version;
  description.description = absl::StrCat(
      "Refit of ", trigger.set, " version ", active_version,
      " from its ledger (", RefitTriggerName(trigger.kind), "), rung ",
      choice->chosen, ": ", monitor::RungName(choice->chosen));
  description.created_by = actor;
  description.training_data = absl::StrCat("plumbd ledger: ", window);
  description.created_at = now;
  absl::StatusOr<v1::CoefficientSet> set;
  std::string fit_detail;
  if (choice->chosen == 4) {
    set = scorer::CoefficientSetFromFit(*layout, *full, description);
    fit_detail = absl::StrFormat(
        "rung 4 (full re-estimation), data: %s; %d columns, %d iterations, "
        "log-likelihood %.6f, null log-likelihood %.6f, AIC %.3f, McFadden "
        "R2 %.4f%s",
        window, layout->num_columns(), full->iterations, full->log_likelihood,
        full->null_log_likelihood, full->aic, full->pseudo_r2,
        settings_.l2 > 0 ? absl::StrCat(", L2 lambda ", settings_.l2) : "");
  } else {
    UpdatedSet update;
    update.rung = choice->chosen;
    if (choice->chosen == 1) {
      update.intercept_shift = rung1->intercept;
      update.method = absl::StrFormat(
          "intercept recalibration of version %s (its log-odds as offset): "
          "intercept + %.6g",
          active_version, rung1->intercept);
    } else if (choice->chosen == 2) {
      update.intercept_shift = rung2->intercept;
      update.slope = rung2->slope;
      update.method = absl::StrFormat(
          "logistic recalibration of version %s: %.6g + %.6g x its log-odds",
          active_version, rung2->intercept, rung2->slope);
    } else {
      update.ridge = &*ridge;
      update.method = absl::StrFormat(
          "IRLS on version %s's transforms, ridge toward its coefficients, "
          "lambda %.6g (%d-fold cross-validated log-likelihood)",
          active_version, ridge->lambda, kRidgeFolds);
    }
    set = UpdateActiveSet(*active, update, layout.ok() ? &*layout : nullptr, xa,
                          train_labels, active_z, description);
    fit_detail = absl::StrFormat(
        "rung %d (%s), data: %s; %s; log-likelihood %.6f (active %.6f)",
        choice->chosen, monitor::RungName(choice->chosen), window,
        update.method,
        fits[static_cast<size_t>(choice->chosen - 1)].log_likelihood,
        *active_ll);
  }
  if (!set.ok()) {
    return fail(absl::StrCat("building the set: ", set.status().message()));
  }

  absl::StatusOr<PlanPtr> candidate =
      scorer::ScoringPlan::Compile(*set, "refit candidate");
  if (!candidate.ok()) {
    return fail(absl::StrCat("compiling the candidate: ",
                             candidate.status().message()));
  }
  std::vector<uint8_t> scored(rows.holdout.size(), 1);
  const std::vector<double> holdout_active_z =
      ScoreAll(*active, rows.holdout, scored);
  const std::vector<double> candidate_z =
      ScoreAll(**candidate, rows.holdout, scored);
  std::vector<double> za, zc;
  std::vector<int> labels;
  for (size_t i = 0; i < scored.size(); ++i) {
    if (!scored[i]) continue;
    za.push_back(holdout_active_z[i]);
    zc.push_back(candidate_z[i]);
    labels.push_back(rows.holdout_labels[i]);
  }
  absl::StatusOr<monitor::PairedLogLoss> paired =
      monitor::ComparePairedLogLoss(za, zc, labels);
  if (!paired.ok()) {
    return fail(
        absl::StrCat("holdout comparison: ", paired.status().message()));
  }
  const bool wins =
      paired->mean_difference <= -settings_.margin && paired->upper_95 < 0;
  dossier.set_candidate_version(version);
  {
    VersionRecord from_record;
    from_record.set = trigger.set;
    from_record.version = active_version;
    from_record.state = VersionState::kActive;
    v1::VersionInfo from = ToVersionInfo(from_record);
    if (absl::StatusOr<std::vector<VersionRecord>> known =
            lifecycle_->List(trigger.set);
        known.ok()) {
      for (const VersionRecord& v : *known) {
        if (v.version == active_version) from = ToVersionInfo(v);
      }
    }
    VersionRecord to_record;
    to_record.set = trigger.set;
    to_record.version = version;
    to_record.state = VersionState::kCandidate;
    to_record.created_at = now;
    to_record.created_by = actor;
    to_record.reason = trigger.reason;
    *dossier.mutable_diff() =
        DiffSets(from, active->set(), ToVersionInfo(to_record), *set);
    if (absl::StatusOr<v1::HoldoutFigures> a =
            HoldoutFiguresOf(*active, za, labels);
        a.ok()) {
      *dossier.mutable_active_holdout() = *std::move(a);
    }
    if (absl::StatusOr<v1::HoldoutFigures> c =
            HoldoutFiguresOf(**candidate, zc, labels);
        c.ok()) {
      *dossier.mutable_candidate_holdout() = *std::move(c);
    }
    v1::PairedLogLossDifference* p = dossier.mutable_paired();
    p->set_records(paired->records);
    p->set_mean_difference(paired->mean_difference);
    p->set_standard_error(paired->standard_error);
    p->set_lower_95(paired->lower_95);
    p->set_upper_95(paired->upper_95);
    p->set_candidate_wins(wins);
  }
  const std::string comparison = absl::StrFormat(
      "holdout of %d records%s: log-loss active %s %.6f, candidate %.6f, "
      "difference %.6f (95%% interval %.6f to %.6f); margin %.6f: %s",
      paired->records,
      labels.size() < scored.size()
          ? absl::StrCat(" (", scored.size() - labels.size(),
                         " could not be scored by both)")
          : "",
      active_version, paired->active_log_loss, paired->candidate_log_loss,
      paired->mean_difference, paired->lower_95, paired->upper_95,
      settings_.margin, wins ? "candidate wins" : "candidate does not win");

  if (!wins) {
    outcome.result = RefitOutcome::Result::kNotBetter;
    outcome.summary = absl::StrCat("fit ", version, ": ", fit_detail, ". ",
                                   comparison, ". ", ladder_detail);
    for (const auto& [action, detail] :
         {std::pair<std::string, std::string>{"ladder", ladder_detail},
          {"fit", fit_detail},
          {"compared", comparison}}) {
      if (absl::Status s = lifecycle_->AppendAudit(
              {kNoTime, trigger.set, version, action, actor, detail});
          !s.ok()) {
        LogEvent(LogLevel::kError, "audit_write_failed",
                 {{"set", trigger.set}, {"error", s.message()}});
      }
    }
    LogEvent(LogLevel::kInfo, "refit_not_better",
             {{"set", trigger.set},
              {"job", absl::StrCat(job_id)},
              {"difference", absl::StrCat(paired->mean_difference)}});
    write_dossier();
    return outcome;
  }

  NewVersion candidate_version;
  candidate_version.set = *std::move(set);
  candidate_version.created_by = actor;
  candidate_version.reason = trigger.reason;
  candidate_version.comparison = comparison;
  candidate_version.audit = {{kNoTime, "", "", "ladder", actor, ladder_detail},
                             {kNoTime, "", "", "fit", actor, fit_detail},
                             {kNoTime, "", "", "compared", actor, comparison}};
  absl::StatusOr<VersionRecord> stored =
      lifecycle_->AddCandidate(std::move(candidate_version));
  if (!stored.ok()) {
    return fail(
        absl::StrCat("storing the candidate: ", stored.status().message()));
  }
  outcome.candidate = *stored;
  outcome.result = RefitOutcome::Result::kProposed;
  outcome.summary = absl::StrCat("fit: ", fit_detail, ". ", ladder_detail);
  if (settings_.mode == v1::RefitPolicy::AUTO) {
    absl::StatusOr<VersionRecord> promoted =
        lifecycle_->Promote({trigger.set, version, actor,
                             absl::StrCat("refit mode auto: ", comparison)});
    if (promoted.ok()) {
      outcome.result = RefitOutcome::Result::kPromoted;
      outcome.candidate = *promoted;
    } else {
      outcome.summary = absl::StrCat(
          outcome.summary, "; promotion failed: ", promoted.status().message());
    }
  } else {
    outcome.summary =
        absl::StrCat(outcome.summary, "; waiting for plumbctl approve --set ",
                     trigger.set, " --version ", version);
  }
  if (outcome.candidate) {
    dossier.mutable_diff()->mutable_to()->set_comparison(
        outcome.candidate->comparison);
    dossier.mutable_diff()->set_comparison(outcome.candidate->comparison);
  }
  write_dossier();
  LogEvent(LogLevel::kInfo, "refit_done",
           {{"set", trigger.set},
            {"job", absl::StrCat(job_id)},
            {"version", version},
            {"result", RefitResultName(outcome.result)}});
  return outcome;
}

}  // namespace plumbline::daemon
