// File: daemon/health/monitor.cc
#include "daemon/health/monitor.h"

#include <algorithm>
#include <optional>
#include <tuple>
#include <utility>

#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "daemon/health/rebuild.h"
#include "daemon/scoring/packed_row.h"
#include "daemon/util/event_log.h"
#include "daemon/util/time.h"
#include "plumbline/v1/health_state.pb.h"

namespace plumbline::daemon {
namespace {

SetVersion VersionKey(absl::string_view set, absl::string_view version) {
  return SetVersion{std::string(set), std::string(version)};
}

void LogTransition(const v1::SetHealth& health, const PolicyTransition& t) {
  LogEvent(t.to == v1::STEADY ? LogLevel::kInfo : LogLevel::kWarning,
           "drift_state",
           {{"set", health.set()},
            {"version", health.version()},
            {"from", DriftStateName(t.from)},
            {"to", DriftStateName(t.to)},
            {"trigger", t.trigger},
            {"reasons", absl::StrCat(health.reasons_size())},
            {"reason", t.reason}});
}

void LogLimits(const scorer::ScoringPlan& plan,
               const std::vector<CusumLimit>& limits) {
  for (const CusumLimit& l : limits) {
    if (l.limit.ok()) {
      LogEvent(LogLevel::kInfo, "cusum_limits",
               {{"set", plan.name()},
                {"version", plan.version()},
                {"chart", l.chart},
                {"limit", absl::StrFormat("%.6g", l.limit->limit)},
                {"in_control_arl", absl::StrFormat("%.6g", l.limit->arl.value)},
                {"arl_error",
                 absl::StrFormat("%.3g", l.limit->arl.discretisation_error)},
                {"caveat", l.caveat}});
    } else {
      LogEvent(LogLevel::kWarning, "cusum_limits",
               {{"set", plan.name()},
                {"version", plan.version()},
                {"chart", l.chart},
                {"error", l.limit.status().message()}});
    }
  }
}

}  // namespace

HealthMonitor::HealthMonitor(HealthMonitorOptions options)
    : options_(std::move(options)),
      feed_(this, [this](const std::string& set, const std::string& version) {
        return PlanFor(set, version);
      }) {}

HealthMonitor::PlanPtr HealthMonitor::PlanFor(const std::string& set,
                                              const std::string& version) {
  {
    absl::ReaderMutexLock lock(&mu_);
    if (HealthWindows* w = Find(set, version); w != nullptr) return w->plan();
  }
  return options_.find_plan ? options_.find_plan(set, version) : nullptr;
}

absl::StatusOr<std::unique_ptr<HealthMonitor>> HealthMonitor::Create(
    HealthMonitorOptions options) {
  // One source for the level of the PSI tests: the policy's.
  options.windows.alpha = options.policy.alpha();
  if (absl::Status s = options.windows.cusum.Check(); !s.ok()) return s;
  if (options.windows.buckets < 1 ||
      options.windows.labelled_count % options.windows.buckets != 0 ||
      options.windows.scored_count % options.windows.buckets != 0 ||
      options.windows.time_span / options.windows.buckets <=
          absl::ZeroDuration()) {
    return absl::InvalidArgumentError(absl::StrCat(
        "windows: ", options.windows.labelled_count, " labelled and ",
        options.windows.scored_count, " scored records over ",
        absl::FormatDuration(options.windows.time_span),
        " cannot be split into ", options.windows.buckets,
        " buckets; buckets must divide both counts"));
  }
  return std::unique_ptr<HealthMonitor>(new HealthMonitor(std::move(options)));
}

void HealthMonitor::SyncPlans(const std::vector<PlanPtr>& plans) {
  absl::flat_hash_map<std::string, std::vector<std::shared_ptr<Version>>> next;
  absl::MutexLock lock(&mu_);
  for (const PlanPtr& plan : plans) {
    std::shared_ptr<Version> kept;
    if (auto it = versions_.find(plan->name()); it != versions_.end()) {
      for (const auto& v : it->second) {
        if (v->windows->plan()->version() == plan->version()) kept = v;
      }
    }
    if (kept == nullptr) {
      absl::StatusOr<std::unique_ptr<HealthWindows>> windows =
          HealthWindows::Create(plan, options_.windows);
      if (!windows.ok()) {  // options were checked by Create: not expected
        LogEvent(
            LogLevel::kError, "health_windows_failed",
            {{"set", plan->name()}, {"error", windows.status().message()}});
        continue;
      }
      kept = std::make_shared<Version>();
      kept->windows = *std::move(windows);
      kept->health.set_set(plan->name());
      kept->health.set_version(plan->version());
    }
    retired_.erase(VersionKey(plan->name(), plan->version()));
    next[plan->name()].push_back(std::move(kept));
  }
  for (const auto& [name, list] : versions_) {
    for (const auto& v : list) {
      const std::string& version = v->windows->plan()->version();
      auto it = next.find(name);
      const bool loaded =
          it != next.end() &&
          std::any_of(it->second.begin(), it->second.end(), [&](const auto& n) {
            return n->windows->plan()->version() == version;
          });
      if (!loaded) retired_.insert(VersionKey(name, version));
    }
  }
  versions_ = std::move(next);
}

HealthWindows* HealthMonitor::Find(absl::string_view set,
                                   absl::string_view version) const {
  auto it = versions_.find(set);
  if (it == versions_.end()) return nullptr;
  for (const auto& v : it->second) {
    if (v->windows->plan()->version() == version) return v->windows.get();
  }
  return nullptr;
}

HealthWindows* HealthMonitor::Find(const scorer::ScoringPlan& plan) const {
  auto it = versions_.find(plan.name());
  if (it == versions_.end()) return nullptr;
  for (const auto& v : it->second) {
    // The registry's own plan object, or an equal version.
    if (v->windows->plan().get() == &plan ||
        v->windows->plan()->version() == plan.version()) {
      return v->windows.get();
    }
  }
  return nullptr;
}

void HealthMonitor::CountUnmonitored(absl::string_view set,
                                     absl::string_view version,
                                     absl::string_view kind) {
  absl::MutexLock lock(&unmonitored_mu_);
  UnmonitoredCount& c =
      unmonitored_[{VersionKey(set, version), std::string(kind)}];
  if (c.records == 0) {
    c.set = std::string(set);
    c.version = std::string(version);
    c.kind = std::string(kind);
  }
  ++c.records;
}

void HealthMonitor::OnScored(const scorer::ScoringPlan& plan,
                             absl::Span<const scorer::RawValue> values,
                             double log_odds, absl::Time scored_at) {
  const absl::Time now = options_.now();
  for (int attempt = 0; attempt < 2; ++attempt) {
    {
      absl::ReaderMutexLock lock(&mu_);
      if (HealthWindows* w = Find(plan); w != nullptr) {
        // A version rebuilt in the background takes its rows from the
        // ledger until it is whole (RebuildInBackground).
        if (!rebuilding_.empty() && rebuilding_.contains(w)) return;
        w->AddScored(log_odds, values, scored_at, now);
        return;
      }
    }
    if (attempt == 0 && !EnsureWindows(plan)) break;
  }
  CountUnmonitored(plan.name(), plan.version(), "scored");
}

bool HealthMonitor::EnsureWindows(const scorer::ScoringPlan& plan) {
  {
    absl::ReaderMutexLock lock(&mu_);
    if (Find(plan.name(), plan.version()) != nullptr) return true;
    if (retired_.contains(VersionKey(plan.name(), plan.version()))) {
      return false;
    }
  }
  // The caller lends the plan only for the call; the windows keep their own
  // compiled copy (a version is immutable, so it is the same set).
  absl::StatusOr<PlanPtr> copy =
      scorer::ScoringPlan::Compile(plan.set(), plan.source());
  if (!copy.ok()) return false;
  absl::StatusOr<std::unique_ptr<HealthWindows>> windows =
      HealthWindows::Create(*copy, options_.windows);
  if (!windows.ok()) return false;
  absl::MutexLock lock(&mu_);
  if (Find(plan.name(), plan.version()) != nullptr) return true;
  if (retired_.contains(VersionKey(plan.name(), plan.version()))) {
    return false;
  }
  auto version = std::make_shared<Version>();
  version->windows = *std::move(windows);
  version->health.set_set(plan.name());
  version->health.set_version(plan.version());
  versions_[plan.name()].push_back(std::move(version));
  return true;
}

void HealthMonitor::OnLabelled(const LabelledScore& labelled) {
  const absl::Time now = options_.now();
  {
    absl::ReaderMutexLock lock(&mu_);
    if (HealthWindows* w = Find(labelled.set_name, labelled.set_version)) {
      if (!rebuilding_.empty() && rebuilding_.contains(w)) return;
      w->AddLabelled(labelled.log_odds, labelled.label, labelled.scored_at,
                     labelled.observed_at, now);
      return;
    }
  }
  CountUnmonitored(labelled.set_name, labelled.set_version, "labelled");
}

absl::Status HealthMonitor::Rebuild(Ledger& ledger) {
  std::vector<std::shared_ptr<Version>> all;
  {
    absl::ReaderMutexLock lock(&mu_);
    for (const auto& [name, list] : versions_) {
      all.insert(all.end(), list.begin(), list.end());
    }
  }
  for (const auto& v : all) {
    if (absl::Status s = RebuildWindows(ledger, *v->windows, options_.now());
        !s.ok()) {
      return s;
    }
  }
  return absl::OkStatus();
}

void HealthMonitor::OnUnknownVersion(const std::string& set,
                                     const std::string& version) {
  CountUnmonitored(set, version, "scored");
}

void HealthMonitor::OnCommitted(const CommittedRows& rows) {
  absl::MutexLock lock(&feed_mu_);
  feed_.Feed(rows);
  fed_marks_ = rows.marks;
}

std::vector<WindowSnapshot> HealthMonitor::Snapshots(bool if_changed) {
  std::vector<std::shared_ptr<Version>> all;
  std::vector<v1::HealthWindowsState> states;
  LedgerMarks marks;
  {
    // No commit is fed meanwhile: every version's state is at `marks`.
    absl::MutexLock feed(&feed_mu_);
    if (!marks_known_) return {};
    marks = fed_marks_;
    {
      absl::ReaderMutexLock lock(&mu_);
      for (const auto& [name, list] : versions_) {
        for (const auto& v : list) {
          // Not whole yet: the next start rebuilds it again.
          if (!rebuilding_.contains(v->windows.get())) all.push_back(v);
        }
      }
    }
    std::vector<std::string> keys;
    keys.reserve(all.size());
    for (const auto& v : all) {
      const scorer::ScoringPlan& plan = *v->windows->plan();
      keys.push_back(absl::StrCat(plan.name(), "\n", plan.version(), "\n",
                                  v->windows->fingerprint()));
    }
    if (if_changed && marks == snapshot_marks_ && keys == snapshot_versions_) {
      return {};
    }
    snapshot_marks_ = marks;
    snapshot_versions_ = std::move(keys);
    states.reserve(all.size());
    for (const auto& v : all) states.push_back(v->windows->Capture());
  }
  const absl::Time now = options_.now();
  std::vector<WindowSnapshot> out;
  out.reserve(all.size());
  for (size_t i = 0; i < all.size(); ++i) {
    const scorer::ScoringPlan& plan = *all[i]->windows->plan();
    WindowSnapshot& s = out.emplace_back();
    s.set_name = plan.name();
    s.version = plan.version();
    s.taken_at = now;
    s.marks = marks;
    s.fingerprint = all[i]->windows->fingerprint();
    s.state = states[i].SerializeAsString();
  }
  return out;
}

absl::StatusOr<RestoreReport> HealthMonitor::Restore(Ledger& ledger,
                                                     SnapshotStore* store) {
  absl::MutexLock feed(&feed_mu_);
  const LedgerMarks ledger_marks = ledger.Marks();
  std::vector<WindowSnapshot> snapshots;
  if (store != nullptr) {
    absl::StatusOr<std::vector<WindowSnapshot>> loaded = store->Load();
    if (loaded.ok()) {
      snapshots = *std::move(loaded);
    } else {
      LogEvent(LogLevel::kWarning, "health_snapshot_unused",
               {{"error", loaded.status().message()},
                {"effect", "every version is rebuilt from the ledger"}});
    }
  }
  std::vector<std::shared_ptr<Version>> all;
  {
    absl::ReaderMutexLock lock(&mu_);
    for (const auto& [name, list] : versions_) {
      all.insert(all.end(), list.begin(), list.end());
    }
  }
  RestoreReport report;
  // The marks of the restored versions: one Snapshots() call wrote them
  // all, so they share one pair; a snapshot at other marks is not used.
  std::optional<LedgerMarks> marks;
  std::optional<MarkRecords> records;  // what the ledger holds at `marks`
  absl::flat_hash_map<SetVersion, HealthWindows*> restored;
  std::vector<std::shared_ptr<Version>> rebuild;
  for (const auto& v : all) {
    const scorer::ScoringPlan& plan = *v->windows->plan();
    const WindowSnapshot* snapshot = nullptr;
    for (const WindowSnapshot& s : snapshots) {
      if (s.set_name == plan.name() && s.version == plan.version()) {
        snapshot = &s;
      }
    }
    std::string why;
    if (snapshot == nullptr) {
      why = "no snapshot of this version";
    } else if (snapshot->fingerprint != v->windows->fingerprint()) {
      why = "taken with other window options or another plan";
    } else if (marks.has_value() && !(snapshot->marks == *marks)) {
      why = "taken at other marks than the other versions' snapshots";
    } else if (snapshot->marks.score_id > ledger_marks.score_id ||
               snapshot->marks.outcome_seq > ledger_marks.outcome_seq) {
      why = "ahead of the ledger (a ledger restored from an older copy?)";
    } else {
      if (!records.has_value()) {
        absl::StatusOr<MarkRecords> at = ledger.RecordsAt(snapshot->marks);
        if (!at.ok()) return at.status();
        records = *std::move(at);
      }
      // A mark's row must be there with the record id it had (ids are
      // reused only after every row above them was deleted).
      const bool scores_hold =
          snapshot->marks.score_id == 0 ||
          (!snapshot->mark_records.score_record.empty() &&
           records->score_record == snapshot->mark_records.score_record);
      const bool outcomes_hold =
          snapshot->marks.outcome_seq == 0 ||
          (!snapshot->mark_records.outcome_record.empty() &&
           records->outcome_record == snapshot->mark_records.outcome_record);
      v1::HealthWindowsState state;
      if (!scores_hold || !outcomes_hold) {
        why =
            "the ledger no longer holds the rows at its marks (deleted by "
            "retention, or another ledger)";
      } else if (!state.ParseFromString(snapshot->state)) {
        why = "its state does not parse";
      } else if (absl::Status s = v->windows->Restore(state); !s.ok()) {
        why = std::string(s.message());
      } else {
        marks = snapshot->marks;
        restored[VersionKey(plan.name(), plan.version())] = v->windows.get();
        ++report.restored;
        continue;
      }
      if (!marks.has_value()) records.reset();  // they were this one's
    }
    if (snapshot != nullptr || store != nullptr) {
      LogEvent(snapshot != nullptr ? LogLevel::kWarning : LogLevel::kInfo,
               "health_snapshot_unused",
               {{"set", plan.name()},
                {"version", plan.version()},
                {"why", why},
                {"effect", "its windows are rebuilt from the ledger"}});
    }
    rebuild.push_back(v);
  }
  if (marks.has_value()) {
    // The rows after the marks, as the ledger's commits fed them.
    absl::StatusOr<FedRows> fed =
        FeedRows(ledger, *marks, ledger_marks, restored);
    if (!fed.ok()) return fed.status();
    report.tail_scores = fed->scores;
    report.tail_labelled = fed->labelled;
    LogEvent(fed->undecodable > 0 ? LogLevel::kWarning : LogLevel::kInfo,
             "health_restored",
             {{"versions", absl::StrCat(report.restored)},
              {"tail_scores", absl::StrCat(report.tail_scores)},
              {"tail_labelled", absl::StrCat(report.tail_labelled)},
              {"skipped_unparseable", absl::StrCat(fed->undecodable)}});
  }
  fed_marks_ = ledger_marks;
  marks_known_ = true;
  if (rebuild.empty()) return report;
  if (!options_.rebuild_in_background) {
    for (const auto& v : rebuild) {
      if (absl::Status s = RebuildWindows(ledger, *v->windows, options_.now());
          !s.ok()) {
        return s;
      }
      ++report.rebuilt;
    }
    return report;
  }
  // Serving starts meanwhile: the live feed leaves these versions alone
  // until the rebuild (rows up to ledger_marks) and its catch-up are done.
  {
    absl::MutexLock lock(&mu_);
    for (const auto& v : rebuild) rebuilding_.insert(v->windows.get());
  }
  report.background = static_cast<int>(rebuild.size());
  absl::MutexLock lock(&rebuild_mu_);
  rebuild_thread_ = std::thread(
      [this, l = &ledger, rebuild = std::move(rebuild), ledger_marks] {
        RebuildInBackground(*l, rebuild, ledger_marks);
      });
  return report;
}

absl::StatusOr<HealthMonitor::FedRows> HealthMonitor::FeedRows(
    Ledger& ledger, const LedgerMarks& after, const LedgerMarks& upto,
    const absl::flat_hash_map<SetVersion, HealthWindows*>& targets) {
  const absl::Time now = options_.now();
  StoredFeatureReader reader;
  std::vector<scorer::RawValue> values;
  FedRows fed;
  absl::Status s = ledger.ForEachScoreAfter(
      after.score_id,
      [&](const ScoreEntry& e) {
        auto it = targets.find(VersionKey(e.set_name, e.set_version));
        if (it == targets.end()) return;
        if (!reader
                 .Read(*it->second->plan(), e.layout.get(), e.features, &values)
                 .ok()) {
          ++fed.undecodable;
          return;
        }
        it->second->AddScored(e.log_odds, values, e.scored_at, now);
        ++fed.scores;
      },
      upto.score_id);
  if (!s.ok()) return s;
  s = ledger.ForEachLabelledAfter(
      after.outcome_seq,
      [&](const LabelledScore& l) {
        auto it = targets.find(VersionKey(l.set_name, l.set_version));
        if (it == targets.end()) return;
        it->second->AddLabelled(l.log_odds, l.label, l.scored_at, l.observed_at,
                                now);
        ++fed.labelled;
      },
      upto.outcome_seq);
  if (!s.ok()) return s;
  return fed;
}

void HealthMonitor::RebuildInBackground(
    Ledger& ledger, const std::vector<std::shared_ptr<Version>>& versions,
    const LedgerMarks& upto) {
  const absl::Time start = absl::Now();
  absl::flat_hash_map<SetVersion, HealthWindows*> targets;
  absl::Status failed;
  for (const auto& v : versions) {
    const scorer::ScoringPlan& plan = *v->windows->plan();
    targets[VersionKey(plan.name(), plan.version())] = v->windows.get();
    if (stop_rebuild_.load()) return;
    if (absl::Status s =
            RebuildWindows(ledger, *v->windows, options_.now(), &upto);
        !s.ok() && failed.ok()) {
      failed = s;
    }
  }
  // The rows committed since `upto`, in passes while the writer goes on;
  // the last pass holds feed_mu_, so no commit falls between it and the
  // live feed. Each pass reads what the ledger wrote during the one before.
  LedgerMarks done = upto;
  int64_t caught_up = 0;
  for (int pass = 0;; ++pass) {
    if (stop_rebuild_.load()) return;
    LedgerMarks target;
    {
      absl::MutexLock lock(&feed_mu_);
      target = fed_marks_;
    }
    const int64_t behind = (target.score_id - done.score_id) +
                           (target.outcome_seq - done.outcome_seq);
    if (behind <= kCatchUpUnderLock || pass >= kCatchUpPasses) {
      absl::MutexLock feed(&feed_mu_);
      absl::StatusOr<FedRows> fed = FeedRows(ledger, done, fed_marks_, targets);
      if (!fed.ok() && failed.ok()) failed = fed.status();
      if (fed.ok()) caught_up += fed->scores + fed->labelled;
      absl::MutexLock lock(&mu_);
      for (const auto& v : versions) rebuilding_.erase(v->windows.get());
      break;
    }
    absl::StatusOr<FedRows> fed = FeedRows(ledger, done, target, targets);
    if (!fed.ok() && failed.ok()) failed = fed.status();
    if (fed.ok()) caught_up += fed->scores + fed->labelled;
    done = target;
  }
  if (!failed.ok()) {
    LogEvent(LogLevel::kError, "health_rebuild_failed",
             {{"versions", absl::StrCat(versions.size())},
              {"error", failed.message()},
              {"effect",
               "the windows hold only part of their span; they fill as "
               "records arrive"}});
    return;
  }
  LogEvent(
      LogLevel::kInfo, "health_rebuild_done",
      {{"versions", absl::StrCat(versions.size())},
       {"caught_up_rows", absl::StrCat(caught_up)},
       {"seconds",
        absl::StrFormat("%.3f", absl::ToDoubleSeconds(absl::Now() - start))}});
}

bool HealthMonitor::Rebuilding() const {
  absl::ReaderMutexLock lock(&mu_);
  return !rebuilding_.empty();
}

void HealthMonitor::WaitForRebuild() {
  absl::MutexLock lock(&rebuild_mu_);
  if (rebuild_thread_.joinable()) rebuild_thread_.join();
}

HealthMonitor::~HealthMonitor() {
  stop_rebuild_.store(true);
  WaitForRebuild();
}

void HealthMonitor::Evaluate() {
  absl::MutexLock evaluating(&evaluate_mu_);
  std::vector<std::shared_ptr<Version>> all;
  absl::flat_hash_set<const HealthWindows*> rebuilding;
  {
    absl::ReaderMutexLock lock(&mu_);
    for (const auto& [name, list] : versions_) {
      all.insert(all.end(), list.begin(), list.end());
    }
    rebuilding = rebuilding_;
  }
  // Control limits for versions seen for the first time (a fraction of a
  // second per chart), before the clock is read for the figures.
  for (const auto& v : all) {
    if (!v->windows->NeedsCusumLimits()) continue;
    const scorer::ScoringPlan& plan = *v->windows->plan();
    std::vector<CusumLimit> limits =
        ChooseCusumLimits(plan.set(), options_.windows.cusum);
    LogLimits(plan, limits);
    v->windows->SetCusumLimits(std::move(limits));
  }
  const absl::Time now = options_.now();
  std::vector<v1::SetHealth> results;
  results.reserve(all.size());
  absl::flat_hash_map<SetVersion, Tracked> kept;
  for (const auto& v : all) {
    v1::SetHealth health = v->windows->Figures(now);
    *health.mutable_evaluated_at() = ToTimestamp(now);
    if (rebuilding.contains(v->windows.get())) {
      // Figures of part of the span: shown, not judged.
      health.add_notes(
          "windows incomplete: being rebuilt from the ledger in the "
          "background (no snapshot of this version fitted); drift is not "
          "judged until the rebuild ends");
      results.push_back(std::move(health));
      continue;
    }
    const SetVersion key = VersionKey(health.set(), health.version());
    auto it = trackers_.find(key);
    if (it == trackers_.end() || it->second.windows != v->windows.get()) {
      // New windows (a version loaded again starts afresh). The policy was
      // checked when the monitor was made, so Create cannot fail.
      absl::StatusOr<DriftTracker> tracker =
          DriftTracker::Create(options_.policy);
      if (!tracker.ok()) {
        results.push_back(std::move(health));
        continue;
      }
      it = trackers_.insert_or_assign(key, Tracked{v->windows.get(), *tracker})
               .first;
    }
    std::optional<PolicyTransition> t = it->second.tracker.Evaluate(
        options_.policy, v->windows->plan()->set().provenance(), &health);
    kept.insert_or_assign(key, std::move(it->second));
    if (t) {
      LogTransition(health, *t);
      absl::MutexLock lock(&transitions_mu_);
      ++transitions_[TransitionKey(health.set(), health.version(),
                                   DriftStateName(t->from),
                                   DriftStateName(t->to), t->trigger)];
    }
    results.push_back(std::move(health));
  }
  trackers_ = std::move(kept);
  {
    // Counts of versions no longer monitored go with them.
    absl::MutexLock lock(&transitions_mu_);
    for (auto it = transitions_.begin(); it != transitions_.end();) {
      const auto& [set, version, from, to, trigger] = it->first;
      if (trackers_.contains(VersionKey(set, version))) {
        ++it;
      } else {
        transitions_.erase(it++);
      }
    }
  }
  absl::MutexLock lock(&mu_);
  for (size_t i = 0; i < results.size(); ++i) {
    all[i]->health = std::move(results[i]);
  }
}

absl::StatusOr<v1::SetHealth> HealthMonitor::Health(
    absl::string_view name) const {
  absl::ReaderMutexLock lock(&mu_);
  auto it = versions_.find(name);
  if (it == versions_.end() || it->second.empty()) {
    return absl::NotFoundError(
        absl::StrCat("no coefficient set named '", name, "' is monitored"));
  }
  v1::SetHealth health = it->second.front()->health;
  if (!health.has_evaluated_at()) {
    health.add_notes("not evaluated yet: figures appear after the first tick");
  }
  return health;
}

std::vector<v1::SetHealth> HealthMonitor::AllHealth() const {
  std::vector<v1::SetHealth> out;
  {
    absl::ReaderMutexLock lock(&mu_);
    for (const auto& [name, list] : versions_) {
      for (const auto& v : list) out.push_back(v->health);
    }
  }
  std::stable_sort(out.begin(), out.end(),
                   [](const v1::SetHealth& a, const v1::SetHealth& b) {
                     return a.set() < b.set();
                   });
  return out;
}

std::vector<TransitionCount> HealthMonitor::Transitions() const {
  std::vector<TransitionCount> out;
  {
    absl::MutexLock lock(&transitions_mu_);
    for (const auto& [key, n] : transitions_) {
      const auto& [set, version, from, to, trigger] = key;
      out.push_back({set, version, from, to, trigger, n});
    }
  }
  std::sort(out.begin(), out.end(), [](const auto& a, const auto& b) {
    return std::tie(a.set, a.version, a.from, a.to, a.trigger) <
           std::tie(b.set, b.version, b.from, b.to, b.trigger);
  });
  return out;
}

std::vector<UnmonitoredCount> HealthMonitor::Unmonitored() const {
  std::vector<UnmonitoredCount> out;
  absl::MutexLock lock(&unmonitored_mu_);
  for (const auto& [key, c] : unmonitored_) out.push_back(c);
  std::sort(out.begin(), out.end(), [](const auto& a, const auto& b) {
    return std::tie(a.set, a.version, a.kind) <
           std::tie(b.set, b.version, b.kind);
  });
  return out;
}

}  // namespace plumbline::daemon
