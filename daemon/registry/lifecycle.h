// File: daemon/registry/lifecycle.h
//
// The life of coefficient-set versions in plumbd: which version of each set
// is active (its scores are returned), which are candidates (awaiting a
// person's approval), shadows (scored alongside, never returned) or retired.
// The state lives in the ledger (daemon/version_store.h); every change is an
// audit entry with its time, actor and reason.
//
// Rules for the sets directory (the lifecycle is the registry's resolver):
//   - a (set, version) seen in a file for the first time becomes active,
//     retiring the version that was active (actor "sets directory");
//   - a known (set, version) changes nothing: the ledger's state wins, so an
//     approved refit keeps serving across restarts and reloads while the
//     file still holds the version it was fitted from. Versions are
//     immutable: a file whose content changed under a known version is
//     ignored (logged once); bump the version to deploy a change;
//   - a set that was ever provided by a file and no longer is loses its
//     active version (retired): removing the file takes it out of service.
// Changes of state (Activate, Approve, Shadow, Rollback) are an atomic swap
// in the registry: requests in flight finish on the version they started
// with, none fails.
//
//   Lifecycle lifecycle(store.get());
//   SetRegistry registry(dir, &lifecycle);
//   lifecycle.Attach(&registry, [](const ReloadReport& r) { ... });
//   registry.Reload();
//   auto v = lifecycle.Approve({.set = "courier", .version = "r7",
//                               .actor = "alice", .reason = "reviewed"});
//
// Several replicas may share one store (daemon/pg/pg_version_store.h): a
// change reads, checks and writes in one store transaction, and those of
// different replicas take turns; each replica calls Refresh when the store
// says another one changed something.
//
// Thread-safe: every method may be called from any thread; changes are
// serialized.
#ifndef PLUMBLINE_DAEMON_REGISTRY_LIFECYCLE_H_
#define PLUMBLINE_DAEMON_REGISTRY_LIFECYCLE_H_

#include <functional>
#include <string>
#include <vector>

#include "absl/base/thread_annotations.h"
#include "absl/container/flat_hash_map.h"
#include "absl/container/flat_hash_set.h"
#include "absl/status/statusor.h"
#include "absl/synchronization/mutex.h"
#include "absl/time/time.h"
#include "daemon/registry/version_store.h"
#include "daemon/scoring/set_registry.h"
#include "daemon/util/set_version.h"
#include "plumbline/v1/coefficient_set.pb.h"

namespace plumbline::daemon {

// Who asks for a change of state, and why.
struct StateChange {
  std::string set;
  std::string version;  // unused by Rollback
  std::string actor;
  std::string reason;
  // Serve a version although calls valid for the active one would fail or
  // change meaning (daemon/registry/compatibility.h); the differences go to
  // the audit as "schema_change_allowed". Without it such a change is
  // FAILED_PRECONDITION listing them. Rollback always allows it (it returns
  // to what callers used before) and records it likewise.
  bool allow_schema_change = false;
};

// A new version that does not come from the sets directory.
struct NewVersion {
  v1::CoefficientSet set;
  std::string created_by;
  std::string reason;
  std::string comparison;
  // The audit entries written with it (action "loaded" is always written).
  std::vector<AuditRecord> audit;
  // As StateChange::allow_schema_change, against the active version.
  bool allow_schema_change = false;
};

class Lifecycle final : public VersionResolver {
 public:
  explicit Lifecycle(
      VersionStore* store,
      std::function<absl::Time()> now = [] { return absl::Now(); });

  Lifecycle(const Lifecycle&) = delete;
  Lifecycle& operator=(const Lifecycle&) = delete;

  // The registry to refresh after each change of state and what to call
  // with its report (health names, monitor windows). Call once, before the
  // registry's first Reload.
  void Attach(SetRegistry* registry,
              std::function<void(const ReloadReport&)> on_change);
  // Stops refreshing the registry and calling on_change; waits for a call
  // in progress to return. Changes after this are still recorded.
  void Detach();

  // Re-reads the store and refreshes the registry and calls on_change as
  // after a change made here: for changes another plumbd replica made in a
  // shared store (PgVersionStore::Watch calls it on its own thread). It
  // records nothing: the sets directory's rules are applied by Reload and
  // by this process's own changes, so a replica whose sets directory lags
  // another's never undoes that one's versions. Without an attached
  // registry it does nothing. Safe from any thread at any time.
  // REQUIRES: the caller holds no lock of this lifecycle or its registry.
  void Refresh();

  // VersionResolver: records new file versions, applies the rules above.
  absl::StatusOr<ServingMap> Resolve(const PlanMap& from_files) override;

