// The ledger's contract tests (tests/daemon/ledger/contract.h) on the
// PostgreSQL backend: each test gets a fresh database on the cluster of the
// ctest fixture pg_cluster, dropped after it. Two ledgers may share one
// database (two plumbd replicas), so the tests of two replicas run here.
#include <memory>
#include <string>

#include "daemon/pg/pg_ledger.h"
#include "gtest/gtest.h"
#include "tests/daemon/ledger/contract.h"
#include "tests/testing/pg_cluster.h"

namespace plumbline::daemon::testing {
namespace {

LedgerBackend PgBackend() {
  LedgerBackend backend;
  backend.name = "pg";
  backend.fresh_options =
      [](const std::string&) -> absl::StatusOr<LedgerOptions> {
    absl::StatusOr<std::string> uri = FreshPgDatabase("courier_contract");
    if (!uri.ok()) return uri.status();
    LedgerOptions options;
    options.path = *uri;
    return options;
  };
  backend.open = [](LedgerOptions options) {
    return PgLedger::Open(std::move(options));
  };
  backend.shared = true;
  backend.discard = [](const LedgerOptions& options) {
    return DropPgDatabase(options.path);
  };
  return backend;
}

INSTANTIATE_TEST_SUITE_P(Pg, LedgerContractTest, ::testing::Values(PgBackend()),
                         LedgerBackendName);

}  // namespace
}  // namespace plumbline::daemon::testing
