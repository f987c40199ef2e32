// File: daemon/registry/version_store.h
//
// The version store: the ledger tables that record the life of every
// coefficient set version plumbd has seen (set_versions, set_activations,
// audit; see daemon/ledger_schema.h). Each version keeps its state (active,
// candidate, shadow, retired), who or what created it and why, the holdout
// comparison that justified it and its full document (the set as JSON), so
// a version can be served again after a restart without its file.
//
//   auto store = VersionStore::Open("var/ledger.db");   // after
//   SqliteLedger::Open absl::Status s = (*store)->InTransaction([&]() ->
//   absl::Status {
//     ... Insert / SetState / RecordActivation / AppendAudit ...
//   });
//
// It has its own SQLite connection to the ledger file (WAL: it waits for the
// ledger's writer for at most the busy timeout, never corrupts its rows).
// Writes are synchronous=FULL: a state change that returned is on disk.
//
// Not thread-safe: the lifecycle (daemon/lifecycle.h) serializes all calls.
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
#include "daemon/ledger/sqlite_db.h"
#include "daemon/util/time.h"

namespace plumbline::daemon {

enum class VersionState { kActive, kCandidate, kShadow, kRetired };

// "active", "candidate", "shadow", "retired".
absl::string_view VersionStateName(VersionState state);

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
  // Opens a connection to a ledger that SqliteLedger::Open has already
  // migrated, through `env` (the ledger's I/O seam; null: the default), which
  // must outlive the store.
  static absl::StatusOr<std::unique_ptr<VersionStore>> Open(
      const std::string& ledger_path, LedgerEnv* env = nullptr);

  // Runs `body` in one IMMEDIATE transaction: committed if it returns OK,
  // rolled back otherwise (its status is returned).
  absl::Status InTransaction(const std::function<absl::Status()>& body);

  // nullopt if (set, version) is unknown; the ledger's error (UNAVAILABLE,
  // INTERNAL, ...) if it cannot be read.
  absl::StatusOr<std::optional<VersionRecord>> Get(absl::string_view set,
                                                   absl::string_view version);
  // Versions of `set` (every set when empty), newest first.
  absl::StatusOr<std::vector<VersionRecord>> List(absl::string_view set);
  // The active version of `set`, if any.
  absl::StatusOr<std::optional<VersionRecord>> Active(absl::string_view set);

  // ALREADY_EXISTS if (set, version) is known.
  absl::Status Insert(const VersionRecord& record);
  // NOT_FOUND if (set, version) is unknown.
  absl::Status SetState(absl::string_view set, absl::string_view version,
                        VersionState state);
  absl::Status RecordActivation(absl::string_view set,
                                absl::string_view version, absl::Time at);
  // The version that was active before the activation of `current`, skipping
  // activations of `current` itself; nullopt if there is none.
  absl::StatusOr<std::optional<std::string>> PreviousActive(
      absl::string_view set, absl::string_view current);

  absl::Status AppendAudit(const AuditRecord& record);
  // The history of `set`, oldest first.
  absl::StatusOr<std::vector<AuditRecord>> Audit(absl::string_view set);
  // The distinct audit actors of every set that begin with `prefix`.
  absl::StatusOr<std::vector<std::string>> AuditActors(
      absl::string_view prefix);

 private:
  explicit VersionStore(std::unique_ptr<SqliteDb> db) : db_(std::move(db)) {}

  std::unique_ptr<SqliteDb> db_;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_REGISTRY_VERSION_STORE_H_