  // Versions of `set` (all sets when empty), newest first.
  absl::StatusOr<std::vector<VersionRecord>> List(const std::string& set);

  // Stores a validated set as a CANDIDATE. ALREADY_EXISTS if known;
  // INVALID_ARGUMENT naming the field if it does not validate or compile.
  absl::StatusOr<VersionRecord> AddCandidate(NewVersion version);

  // Makes a known version active (any state but active); the active one is
  // retired. FAILED_PRECONDITION if it is already active, NOT_FOUND if the
  // set has no such version.
  absl::StatusOr<VersionRecord> Activate(const StateChange& change);
  // As Activate, for a CANDIDATE only (a person's approval); recorded as
  // "approved" then "activated". FAILED_PRECONDITION otherwise.
  absl::StatusOr<VersionRecord> Approve(const StateChange& change);
  // Promotion by a refit job in mode AUTO: as Activate, recorded "promoted".
  absl::StatusOr<VersionRecord> Promote(const StateChange& change);
  // Marks a candidate or retired version SHADOW. FAILED_PRECONDITION for the
  // active version.
  absl::StatusOr<VersionRecord> Shadow(const StateChange& change);
  // Retires a SHADOW that keeps failing (plumbd, after the tracker's limit):
  // recorded "shadow_stopped" with change.reason. FAILED_PRECONDITION if
  // the version is not a shadow.
  absl::StatusOr<VersionRecord> StopShadow(const StateChange& change);
  // Activates the version that was active before the current one.
  // FAILED_PRECONDITION if the set has no active version or no earlier one.
  absl::StatusOr<VersionRecord> Rollback(const StateChange& change);

  absl::StatusOr<std::vector<AuditRecord>> Audit(const std::string& set);
  // VersionStore::AuditActors.
  absl::StatusOr<std::vector<std::string>> AuditActors(
      const std::string& prefix);
  // Appends an entry (refit jobs record fits, failures and comparisons).
  absl::Status AppendAudit(AuditRecord record);

  // The compiled plan of a known version (cached).
  absl::StatusOr<PlanPtr> Plan(const std::string& set,
                               const std::string& version);

 private:
  // Activates change.version after `check` passed, with audit entries
  // `before` (e.g. "approved") and `after` (e.g. "promoted") around the
  // "activated" one; empty ones are left out. REQUIRES: mu_ not held.
  absl::StatusOr<VersionRecord> ChangeActive(
      const StateChange& change, const std::string& before,
      const std::string& after,
      const std::function<absl::Status(const VersionRecord&)>& check);
  // Writes the retirement of the active version and the activation of
  // `version` (the store is in a transaction).
  absl::Status ActivateInStore(const std::string& set,
                               const std::string& version,
                               const std::string& actor,
                               const std::string& reason, absl::Time at)
      ABSL_EXCLUSIVE_LOCKS_REQUIRED(mu_);
  // Compiled plan of `record`, preferring the cache, then `from_files`.
  absl::StatusOr<PlanPtr> PlanFor(const VersionRecord& record,
                                  const PlanMap* from_files)
      ABSL_EXCLUSIVE_LOCKS_REQUIRED(mu_);
  // Refreshes the registry and reports the change.
  void Apply();
  // The schema changes from `set`'s active version to `to` (none when the
  // set has no active version or `to` is it).
  absl::StatusOr<std::vector<std::string>> ChangesFromActive(
      const std::string& set, const v1::CoefficientSet& to)
      ABSL_EXCLUSIVE_LOCKS_REQUIRED(mu_);
  // OK when `changes` is empty; else the refusal, unless `allow`, when the
  // audit entry to write with the change is appended to `audit`.
  static absl::Status CheckSchemaChanges(
      absl::string_view what, const StateChange& change,
      const std::vector<std::string>& changes, absl::Time now,
      std::vector<AuditRecord>* audit);

  VersionStore* const store_;
  const std::function<absl::Time()> now_;
  // Held while the registry is refreshed and on_change runs, so Detach
  // waits for both. Lock order: attach_mu_ before the registry's locks.
  absl::Mutex attach_mu_;
  SetRegistry* registry_ ABSL_GUARDED_BY(attach_mu_) = nullptr;
  std::function<void(const ReloadReport&)> on_change_
      ABSL_GUARDED_BY(attach_mu_);

  absl::Mutex mu_;
  // Version -> its compiled plan.
  absl::flat_hash_map<SetVersion, PlanPtr> plans_ ABSL_GUARDED_BY(mu_);
  // (version, file) of reused versions already logged.
  absl::flat_hash_set<std::pair<SetVersion, std::string>> warned_
      ABSL_GUARDED_BY(mu_);
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_REGISTRY_LIFECYCLE_H_
