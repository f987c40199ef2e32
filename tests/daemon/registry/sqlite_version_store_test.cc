// File: tests/daemon/registry/sqlite_version_store_test.cc
//
// The version store contract (version_store_contract.h) on the SQLite
// ledger file: a fresh ledger in a temp directory per test.
#include "daemon/registry/sqlite_version_store.h"

#include <memory>

#include "daemon/ledger/sqlite_ledger.h"
#include "tests/daemon/registry/version_store_contract.h"
#include "tests/testing/process.h"

namespace plumbline::daemon {
namespace {

// The temp directory and the ledger that migrated its file.
struct SqliteFiles {
  testing::TempDir dir;
  std::unique_ptr<Ledger> ledger;
};

absl::StatusOr<std::unique_ptr<VersionStore>> OpenSqliteStore(
    std::shared_ptr<void>& keep) {
  auto files = std::make_shared<SqliteFiles>();
  LedgerOptions options;
  options.path = files->dir.File("ledger.db");
  absl::StatusOr<std::unique_ptr<Ledger>> ledger = SqliteLedger::Open(options);
  if (!ledger.ok()) return ledger.status();
  files->ledger = *std::move(ledger);
  keep = files;
  return SqliteVersionStore::Open(options.path);
}

INSTANTIATE_TEST_SUITE_P(Sqlite, VersionStoreContractTest,
                         ::testing::Values(VersionStoreBackend{
                             "Sqlite", OpenSqliteStore}),
                         VersionStoreBackendName);

}  // namespace
}  // namespace plumbline::daemon
