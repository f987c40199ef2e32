// The ledger's contract tests (contract.h) on the SQLite backend: each test
// gets a ledger file in its own temporary directory. SQLite's lock takes one
// writer per file, so the tests of two replicas on one store are skipped.
#include <memory>
#include <string>

#include "daemon/ledger/sqlite_ledger.h"
#include "gtest/gtest.h"
#include "tests/daemon/ledger/contract.h"

namespace plumbline::daemon::testing {
namespace {

LedgerBackend SqliteBackend() {
  LedgerBackend backend;
  backend.name = "sqlite";
  backend.fresh_options =
      [](const std::string& scratch_dir) -> absl::StatusOr<LedgerOptions> {
    LedgerOptions options;
    options.path = scratch_dir + "/ledger/contract.db";
    return options;
  };
  backend.open = [](LedgerOptions options) {
    return SqliteLedger::Open(std::move(options));
  };
  backend.shared = false;
  return backend;
}

INSTANTIATE_TEST_SUITE_P(Sqlite, LedgerContractTest,
                         ::testing::Values(SqliteBackend()), LedgerBackendName);

}  // namespace
}  // namespace plumbline::daemon::testing
