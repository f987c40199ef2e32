// File: tests/daemon/registry/version_store_contract.h
//
// What every version store backend (daemon/registry/version_store.h) must
// do, as one value-parameterised suite: the same test bodies run on the
// SQLite ledger file (sqlite_version_store_test.cc, in registry_test) and
// on a PostgreSQL database (tests/daemon/pg/pg_version_store_test.cc).
// A backend's test program instantiates the suite with its factory:
//
//   INSTANTIATE_TEST_SUITE_P(
//       Sqlite, VersionStoreContractTest,
//       ::testing::Values(VersionStoreBackend{"Sqlite", OpenSqliteStore}),
//       VersionStoreBackendName);
//
// Each test opens its store once, on empty tables.
#ifndef PLUMBLINE_TESTS_DAEMON_REGISTRY_VERSION_STORE_CONTRACT_H_
#define PLUMBLINE_TESTS_DAEMON_REGISTRY_VERSION_STORE_CONTRACT_H_

#include <functional>
#include <memory>
#include <ostream>
#include <string>

#include "absl/status/statusor.h"
#include "daemon/registry/version_store.h"
#include "gtest/gtest.h"

namespace plumbline::daemon {

struct VersionStoreBackend {
  std::string name;
  // Opens a store on fresh, empty tables. Whatever the store needs to
  // outlive it (a temp directory, the migrated ledger) goes into `keep`,
  // which the test destroys after the store.
  std::function<absl::StatusOr<std::unique_ptr<VersionStore>>(
      std::shared_ptr<void>& keep)>
      open;
};

// gtest prints a backend by its name (the test list names it, not bytes).
inline void PrintTo(const VersionStoreBackend& backend, std::ostream* os) {
  *os << backend.name;
}

// The test name suffix: the backend's name.
std::string VersionStoreBackendName(
    const ::testing::TestParamInfo<VersionStoreBackend>& info);

class VersionStoreContractTest
    : public ::testing::TestWithParam<VersionStoreBackend> {
 protected:
  void SetUp() override;
  void TearDown() override;

  std::shared_ptr<void> keep_;
  std::unique_ptr<VersionStore> store_;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_TESTS_DAEMON_REGISTRY_VERSION_STORE_CONTRACT_H_
