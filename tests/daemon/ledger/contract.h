// File: tests/daemon/ledger/contract.h
//
// The ledger's contract (daemon/ledger/ledger.h) as one value-parameterised
// suite, LedgerContractTest: the same test bodies run against every backend.
// contract.cc holds the bodies; each backend's own test file instantiates
// them with a LedgerBackend that says how to make a fresh store and open a
// ledger on it:
//
//   INSTANTIATE_TEST_SUITE_P(Sqlite, LedgerContractTest,
//                            ::testing::Values(SqliteBackend()),
//                            LedgerBackendName);
//
// tests/daemon/ledger/contract_sqlite_test.cc   SqliteLedger, a temp file
// tests/daemon/pg/ledger_contract_pg_test.cc    PgLedger, a fresh database
//                                               on the pg_cluster fixture
//
// The rows are parcels of the courier test set (tests/testing/test_sets.h)
// with packed features and their layout, as plumbd's Scoring service
// writes them. No test depends on timing; what a backend gives eventually
// (another replica's rows) is waited for with PollUntil.
#ifndef PLUMBLINE_TESTS_DAEMON_LEDGER_CONTRACT_H_
#define PLUMBLINE_TESTS_DAEMON_LEDGER_CONTRACT_H_

#include <functional>
#include <memory>
#include <ostream>
#include <string>
#include <vector>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "daemon/ledger/ledger.h"
#include "gtest/gtest.h"
#include "tests/testing/process.h"

namespace plumbline::daemon::testing {

// How the contract tests reach one backend.
struct LedgerBackend {
  // The instantiation's name in test names ("sqlite", "pg").
  std::string name;
  // Options naming a fresh, empty store for one test. `scratch_dir` is a
  // directory of the test's own, removed after it.
  std::function<absl::StatusOr<LedgerOptions>(const std::string& scratch_dir)>
      fresh_options;
  // Opens a ledger on the store `options` names.
  std::function<absl::StatusOr<std::unique_ptr<Ledger>>(LedgerOptions)> open;
  // True when two ledgers may be open on one store at once (two plumbd
  // replicas sharing it): PostgreSQL. SQLite's lock refuses a second
  // writer, so the tests of two replicas are skipped for it.
  bool shared = false;
  // Removes what fresh_options made outside `scratch_dir` (a database);
  // called after the test's ledgers are closed. May be empty.
  std::function<absl::Status(const LedgerOptions&)> discard;
};

// How gtest prints a backend (its name; not the struct's bytes).
void PrintTo(const LedgerBackend& backend, std::ostream* os);

// The parameter's name, for INSTANTIATE_TEST_SUITE_P.
std::string LedgerBackendName(
    const ::testing::TestParamInfo<LedgerBackend>& info);

// The suite; its helpers and TEST_P bodies are in contract.cc.
class LedgerContractTest : public ::testing::TestWithParam<LedgerBackend> {
 protected:
  // Makes the test's fresh store (options_).
  void SetUp() override;
  // Closes the ledgers still open, then discards the store.
  void TearDown() override;

  // A ledger on the test's store (another replica when called twice on a
  // shared backend); null, with the test failed, when Open failed. The
  // fixture owns it; Close() before the test ends is not needed.
  Ledger* Open();

  TempDir temp_;
  LedgerOptions options_;
  // What the ledgers' observers point at (rows listeners): declared before
  // ledgers_, so it outlives them even when a test body returns early.
  std::vector<std::shared_ptr<void>> keep_;
  std::vector<std::unique_ptr<Ledger>> ledgers_;
};

}  // namespace plumbline::daemon::testing

#endif  // PLUMBLINE_TESTS_DAEMON_LEDGER_CONTRACT_H_
