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
#include "daemon/review/dossier_data.h"
#include "daemon/review/dossier_html.h"
#include "daemon/review/version_view.h"
#include "daemon/scoring/packed_row.h"
#include "daemon/util/event_log.h"
#include "daemon/util/time.h"
#include "monitor/paired_comparison.h"
#include "scorer/design_matrix.h"
#include "scorer/design_set.h"
#include "scorer/fit.h"

namespace plumbline::daemon {
namespace {

// Audit actor and created_by of a job: "refit job N (kind[, actor])".
constexpr char kJobActorPrefix[] = "refit job ";

// The labelled records a job works on. Text values view into `arena`.
struct RefitRows {
  std::deque<std::string> arena;
  std::vector<std::vector<scorer::RawValue>> train, holdout;
  std::vector<int> train_labels, holdout_labels;
  int64_t unusable = 0;  // rows whose stored features the set cannot read
  absl::Time first_observed = absl::InfiniteFuture();
  absl::Time last_observed = absl::InfinitePast();
};

absl::Status LoadRows(Ledger& ledger, const scorer::ScoringPlan& plan,
                      const RefitSettings& settings, RefitRows& rows) {
  absl::flat_hash_set<std::string> seen;
  int64_t taken = 0;
  StoredFeatureReader reader;
  std::vector<scorer::RawValue> values;
  // Shadow scores share record ids with active ones: ask for more rows than
  // needed and keep the active role's.
  return ledger.ForEachLabelled(
      plan.name(), settings.window_labelled * 4, absl::InfinitePast(),
      [&](const LabelledScore& l) {
        if (taken >= settings.window_labelled || l.role != ScoreRole::kActive ||
            !seen.insert(l.record_id).second) {
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
        ++taken;
        rows.first_observed = std::min(rows.first_observed, l.observed_at);
        rows.last_observed = std::max(rows.last_observed, l.observed_at);
        if (InHoldout(l.record_id, settings.holdout_fraction)) {
          rows.holdout.push_back(values);
          rows.holdout_labels.push_back(l.label);
        } else {
          rows.train.push_back(values);
          rows.train_labels.push_back(l.label);
        }
      });
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
      rows.train.size() + rows.holdout.size(), " labelled records observed ",
      absl::FormatTime("%Y-%m-%dT%H:%M:%SZ", rows.first_observed,
                       absl::UTCTimeZone()),
      " to ",
      absl::FormatTime("%Y-%m-%dT%H:%M:%SZ", rows.last_observed,
                       absl::UTCTimeZone()),
      " (", rows.train.size(), " fit, ", rows.holdout.size(), " held out",
      rows.unusable > 0 ? absl::StrCat(", ", rows.unusable, " unreadable")
                        : std::string(),
      ")");
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
  if (absl::Status s = LoadRows(*ledger_, *active, settings_, rows); !s.ok()) {
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

  absl::StatusOr<scorer::DesignLayout> layout =
      scorer::DesignLayout::Learn(SpecsFrom(active->set()), rows.train);
  if (!layout.ok()) {
    return fail(absl::StrCat("learning the transforms: ",
                             layout.status().message(), "; data: ", window));
  }
  absl::StatusOr<scorer::RowMatrix> x = layout->Encode(rows.train);
  if (!x.ok()) return fail(absl::StrCat("encoding: ", x.status().message()));
  Eigen::VectorXd y(static_cast<Eigen::Index>(rows.train_labels.size()));
  for (size_t i = 0; i < rows.train_labels.size(); ++i) {
    y[static_cast<Eigen::Index>(i)] = rows.train_labels[i];
  }
  scorer::FitOptions options;
  options.l2_lambda = settings_.l2;
  absl::StatusOr<scorer::FitResult> fit = scorer::FitLogistic(
      *x, y, Eigen::VectorXd(), layout->column_names(), options);
  if (!fit.ok()) {
    return fail(absl::StrCat("fit refused: ", fit.status().message(),
                             "; data: ", window));
  }
  if (!fit->converged) {
    return fail(absl::StrCat("fit did not converge: ", fit->stop_reason,
                             "; data: ", window));
  }
  const absl::Time now = now_();
  const std::string version = absl::StrCat(
      "refit-", absl::FormatTime("%Y%m%dT%H%M%SZ", now, absl::UTCTimeZone()),
      "-j", job_id);
  scorer::SetDescription description;
  description.name = trigger.set;
  description.version = version;
  description.description =
      absl::StrCat("Refit of ", trigger.set, " version ", active_version,
                   " from its ledger (", RefitTriggerName(trigger.kind), ")");
  description.created_by = actor;
  description.training_data = absl::StrCat("plumbd ledger: ", window);
  description.created_at = now;
  absl::StatusOr<v1::CoefficientSet> set =
      scorer::CoefficientSetFromFit(*layout, *fit, description);
  if (!set.ok()) {
    return fail(absl::StrCat("building the set: ", set.status().message()));
  }
  const std::string fit_detail = absl::StrFormat(
      "data: %s; %d columns, %d iterations, log-likelihood %.6f, null "
      "log-likelihood %.6f, AIC %.3f, McFadden R2 %.4f%s",
      window, layout->num_columns(), fit->iterations, fit->log_likelihood,
      fit->null_log_likelihood, fit->aic, fit->pseudo_r2,
      settings_.l2 > 0 ? absl::StrCat(", L2 lambda ", settings_.l2) : "");

  absl::StatusOr<PlanPtr> candidate =
      scorer::ScoringPlan::Compile(*set, "refit candidate");
  if (!candidate.ok()) {
    return fail(absl::StrCat("compiling the candidate: ",
                             candidate.status().message()));
  }
  std::vector<uint8_t> scored(rows.holdout.size(), 1);
  const std::vector<double> active_z = ScoreAll(*active, rows.holdout, scored);
  const std::vector<double> candidate_z =
      ScoreAll(**candidate, rows.holdout, scored);
  std::vector<double> za, zc;
  std::vector<int> labels;
  for (size_t i = 0; i < scored.size(); ++i) {
    if (!scored[i]) continue;
    za.push_back(active_z[i]);
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
    outcome.summary =
        absl::StrCat("fit ", version, ": ", fit_detail, ". ", comparison);
    for (const auto& [action, detail] :
         {std::pair<std::string, std::string>{"fit", fit_detail},
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
  candidate_version.audit = {{kNoTime, "", "", "fit", actor, fit_detail},
                             {kNoTime, "", "", "compared", actor, comparison}};
  absl::StatusOr<VersionRecord> stored =
      lifecycle_->AddCandidate(std::move(candidate_version));
  if (!stored.ok()) {
    return fail(
        absl::StrCat("storing the candidate: ", stored.status().message()));
  }
  outcome.candidate = *stored;
  outcome.result = RefitOutcome::Result::kProposed;
  outcome.summary = absl::StrCat("fit: ", fit_detail);
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
