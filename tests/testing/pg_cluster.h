// File: tests/testing/pg_cluster.h
//
// The PostgreSQL 15 cluster that the ctest fixture pg_cluster starts
// (ops/pg-cluster start DIR, DIR in $PLUMBLINE_PG_CLUSTER: its URI in
// DIR/uri, the superuser's password in DIR/pgpass), for the tests of
// daemon/pg and the ledger's contract tests on PostgreSQL.
//
//   ASSERT_OK_AND_ASSIGN(std::string uri, PgClusterUri());     // shared db
//   ASSERT_OK_AND_ASSIGN(std::string own, FreshPgDatabase("depot"));
//   ...
//   EXPECT_OK(DropPgDatabase(own));
//
// Tests that act on whole databases (migrations, partitions, a ledger) take
// a fresh database each, so tests running at the same time (ctest -j2) never
// see each other's tables.
//
// Thread-safety: PgClusterUri sets PGPASSFILE in the environment (setenv):
// call it, or FreshPgDatabase, before starting threads that read the
// environment.
#ifndef PLUMBLINE_TESTS_TESTING_PG_CLUSTER_H_
#define PLUMBLINE_TESTS_TESTING_PG_CLUSTER_H_

#include <string>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"

namespace plumbline::daemon::testing {

// The fixture's cluster URI (its default database), with PGPASSFILE
// pointed at its pgpass. FAILED_PRECONDITION when PLUMBLINE_PG_CLUSTER is
// not set or its uri file is missing or empty.
absl::StatusOr<std::string> PgClusterUri();

// `uri` with its database name replaced by `database` (query kept).
std::string PgUriWithDatabase(absl::string_view uri,
                              absl::string_view database);

// A name no other test process uses at the same time: "<prefix>_<pid>_<n>"
// (lower case letters, digits and '_' when `prefix` is).
std::string UniquePgName(absl::string_view prefix);

// Creates a new, empty database "<prefix>_<pid>_<n>" on the fixture's
// cluster and returns its URI. REQUIRES: `prefix` is lower case letters,
// digits and '_' (it is spliced into CREATE DATABASE unquoted).
absl::StatusOr<std::string> FreshPgDatabase(absl::string_view prefix);

// Drops the database `uri` names (made by FreshPgDatabase) WITH (FORCE):
// connections still open to it are ended. OK when it does not exist.
absl::Status DropPgDatabase(absl::string_view uri);

}  // namespace plumbline::daemon::testing

#endif  // PLUMBLINE_TESTS_TESTING_PG_CLUSTER_H_
