// File: daemon/registry/lifecycle.cc
#include "daemon/registry/lifecycle.h"

#include <map>
#include <optional>
#include <utility>

#include "absl/status/status.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_join.h"
#include "daemon/registry/compatibility.h"
#include "daemon/util/event_log.h"
#include "google/protobuf/util/message_differencer.h"
#include "scorer/coefficient_set.h"

namespace plumbline::daemon {
namespace {

SetVersion Key(absl::string_view set, absl::string_view version) {
  return SetVersion{std::string(set), std::string(version)};
}

constexpr char kSetsDirectory[] = "sets directory";

// True while this thread runs Refresh: the registry's Resolve call it makes
// only reads (see Lifecycle::Refresh).
thread_local bool refreshing = false;

}  // namespace

Lifecycle::Lifecycle(VersionStore* store, std::function<absl::Time()> now)
    : store_(store), now_(std::move(now)) {}

void Lifecycle::Attach(SetRegistry* registry,
                       std::function<void(const ReloadReport&)> on_change) {
  absl::MutexLock lock(&attach_mu_);
  registry_ = registry;
  on_change_ = std::move(on_change);
}

void Lifecycle::Detach() {
  absl::MutexLock lock(&attach_mu_);
  registry_ = nullptr;
  on_change_ = nullptr;
}

absl::StatusOr<std::vector<std::string>> Lifecycle::ChangesFromActive(
    const std::string& set, const v1::CoefficientSet& to) {
  absl::StatusOr<std::optional<VersionRecord>> active = store_->Active(set);
  if (!active.ok()) return active.status();
  if (!active->has_value() || (*active)->version == to.version()) {
    return std::vector<std::string>();
  }
  absl::StatusOr<PlanPtr> plan = PlanFor(**active, nullptr);
  if (!plan.ok()) return plan.status();
  return SchemaChanges((*plan)->set(), to);
}

absl::Status Lifecycle::CheckSchemaChanges(
    absl::string_view what, const StateChange& change,
    const std::vector<std::string>& changes, absl::Time now,
    std::vector<AuditRecord>* audit) {
  if (changes.empty()) return absl::OkStatus();
  if (!change.allow_schema_change) return SchemaChangeRefused(what, changes);
  audit->push_back({now, change.set, change.version, "schema_change_allowed",
                    change.actor, absl::StrJoin(changes, "; ")});
  return absl::OkStatus();
}

absl::StatusOr<PlanPtr> Lifecycle::PlanFor(const VersionRecord& record,
                                           const PlanMap* from_files) {
  const SetVersion key = Key(record.set, record.version);
  if (auto it = plans_.find(key); it != plans_.end()) return it->second;
  PlanPtr plan;
  if (from_files != nullptr) {
    if (auto it = from_files->find(record.set);
        it != from_files->end() && it->second->version() == record.version) {
      plan = it->second;
    }
  }
  if (plan == nullptr) {
    const std::string source =
        absl::StrCat("ledger: set ", record.set, " version ", record.version);
    absl::StatusOr<v1::CoefficientSet> set =
        scorer::ParseCoefficientSet(record.document, source);
    if (!set.ok()) return set.status();
    absl::StatusOr<PlanPtr> compiled =
        scorer::ScoringPlan::Compile(*std::move(set), source);
    if (!compiled.ok()) return compiled.status();
    plan = *std::move(compiled);
  }
  plans_.emplace(key, plan);
  return plan;
}

absl::Status Lifecycle::ActivateInStore(const std::string& set,
                                        const std::string& version,
                                        const std::string& actor,
                                        const std::string& reason,
                                        absl::Time at) {
  absl::StatusOr<std::optional<VersionRecord>> active = store_->Active(set);
  if (!active.ok()) return active.status();
  if (active->has_value()) {
    const std::string& old = (*active)->version;
    if (absl::Status s = store_->SetState(set, old, VersionState::kRetired);
        !s.ok()) {
      return s;
    }
    if (absl::Status s = store_->AppendAudit(
            {at, set, old, "retired", actor,
             absl::StrCat("replaced by version ", version)});
        !s.ok()) {
      return s;
    }
  }
  if (absl::Status s = store_->SetState(set, version, VersionState::kActive);
      !s.ok()) {
    return s;
  }
  if (absl::Status s = store_->RecordActivation(set, version, at); !s.ok()) {
    return s;
  }
  return store_->AppendAudit({at, set, version, "activated", actor, reason});
}

absl::StatusOr<ServingMap> Lifecycle::Resolve(const PlanMap& from_files) {
  absl::MutexLock lock(&mu_);
  const absl::Time now = now_();
  // Under Refresh nothing is recorded: the files were recorded by the Reload
  // that read them, and another replica's change is only read.
  auto record_files = [&]() -> absl::Status {
    mu_.AssertHeld();  // the caller holds it; tells the lock analysis
    for (const auto& [name, plan] : from_files) {
      // A file plan already recorded (every refresh after the reload that
      // read it) needs neither the JSON nor the comparison below.
      if (auto it = plans_.find(Key(name, plan->version()));
          it != plans_.end() && it->second == plan) {
        continue;
      }
      absl::StatusOr<std::string> document =
          scorer::CoefficientSetToJson(plan->set());
      if (!document.ok()) return document.status();
      absl::StatusOr<std::optional<VersionRecord>> stored =
          store_->Get(name, plan->version());
      if (!stored.ok()) return stored.status();
      const std::optional<VersionRecord>& known = *stored;
      if (known.has_value()) {
        // By meaning, not by bytes: the JSON of a map field (baselines'
        // level proportions) has no fixed key order.
        absl::StatusOr<v1::CoefficientSet> stored_set =
            scorer::ParseCoefficientSet(known->document, "the ledger");
        const bool same = stored_set.ok() &&
                          google::protobuf::util::MessageDifferencer::Equals(
                              *stored_set, plan->set());
        if (!same &&
            warned_.insert({Key(name, plan->version()), plan->source()})
                .second) {
          LogEvent(LogLevel::kWarning, "set_version_reused",
                   {{"set", name},
                    {"version", plan->version()},
                    {"file", plan->source()},
                    {"effect",
                     "the file differs from the version the ledger holds; "
                     "versions are immutable, the ledger's copy is used: "
                     "give the changed set a new version"}});
        }
        if (known->state == VersionState::kRetired) {
          // The file of a retired version is back (a restore, a removal
          // undone). A set serving nothing serves it again; a set serving
          // another version keeps it, and the log says how to switch.
          absl::StatusOr<std::optional<VersionRecord>> active =
              store_->Active(name);
          if (!active.ok()) return active.status();
          if (!active->has_value()) {
            if (absl::Status s =
                    ActivateInStore(name, known->version, kSetsDirectory,
                                    absl::StrCat("its file is back in the sets "
                                                 "directory: ",
                                                 plan->source()),
                                    now);
                !s.ok()) {
              return s;
            }
            LogEvent(LogLevel::kInfo, "set_version_reactivated",
                     {{"set", name},
                      {"version", known->version},
                      {"file", plan->source()}});
          } else if (warned_
                         .insert({Key(name, known->version),
                                  absl::StrCat("retired:", plan->source())})
                         .second) {
            LogEvent(LogLevel::kWarning, "set_file_version_retired",
                     {{"set", name},
                      {"version", known->version},
                      {"file", plan->source()},
                      {"serving", (*active)->version},
                      {"effect",
                       absl::StrCat("the file names a retired version; "
                                    "version ",
                                    (*active)->version,
                                    " keeps serving (plumbctl activate --set ",
                                    name, " --version ", known->version,
                                    " serves the file's)")}});
          }
        }
        continue;
      }
      VersionRecord record;
      record.set = name;
      record.version = plan->version();
      record.state = VersionState::kCandidate;  // activated just below
      record.created_at = now;
      record.created_by = kSetsDirectory;
      record.reason = absl::StrCat("file ", plan->source());
      record.source = plan->source();
      record.document = *std::move(document);
      if (absl::Status s = store_->Insert(record); !s.ok()) return s;
      if (absl::Status s =
              store_->AppendAudit({now, name, record.version, "loaded",
                                   kSetsDirectory, record.reason});
          !s.ok()) {
        return s;
      }
      plans_.emplace(Key(name, record.version), plan);
      // A file cannot say "allow": a version whose schema would refuse
      // today's calls stays a candidate for a person to activate.
      absl::StatusOr<std::vector<std::string>> changes =
          ChangesFromActive(name, plan->set());
      if (!changes.ok()) return changes.status();
      if (!changes->empty()) {
        const std::string why = absl::StrCat(
            "not activated: calls valid for the active version would fail "
            "or change meaning: ",
            absl::StrJoin(*changes, "; "),
            " (plumbctl activate --allow_schema_change serves it)");
        LogEvent(LogLevel::kError, "set_version_not_activated",
                 {{"set", name},
                  {"version", record.version},
                  {"file", plan->source()},
                  {"error", why}});
        if (absl::Status s =
                store_->AppendAudit({now, name, record.version, "not_activated",
                                     kSetsDirectory, why});
            !s.ok()) {
          return s;
        }
        continue;
      }
      if (absl::Status s =
              ActivateInStore(name, record.version, kSetsDirectory,
                              "new version in the sets directory", now);
          !s.ok()) {
        return s;
      }
    }
    // A set some file provided that no file provides now leaves service.
    absl::StatusOr<std::vector<VersionRecord>> all = store_->List("");
    if (!all.ok()) return all.status();
    std::map<std::string, bool> file_managed;
    for (const VersionRecord& r : *all) {
      file_managed[r.set] = file_managed[r.set] || !r.source.empty();
    }
    for (const VersionRecord& r : *all) {
      if (r.state != VersionState::kActive || from_files.contains(r.set) ||
          !file_managed[r.set]) {
        continue;
      }
      if (absl::Status s =
              store_->SetState(r.set, r.version, VersionState::kRetired);
          !s.ok()) {
        return s;
      }
      if (absl::Status s = store_->AppendAudit(
              {now, r.set, r.version, "retired", kSetsDirectory,
               "its file left the sets directory"});
          !s.ok()) {
        return s;
      }
    }
    return absl::OkStatus();
  };
  if (!refreshing) {
    if (absl::Status s = store_->InTransaction(record_files); !s.ok()) {
      return s;
    }
  }

  absl::StatusOr<std::vector<VersionRecord>> all = store_->List("");
  if (!all.ok()) return all.status();
  ServingMap serving;
  std::map<std::string, std::vector<PlanPtr>> shadows;
  for (const VersionRecord& r : *all) {
    if (r.state != VersionState::kActive && r.state != VersionState::kShadow) {
      continue;
    }
    absl::StatusOr<PlanPtr> plan = PlanFor(r, &from_files);
    if (!plan.ok()) {
      // Only a document written by another build could fail here.
      LogEvent(LogLevel::kError, "set_version_unusable",
               {{"set", r.set},
                {"version", r.version},
                {"error", plan.status().message()}});
      continue;
    }
    if (r.state == VersionState::kActive) {
      serving[r.set].active = *plan;
    } else {
      shadows[r.set].push_back(*plan);
    }
  }
  for (auto& [name, list] : shadows) {
    auto it = serving.find(name);
    if (it != serving.end()) it->second.shadows = std::move(list);
  }
  return serving;
}

absl::StatusOr<std::vector<VersionRecord>> Lifecycle::List(
    const std::string& set) {
  absl::MutexLock lock(&mu_);
  return store_->List(set);
}

absl::StatusOr<VersionRecord> Lifecycle::AddCandidate(NewVersion version) {
  const std::string name = version.set.name();
  const std::string ver = version.set.version();
  absl::StatusOr<PlanPtr> plan = scorer::ScoringPlan::Compile(
      version.set, absl::StrCat("candidate ", name, " version ", ver));
  if (!plan.ok()) {
    return absl::InvalidArgumentError(plan.status().message());
  }
  absl::StatusOr<std::string> document =
      scorer::CoefficientSetToJson(version.set);
  if (!document.ok()) return document.status();
  VersionRecord record;
  record.set = name;
  record.version = ver;
  record.state = VersionState::kCandidate;
  record.created_by = version.created_by;
  record.reason = version.reason;
  record.comparison = version.comparison;
  record.document = *std::move(document);
  {
    absl::MutexLock lock(&mu_);
    record.created_at = now_();
    // The check against the active version and the insert in one
    // transaction: another replica may change the active version meanwhile.
    absl::Status s = store_->InTransaction([&]() -> absl::Status {
      mu_.AssertHeld();  // the caller holds it; tells the lock analysis
      absl::StatusOr<std::vector<std::string>> changes =
          ChangesFromActive(name, version.set);
      if (!changes.ok()) return changes.status();
      std::vector<AuditRecord> schema_audit;
      if (absl::Status st = CheckSchemaChanges(
              absl::StrCat("load version '", ver, "' of set '", name, "'"),
              StateChange{name, ver, version.created_by, version.reason,
                          version.allow_schema_change},
              *changes, record.created_at, &schema_audit);
          !st.ok()) {
        return st;
      }
      if (absl::Status st = store_->Insert(record); !st.ok()) return st;
      for (const AuditRecord& entry : schema_audit) {
        if (absl::Status st = store_->AppendAudit(entry); !st.ok()) return st;
      }
      for (AuditRecord entry : version.audit) {
        entry.at = record.created_at;
        entry.set = name;
        entry.version = ver;
        if (absl::Status st = store_->AppendAudit(entry); !st.ok()) return st;
      }
      return store_->AppendAudit(
          {record.created_at, name, ver, "loaded", version.created_by,
           absl::StrCat("as candidate: ", version.reason)});
    });
    if (!s.ok()) return s;
    plans_.emplace(Key(name, ver), *plan);
  }
  LogEvent(LogLevel::kInfo, "candidate_added",
           {{"set", name}, {"version", ver}, {"by", version.created_by}});
  return record;
}

absl::StatusOr<VersionRecord> Lifecycle::ChangeActive(
    const StateChange& change, const std::string& before,
    const std::string& after,
    const std::function<absl::Status(const VersionRecord&)>& check) {
  VersionRecord result;
  {
    absl::MutexLock lock(&mu_);
    // Read, check and write in one transaction: a replica sharing the store
    // may have changed the set since this one last looked, and its changes
    // and ours take turns.
    absl::Status s = store_->InTransaction([&]() -> absl::Status {
      mu_.AssertHeld();  // the caller holds it; tells the lock analysis
      absl::StatusOr<std::optional<VersionRecord>> stored =
          store_->Get(change.set, change.version);
      if (!stored.ok()) return stored.status();
      std::optional<VersionRecord>& record = *stored;
      if (!record.has_value()) {
        return absl::NotFoundError(absl::StrCat(
            "set '", change.set, "' has no version '", change.version,
            "' (plumbctl versions --set ", change.set, " lists them)"));
      }
      if (record->state == VersionState::kActive) {
        return absl::FailedPreconditionError(
            absl::StrCat("version '", change.version, "' of set '", change.set,
                         "' is already active"));
      }
      if (absl::Status st = check(*record); !st.ok()) return st;
      // Compile before writing, so a version that cannot serve never becomes
      // active.
      absl::StatusOr<PlanPtr> plan = PlanFor(*record, nullptr);
      if (!plan.ok()) {
        return absl::FailedPreconditionError(
            absl::StrCat("version '", change.version,
                         "' cannot be served: ", plan.status().message()));
      }
      const absl::Time now = now_();
      absl::StatusOr<std::vector<std::string>> changes =
          ChangesFromActive(change.set, (*plan)->set());
      if (!changes.ok()) return changes.status();
      std::vector<AuditRecord> schema_audit;
      if (absl::Status st = CheckSchemaChanges(
              absl::StrCat(before.empty() && after.empty() ? "activate"
                           : !before.empty()               ? before
                                                           : after,
                           " version '", change.version, "' of set '",
                           change.set, "'"),
              change, *changes, now, &schema_audit);
          !st.ok()) {
        return st;
      }
      for (const AuditRecord& entry : schema_audit) {
        if (absl::Status st = store_->AppendAudit(entry); !st.ok()) return st;
      }
      if (!before.empty()) {
        if (absl::Status st =
                store_->AppendAudit({now, change.set, change.version, before,
                                     change.actor, change.reason});
            !st.ok()) {
          return st;
        }
      }
      if (absl::Status st = ActivateInStore(change.set, change.version,
                                            change.actor, change.reason, now);
          !st.ok()) {
        return st;
      }
      if (!after.empty()) {
        if (absl::Status st =
                store_->AppendAudit({now, change.set, change.version, after,
                                     change.actor, change.reason});
            !st.ok()) {
          return st;
        }
      }
      record->state = VersionState::kActive;
      result = *std::move(record);
      return absl::OkStatus();
    });
    if (!s.ok()) return s;
  }
  LogEvent(LogLevel::kInfo, "version_activated",
           {{"set", change.set},
            {"version", change.version},
            {"action",
             after.empty() ? (before.empty() ? "activated" : before) : after},
            {"actor", change.actor}});
  Apply();
  return result;
}

absl::StatusOr<VersionRecord> Lifecycle::Activate(const StateChange& change) {
  return ChangeActive(change, "", "",
                      [](const VersionRecord&) { return absl::OkStatus(); });
}

absl::StatusOr<VersionRecord> Lifecycle::Approve(const StateChange& change) {
  return ChangeActive(
      change, "approved", "", [&](const VersionRecord& r) -> absl::Status {
        if (r.state == VersionState::kCandidate) {
          return absl::OkStatus();
        }
        return absl::FailedPreconditionError(
            absl::StrCat("version '", r.version, "' of set '", r.set, "' is ",
                         VersionStateName(r.state),
                         ", not a candidate; only candidates are approved "
                         "(plumbctl activate makes any version active)"));
      });
}

absl::StatusOr<VersionRecord> Lifecycle::Promote(const StateChange& change) {
  return ChangeActive(change, "", "promoted",
                      [](const VersionRecord&) { return absl::OkStatus(); });
}

absl::StatusOr<VersionRecord> Lifecycle::Shadow(const StateChange& change) {
  VersionRecord result;
  {
    absl::MutexLock lock(&mu_);
    // Read, check and write in one transaction, as ChangeActive.
    absl::Status s = store_->InTransaction([&]() -> absl::Status {
      mu_.AssertHeld();  // the caller holds it; tells the lock analysis
      absl::StatusOr<std::optional<VersionRecord>> stored =
          store_->Get(change.set, change.version);
      if (!stored.ok()) return stored.status();
      std::optional<VersionRecord>& record = *stored;
      if (!record.has_value()) {
        return absl::NotFoundError(absl::StrCat(
            "set '", change.set, "' has no version '", change.version, "'"));
      }
      if (record->state == VersionState::kActive ||
          record->state == VersionState::kShadow) {
        return absl::FailedPreconditionError(absl::StrCat(
            "version '", change.version, "' of set '", change.set, "' is ",
            VersionStateName(record->state),
            "; only candidate and retired versions can become shadows"));
      }
      absl::StatusOr<PlanPtr> plan = PlanFor(*record, nullptr);
      if (!plan.ok()) {
        return absl::FailedPreconditionError(plan.status().message());
      }
      const absl::Time now = now_();
      // A shadow scores the active version's calls: one that would refuse
      // them records nothing.
      absl::StatusOr<std::vector<std::string>> changes =
          ChangesFromActive(change.set, (*plan)->set());
      if (!changes.ok()) return changes.status();
      std::vector<AuditRecord> schema_audit;
      if (absl::Status st = CheckSchemaChanges(
              absl::StrCat("shadow version '", change.version, "' of set '",
                           change.set, "'"),
              change, *changes, now, &schema_audit);
          !st.ok()) {
        return st;
      }
      for (const AuditRecord& entry : schema_audit) {
        if (absl::Status st = store_->AppendAudit(entry); !st.ok()) return st;
      }
      if (absl::Status st = store_->SetState(change.set, change.version,
                                             VersionState::kShadow);
          !st.ok()) {
        return st;
      }
      if (absl::Status st =
              store_->AppendAudit({now, change.set, change.version, "shadowed",
                                   change.actor, change.reason});
          !st.ok()) {
        return st;
      }
      record->state = VersionState::kShadow;
      result = *std::move(record);
      return absl::OkStatus();
    });
    if (!s.ok()) return s;
  }
  Apply();
  return result;
}

absl::StatusOr<VersionRecord> Lifecycle::StopShadow(const StateChange& change) {
  VersionRecord result;
  {
    absl::MutexLock lock(&mu_);
    // Read, check and write in one transaction, as ChangeActive.
    absl::Status s = store_->InTransaction([&]() -> absl::Status {
      mu_.AssertHeld();  // the caller holds it; tells the lock analysis
      absl::StatusOr<std::optional<VersionRecord>> stored =
          store_->Get(change.set, change.version);
      if (!stored.ok()) return stored.status();
      std::optional<VersionRecord>& record = *stored;
      if (!record.has_value() || record->state != VersionState::kShadow) {
        return absl::FailedPreconditionError(
            absl::StrCat("version '", change.version, "' of set '", change.set,
                         "' is not a shadow"));
      }
      const absl::Time now = now_();
      if (absl::Status st = store_->SetState(change.set, change.version,
                                             VersionState::kRetired);
          !st.ok()) {
        return st;
      }
      if (absl::Status st = store_->AppendAudit(
              {now, change.set, change.version, "shadow_stopped", change.actor,
               change.reason});
          !st.ok()) {
        return st;
      }
      record->state = VersionState::kRetired;
      result = *std::move(record);
      return absl::OkStatus();
    });
    if (!s.ok()) return s;
  }
  Apply();
  return result;
}

absl::StatusOr<VersionRecord> Lifecycle::Rollback(const StateChange& change) {
  std::string previous;
  {
    absl::MutexLock lock(&mu_);
    absl::StatusOr<std::optional<VersionRecord>> active =
        store_->Active(change.set);
    if (!active.ok()) return active.status();
    if (!active->has_value()) {
      return absl::FailedPreconditionError(
          absl::StrCat("set '", change.set, "' has no active version"));
    }
    absl::StatusOr<std::optional<std::string>> before =
        store_->PreviousActive(change.set, (*active)->version);
    if (!before.ok()) return before.status();
    if (!before->has_value()) {
      return absl::FailedPreconditionError(absl::StrCat(
          "set '", change.set, "' has had no active version before '",
          (*active)->version, "': nothing to roll back to"));
    }
    previous = **before;
  }
  StateChange to = change;
  to.version = previous;
  to.allow_schema_change = true;  // back to what callers used before
  if (to.reason.empty())
    to.reason = "rollback to the previously active version";
  return ChangeActive(to, "", "rolled_back",
                      [](const VersionRecord&) { return absl::OkStatus(); });
}

absl::StatusOr<std::vector<AuditRecord>> Lifecycle::Audit(
    const std::string& set) {
  absl::MutexLock lock(&mu_);
  return store_->Audit(set);
}

absl::StatusOr<std::vector<std::string>> Lifecycle::AuditActors(
    const std::string& prefix) {
  absl::MutexLock lock(&mu_);
  return store_->AuditActors(prefix);
}

absl::Status Lifecycle::AppendAudit(AuditRecord record) {
  absl::MutexLock lock(&mu_);
  record.at = OrNow(record.at, now_());
  return store_->InTransaction(
      [&]() -> absl::Status { return store_->AppendAudit(record); });
}

absl::StatusOr<PlanPtr> Lifecycle::Plan(const std::string& set,
                                        const std::string& version) {
  absl::MutexLock lock(&mu_);
  absl::StatusOr<std::optional<VersionRecord>> stored =
      store_->Get(set, version);
  if (!stored.ok()) return stored.status();
  const std::optional<VersionRecord>& record = *stored;
  if (!record.has_value()) {
    return absl::NotFoundError(
        absl::StrCat("set '", set, "' has no version '", version, "'"));
  }
  return PlanFor(*record, nullptr);
}

void Lifecycle::Refresh() {
  refreshing = true;
  Apply();
  refreshing = false;
}

void Lifecycle::Apply() {
  absl::MutexLock lock(&attach_mu_);
  if (registry_ == nullptr) return;
  absl::StatusOr<ReloadReport> report = registry_->Refresh();
  if (!report.ok()) {
    LogEvent(LogLevel::kError, "refresh_failed",
             {{"error", report.status().message()}});
    return;
  }
  if (on_change_) on_change_(*report);
}

}  // namespace plumbline::daemon
