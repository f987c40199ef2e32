#include "tests/testing/pg_cluster.h"

#include <unistd.h>

#include <atomic>
#include <cstdlib>
#include <fstream>
#include <memory>
#include <random>
#include <sstream>

#include "absl/strings/ascii.h"
#include "absl/strings/str_cat.h"
#include "daemon/pg/pg_connection.h"

namespace plumbline::daemon::testing {

absl::StatusOr<std::string> PgClusterUri() {
  const char* dir = std::getenv("PLUMBLINE_PG_CLUSTER");
  if (dir == nullptr || dir[0] == '\0') {
    return absl::FailedPreconditionError(
        "PLUMBLINE_PG_CLUSTER is not set: run through ctest (fixture "
        "pg_cluster), or `ops/pg-cluster start DIR` and set "
        "PLUMBLINE_PG_CLUSTER=DIR");
  }
  std::ifstream in(absl::StrCat(dir, "/uri"));
  std::stringstream text;
  text << in.rdbuf();
  const std::string uri(absl::StripAsciiWhitespace(text.str()));
  if (!in || uri.empty()) {
    return absl::FailedPreconditionError(
        absl::StrCat(dir,
                     "/uri: missing or empty (did ops/pg-cluster start "
                     "fail? see the fixture test's output)"));
  }
  setenv("PGPASSFILE", absl::StrCat(dir, "/pgpass").c_str(), 1);
  return uri;
}

std::string PgUriWithDatabase(absl::string_view uri,
                              absl::string_view database) {
  const size_t authority = uri.find("://");
  const size_t slash =
      uri.find('/', authority == absl::string_view::npos ? 0 : authority + 3);
  const size_t query = uri.find('?', slash);
  std::string out = absl::StrCat(uri.substr(0, slash), "/", database);
  if (query != absl::string_view::npos)
    absl::StrAppend(&out, uri.substr(query));
  return out;
}

std::string UniquePgName(absl::string_view prefix) {
  // The pid keeps test processes apart, the random part the runs of one
  // pid (a database left by a crashed run), the counter one process's
  // calls.
  static std::atomic<int> calls{0};
  std::random_device rd;
  return absl::StrCat(prefix, "_", getpid(), "_", rd() % 1000000, "_",
                      calls.fetch_add(1));
}

namespace {

// The database name of a URI made by PgUriWithDatabase.
std::string DatabaseOf(absl::string_view uri) {
  const size_t authority = uri.find("://");
  const size_t slash =
      uri.find('/', authority == absl::string_view::npos ? 0 : authority + 3);
  if (slash == absl::string_view::npos) return "";
  absl::string_view rest = uri.substr(slash + 1);
  return std::string(rest.substr(0, rest.find('?')));
}

}  // namespace

absl::StatusOr<std::string> FreshPgDatabase(absl::string_view prefix) {
  absl::StatusOr<std::string> cluster = PgClusterUri();
  if (!cluster.ok()) return cluster.status();
  absl::StatusOr<std::unique_ptr<PgConnection>> admin =
      PgConnection::Connect(*cluster);
  if (!admin.ok()) return admin.status();
  const std::string database = UniquePgName(prefix);
  absl::Status created =
      (*admin)->Exec(absl::StrCat("CREATE DATABASE ", database));
  if (!created.ok()) return created;
  return PgUriWithDatabase(*cluster, database);
}

absl::Status DropPgDatabase(absl::string_view uri) {
  const std::string database = DatabaseOf(uri);
  if (database.empty()) {
    return absl::InvalidArgumentError(
        absl::StrCat("no database named in ", uri));
  }
  absl::StatusOr<std::string> cluster = PgClusterUri();
  if (!cluster.ok()) return cluster.status();
  absl::StatusOr<std::unique_ptr<PgConnection>> admin =
      PgConnection::Connect(*cluster);
  if (!admin.ok()) return admin.status();
  return (*admin)->Exec(
      absl::StrCat("DROP DATABASE IF EXISTS ", database, " WITH (FORCE)"));
}

}  // namespace plumbline::daemon::testing
