// File: daemon/registry/sqlite_version_store.h
//
// The SQLite backend of the version store (daemon/registry/version_store.h):
// the tables set_versions, set_activations and audit of the ledger file
// (daemon/ledger/schema.cc), for a plumbd that keeps its ledger in SQLite.
//
//   // After SqliteLedger::Open has migrated the file:
//   auto store = SqliteVersionStore::Open("var/ledger.db");
//
// It has its own SQLite connection to the ledger file (WAL: it waits for the
// ledger's writer for at most the busy timeout, never corrupts its rows).
// Writes are synchronous=FULL: a state change that returned is on disk.
// InTransaction is an IMMEDIATE transaction.
//
// Not thread-safe: the lifecycle (daemon/registry/lifecycle.h) serializes all
// calls.
#ifndef PLUMBLINE_DAEMON_REGISTRY_SQLITE_VERSION_STORE_H_
#define PLUMBLINE_DAEMON_REGISTRY_SQLITE_VERSION_STORE_H_

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
#include "daemon/registry/version_store.h"

namespace plumbline::daemon {

class SqliteVersionStore final : public VersionStore {
 public:
  // Opens a connection to a ledger that SqliteLedger::Open has already
  // migrated, through `env` (the ledger's I/O seam; null: the default), which
  // must outlive the store.
  static absl::StatusOr<std::unique_ptr<VersionStore>> Open(
      const std::string& ledger_path, LedgerEnv* env = nullptr);

  absl::Status InTransaction(
      const std::function<absl::Status()>& body) override;
  absl::StatusOr<std::optional<VersionRecord>> Get(
      absl::string_view set, absl::string_view version) override;
  absl::StatusOr<std::vector<VersionRecord>> List(
      absl::string_view set) override;
  absl::StatusOr<std::optional<VersionRecord>> Active(
      absl::string_view set) override;
  absl::Status Insert(const VersionRecord& record) override;
  absl::Status SetState(absl::string_view set, absl::string_view version,
                        VersionState state) override;
  absl::Status RecordActivation(absl::string_view set,
                                absl::string_view version,
                                absl::Time at) override;
  absl::StatusOr<std::optional<std::string>> PreviousActive(
      absl::string_view set, absl::string_view current) override;
  absl::Status AppendAudit(const AuditRecord& record) override;
  absl::StatusOr<std::vector<AuditRecord>> Audit(
      absl::string_view set) override;
  absl::StatusOr<std::vector<std::string>> AuditActors(
      absl::string_view prefix) override;

 private:
  explicit SqliteVersionStore(std::unique_ptr<SqliteDb> db)
      : db_(std::move(db)) {}

  std::unique_ptr<SqliteDb> db_;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_REGISTRY_SQLITE_VERSION_STORE_H_
