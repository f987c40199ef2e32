// File: daemon/registry/version_store.h
//
// The version store: the ledger tables that record the life of every
// coefficient set version plumbd has seen (set_versions, set_activations,
// audit; see daemon/ledger/schema.cc). Each version keeps its state (active,
// candidate, shadow, retired), who or what created it and why, the holdout
// comparison that justified it and its full document (the set as JSON), so
// a version can be served again after a restart without its file.
//
// This header is the interface; the backends are the SQLite ledger file
// (SqliteVersionStore, daemon/registry/sqlite_version_store.h) and a
// PostgreSQL database that plumbd replicas share (PgVersionStore,
// daemon/pg/pg_version_store.h). The lifecycle (daemon/registry/lifecycle.h)
// takes a VersionStore* and does not know which one it has.
//
//   // After SqliteLedger::Open has migrated the file:
//   auto store = SqliteVersionStore::Open("var/ledger.db");
//   absl::Status s = (*store)->InTransaction([&]() -> absl::Status {
//     ... Insert / SetState / RecordActivation / AppendAudit ...
//   });
//
// Not thread-safe: the lifecycle (daemon/registry/lifecycle.h) serializes all
// calls.
#ifndef PLUMBLINE_DAEMON_REGISTRY_VERSION_STORE_H_
#define PLUMBLINE_DAEMON_REGISTRY_VERSION_STORE_H_

#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "absl/time/time.h"
#include "daemon/util/time.h"

namespace plumbline::daemon {

enum class VersionState { kActive, kCandidate, kShadow, kRetired };

// "active", "candidate", "shadow", "retired".
absl::string_view VersionStateName(VersionState state);
// The state VersionStateName calls `name`; nullopt for any other text.
std::optional<VersionState> ParseVersionState(absl::string_view name);

struct VersionRecord {
  std::string set;
  std::string version;
  VersionState state = VersionState::kCandidate;
  absl::Time created_at = kNoTime;
  // "sets directory", "refit job 3 (drift)", "plumbctl load by alice".
  std::string created_by;
  std::string reason;
  // Holdout comparison against the active version, when there was one.
  std::string comparison;
  // The set file it came from; empty for versions not read from a file.
  std::string source;
  // The coefficient set as JSON (protobuf JSON mapping).
  std::string document;
};

struct AuditRecord {
  absl::Time at = kNoTime;  // kNoTime: when it is recorded
  std::string set;
  std::string version;
  // "loaded", "fit", "fit_failed", "compared", "approved", "activated",
  // "promoted", "shadowed", "retired", "rolled_back".
  std::string action;
  std::string actor;
  std::string detail;
};

class VersionStore {
 public:
  virtual ~VersionStore() = default;

  // Runs `body` in one transaction: committed if it returns OK, rolled back
  // otherwise (its status is returned). Transactions of every process that
  // shares the store's tables take turns (SQLite: IMMEDIATE, the file's
  // write lock; PostgreSQL: an advisory lock), so reads in `body` see what
  // every earlier transaction wrote.
  virtual absl::Status InTransaction(
      const std::function<absl::Status()>& body) = 0;

  // nullopt if (set, version) is unknown; the ledger's error (UNAVAILABLE,
  // INTERNAL, ...) if it cannot be read.
  virtual absl::StatusOr<std::optional<VersionRecord>> Get(
      absl::string_view set, absl::string_view version) = 0;
  // Versions of `set` (every set when empty), newest first.
  virtual absl::StatusOr<std::vector<VersionRecord>> List(
      absl::string_view set) = 0;
  // The active version of `set`, if any.
  virtual absl::StatusOr<std::optional<VersionRecord>> Active(
      absl::string_view set) = 0;

  // ALREADY_EXISTS if (set, version) is known.
  virtual absl::Status Insert(const VersionRecord& record) = 0;
  // NOT_FOUND if (set, version) is unknown.
  virtual absl::Status SetState(absl::string_view set,
                                absl::string_view version,
                                VersionState state) = 0;
  virtual absl::Status RecordActivation(absl::string_view set,
                                        absl::string_view version,
                                        absl::Time at) = 0;
  // The version that was active before the activation of `current`, skipping
  // activations of `current` itself; nullopt if there is none.
  virtual absl::StatusOr<std::optional<std::string>> PreviousActive(
      absl::string_view set, absl::string_view current) = 0;

  virtual absl::Status AppendAudit(const AuditRecord& record) = 0;
  // The history of `set`, oldest first.
  virtual absl::StatusOr<std::vector<AuditRecord>> Audit(
      absl::string_view set) = 0;
  // The distinct audit actors of every set that begin with `prefix`.
  virtual absl::StatusOr<std::vector<std::string>> AuditActors(
      absl::string_view prefix) = 0;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_REGISTRY_VERSION_STORE_H_
