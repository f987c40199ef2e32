// The PostgreSQL ledger's schema (daemon/pg/pg_schema.h) against a real
// PostgreSQL 15 cluster (the ctest fixture pg_cluster, as in
// pg_connection_test.cc). Each test gets its own freshly created database
// (FreshPgDatabase of tests/testing/pg_cluster.h, dropped WITH (FORCE) at
// the end): migrations, partitions and advisory locks act on whole
// databases, and a private database keeps tests that run at the same time
// (ctest -j2) from seeing each other's tables. Advisory locks are
// cluster-wide, so tests at the same time may wait on each other's lock for
// a moment, never see each other's data.
#include "daemon/pg/pg_schema.h"

#include <atomic>
#include <memory>
#include <string>
#include <thread>
#include <vector>

#include "absl/strings/str_cat.h"
#include "absl/time/civil_time.h"
#include "daemon/pg/pg_connection.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "tests/testing/pg_cluster.h"
#include "tests/testing/status_matchers.h"

namespace plumbline::daemon {
namespace {

using ::plumbline::daemon::testing::DropPgDatabase;
using ::plumbline::daemon::testing::FreshPgDatabase;
using ::plumbline::testing::StatusIs;
using ::testing::AllOf;
using ::testing::ElementsAre;
using ::testing::HasSubstr;

absl::Time Utc(int y, int m, int d, int hh = 0, int mm = 0) {
  return absl::FromCivil(absl::CivilMinute(y, m, d, hh, mm),
                         absl::UTCTimeZone());
}

// '2026-12-03 12:00:00+00' for a timestamptz parameter.
std::string Ts(absl::Time t) {
  return absl::FormatTime("%Y-%m-%d %H:%M:%S+00", t, absl::UTCTimeZone());
}

class PgSchemaTest : public ::testing::Test {
 protected:
  void SetUp() override {
    absl::StatusOr<std::string> uri = FreshPgDatabase("courier_ledger");
    ASSERT_TRUE(uri.ok()) << uri.status();
    uri_ = *uri;
  }

  void TearDown() override {
    if (!uri_.empty()) {
      EXPECT_OK(DropPgDatabase(uri_));
    }
  }

  std::unique_ptr<PgConnection> Connect() {
    auto db = PgConnection::Connect(uri_);
    EXPECT_TRUE(db.ok()) << db.status();
    return db.ok() ? *std::move(db) : nullptr;
  }

  static int64_t Count(PgConnection& db, const std::string& sql) {
    auto r = db.Query(sql);
    EXPECT_TRUE(r.ok()) << r.status();
    if (!r.ok() || r->rows.size() != 1 || !r->rows[0][0]) return -1;
    return std::stoll(*r->rows[0][0]);
  }

  // The partitions of `table`, by name.
  static std::vector<std::string> Partitions(PgConnection& db,
                                             const std::string& table) {
    auto r = db.Query(
        "SELECT c.relname FROM pg_inherits i JOIN pg_class c"
        "  ON c.oid = i.inhrelid WHERE i.inhparent = $1::regclass"
        "  ORDER BY c.relname",
        {table});
    EXPECT_TRUE(r.ok()) << r.status();
    std::vector<std::string> names;
    if (r.ok()) {
      for (const PgRow& row : r->rows) names.push_back(row[0].value_or(""));
    }
    return names;
  }

  // A score set "courier_eta" v3 active, and its set name's id.
  static void AddCourierSet(PgConnection& db, std::string* set_id,
                            std::string* name_id) {
    auto s = db.Query(
        "INSERT INTO score_sets(set_name, set_version, role, layout) "
        "VALUES ('courier_eta', 'v3', 'active', '{}') RETURNING id");
    ASSERT_TRUE(s.ok()) << s.status();
    *set_id = *s->rows[0][0];
    auto n = db.Query(
        "INSERT INTO set_names(name) VALUES ('courier_eta') RETURNING id");
    ASSERT_TRUE(n.ok()) << n.status();
    *name_id = *n->rows[0][0];
  }

  // Scores `record` at `at` (a primary score of `name_id`) with its
  // score_records row, as the ledger would, in one transaction.
  static absl::Status AddScore(PgConnection& db, const std::string& record,
                               absl::Time at, const std::string& set_id,
                               const std::string& name_id) {
    if (absl::Status st = db.Exec("BEGIN"); !st.ok()) return st;
    absl::StatusOr<PgResult> r = db.Query(
        "INSERT INTO scores(record_id, set_id, scored_at, log_odds,"
        "  probability, features, primary_set)"
        " VALUES ($1, $2::bigint, $3::timestamptz, 0.4, 0.6,"
        "  '\\x01020304'::bytea, $4::bigint) RETURNING id",
        {record, set_id, Ts(at), name_id});
    absl::Status st = r.status();
    if (st.ok()) {
      st = db.Query(
                 "INSERT INTO score_records(record_id, primary_set, "
                 "score_id, scored_at) VALUES ($1, $2::bigint, $3::bigint,"
                 " $4::timestamptz)",
                 {record, name_id, *r->rows[0][0], Ts(at)})
               .status();
    }
    if (st.ok()) return db.Exec("COMMIT");
    db.Exec("ROLLBACK").IgnoreError();
    return st;
  }

  static absl::Status AddOutcome(PgConnection& db, const std::string& record,
                                 absl::Time at) {
    if (absl::Status st = db.Exec("BEGIN"); !st.ok()) return st;
    absl::StatusOr<PgResult> r = db.Query(
        "INSERT INTO outcomes(record_id, label, observed_at, reported_at)"
        " VALUES ($1, 1, $2::timestamptz, $2::timestamptz) RETURNING seq",
        {record, Ts(at)});
    absl::Status st = r.status();
    if (st.ok()) {
      st = db.Query(
                 "INSERT INTO outcome_records(record_id, seq, observed_at)"
                 " VALUES ($1, $2::bigint, $3::timestamptz)",
                 {record, *r->rows[0][0], Ts(at)})
               .status();
    }
    if (st.ok()) return db.Exec("COMMIT");
    db.Exec("ROLLBACK").IgnoreError();
    return st;
  }

  std::string uri_;
};

TEST_F(PgSchemaTest, FreshDatabaseMigratesToLatestAndASecondRunIsANoOp) {
  auto db = Connect();
  ASSERT_NE(db, nullptr);
  const int latest = LatestPgLedgerSchemaVersion();
  ASSERT_GE(latest, 1);
  ASSERT_OK_AND_ASSIGN(int version, MigratePgLedger(*db));
  EXPECT_EQ(version, latest);
  EXPECT_EQ(Count(*db, "SELECT count(*) FROM plumbline_schema"), 1);
  EXPECT_EQ(Count(*db, "SELECT version FROM plumbline_schema"), latest);
  // The tables, partitioned where they grow with time.
  ASSERT_OK_AND_ASSIGN(
      PgResult tables,
      db->Query("SELECT relname, relkind FROM pg_class WHERE relname IN "
                "('set_names', 'score_sets', 'scores', 'score_records',"
                " 'outcomes', 'outcome_records') ORDER BY relname"));
  EXPECT_THAT(tables.rows,
              ElementsAre(ElementsAre(PgValue("outcome_records"), "r"),
                          ElementsAre(PgValue("outcomes"), "p"),
                          ElementsAre(PgValue("score_records"), "r"),
                          ElementsAre(PgValue("score_sets"), "r"),
                          ElementsAre(PgValue("scores"), "p"),
                          ElementsAre(PgValue("set_names"), "r")));
  // No default partition on either table.
  EXPECT_EQ(Count(*db,
                  "SELECT count(*) FROM pg_partitioned_table "
                  "WHERE partdefid <> 0"),
            0);

  ASSERT_OK_AND_ASSIGN(int again, MigratePgLedger(*db));
  EXPECT_EQ(again, latest);
  EXPECT_EQ(Count(*db, "SELECT count(*) FROM plumbline_schema"), 1);
  EXPECT_EQ(Count(*db, "SELECT version FROM plumbline_schema"), latest);
}

TEST_F(PgSchemaTest, FourReplicasMigratingAtOnceApplyEachStepOnce) {
  constexpr int kReplicas = 4;
  std::vector<std::unique_ptr<PgConnection>> dbs;
  for (int i = 0; i < kReplicas; ++i) {
    dbs.push_back(Connect());
    ASSERT_NE(dbs.back(), nullptr);
  }
  std::vector<absl::StatusOr<int>> results(kReplicas, 0);
  std::atomic<int> ready{0};
  std::vector<std::thread> threads;
  for (int i = 0; i < kReplicas; ++i) {
    threads.emplace_back([&, i] {
      ready.fetch_add(1);
      while (ready.load() < kReplicas) std::this_thread::yield();
      results[i] = MigratePgLedger(*dbs[i]);
    });
  }
  for (std::thread& t : threads) t.join();
  // A step run twice fails (its CREATE TABLE finds the table there), so
  // every replica succeeding means each step ran exactly once.
  for (int i = 0; i < kReplicas; ++i) {
    ASSERT_TRUE(results[i].ok())
        << "replica " << i << ": " << results[i].status();
    EXPECT_EQ(*results[i], LatestPgLedgerSchemaVersion()) << "replica " << i;
  }
  EXPECT_EQ(Count(*dbs[0], "SELECT count(*) FROM plumbline_schema"), 1);
  EXPECT_EQ(Count(*dbs[0], "SELECT version FROM plumbline_schema"),
            LatestPgLedgerSchemaVersion());
  EXPECT_EQ(
      Count(*dbs[0], "SELECT count(*) FROM pg_class WHERE relname = 'scores'"),
      1);
}

TEST_F(PgSchemaTest, NewerSchemaIsRefusedNamingBothVersions) {
  auto db = Connect();
  ASSERT_NE(db, nullptr);
  ASSERT_OK(MigratePgLedger(*db).status());
  const int latest = LatestPgLedgerSchemaVersion();
  const int newer = latest + 41;
  ASSERT_OK(
      db->Exec(absl::StrCat("UPDATE plumbline_schema SET version = ", newer)));
  EXPECT_THAT(MigratePgLedger(*db),
              StatusIs(absl::StatusCode::kFailedPrecondition,
                       AllOf(HasSubstr(absl::StrCat("version ", newer)),
                             HasSubstr(absl::StrCat("(", latest, ")")),
                             HasSubstr("newer"))));
  // Refused, not changed, and the connection is usable.
  EXPECT_EQ(Count(*db, "SELECT version FROM plumbline_schema"), newer);
  // A second row is a hand-made database, refused too.
  ASSERT_OK(
      db->Exec("ALTER TABLE plumbline_schema DROP CONSTRAINT "
               "plumbline_schema_pkey; INSERT INTO "
               "plumbline_schema(one, version) VALUES (true, 1)"));
  EXPECT_THAT(MigratePgLedger(*db),
              StatusIs(absl::StatusCode::kFailedPrecondition,
                       HasSubstr("2 rows instead of one")));
}

TEST_F(PgSchemaTest, EnsurePartitionsMakesDailyPartitionsIdempotently) {
  auto db = Connect();
  ASSERT_NE(db, nullptr);
  ASSERT_OK(MigratePgLedger(*db).status());
  // Three UTC days: 3 Dec 10:30 to 5 Dec 02:00.
  ASSERT_OK(
      EnsurePartitions(*db, Utc(2026, 12, 3, 10, 30), Utc(2026, 12, 5, 2, 0)));
  EXPECT_THAT(
      Partitions(*db, "scores"),
      ElementsAre("scores_p20261203", "scores_p20261204", "scores_p20261205"));
  EXPECT_THAT(Partitions(*db, "outcomes"),
              ElementsAre("outcomes_p20261203", "outcomes_p20261204",
                          "outcomes_p20261205"));
  // The bounds are the UTC day.
  ASSERT_OK(db->Exec("SET TimeZone = 'UTC'"));
  ASSERT_OK_AND_ASSIGN(
      PgResult bound,
      db->Query("SELECT pg_get_expr(relpartbound, oid) FROM pg_class "
                "WHERE relname = 'scores_p20261204'"));
  EXPECT_THAT(bound.rows, ElementsAre(ElementsAre(PgValue(
                              "FOR VALUES FROM ('2026-12-04 00:00:00+00') TO "
                              "('2026-12-05 00:00:00+00')"))));
  // Again: nothing new, no error.
  ASSERT_OK(EnsurePartitions(*db, Utc(2026, 12, 3), Utc(2026, 12, 5, 23, 59)));
  EXPECT_EQ(Partitions(*db, "scores").size(), 3u);
  EXPECT_EQ(Partitions(*db, "outcomes").size(), 3u);

  // Two replicas preparing an overlapping week at once.
  auto other = Connect();
  ASSERT_NE(other, nullptr);
  absl::Status a, b;
  std::thread ta(
      [&] { a = EnsurePartitions(*db, Utc(2026, 12, 1), Utc(2026, 12, 7)); });
  std::thread tb([&] {
    b = EnsurePartitions(*other, Utc(2026, 12, 2), Utc(2026, 12, 8));
  });
  ta.join();
  tb.join();
  EXPECT_OK(a);
  EXPECT_OK(b);
  EXPECT_EQ(Partitions(*db, "scores").size(), 8u);
  EXPECT_EQ(Partitions(*db, "outcomes").size(), 8u);

  // A score and an outcome inside the span go to their day's partition.
  std::string set_id, name_id;
  AddCourierSet(*db, &set_id, &name_id);
  ASSERT_OK(
      AddScore(*db, "parcel-000123", Utc(2026, 12, 4, 12), set_id, name_id));
  ASSERT_OK(AddOutcome(*db, "parcel-000123", Utc(2026, 12, 5, 9)));
  EXPECT_EQ(Count(*db, "SELECT count(*) FROM scores_p20261204"), 1);
  EXPECT_EQ(Count(*db, "SELECT count(*) FROM outcomes_p20261205"), 1);
  // Outside every partition: refused, not kept in a default partition.
  EXPECT_THAT(
      AddScore(*db, "parcel-000124", Utc(2026, 12, 20, 8), set_id, name_id),
      StatusIs(absl::StatusCode::kFailedPrecondition,
               AllOf(HasSubstr("23514"),
                     HasSubstr("no partition of relation \"scores\""))));
  EXPECT_THAT(AddOutcome(*db, "parcel-000124", Utc(2025, 1, 1)),
              StatusIs(absl::StatusCode::kFailedPrecondition,
                       HasSubstr("no partition of relation \"outcomes\"")));
  EXPECT_EQ(Count(*db, "SELECT count(*) FROM scores"), 1);
  EXPECT_EQ(Count(*db, "SELECT count(*) FROM score_records"), 1);
}

TEST_F(PgSchemaTest, EnsurePartitionsRefusesALongOrBackwardSpan) {
  auto db = Connect();
  ASSERT_NE(db, nullptr);
  ASSERT_OK(MigratePgLedger(*db).status());
  // 2026-01-01 to 2027-02-05 is 401 days.
  EXPECT_THAT(EnsurePartitions(*db, Utc(2026, 1, 1), Utc(2027, 2, 5)),
              StatusIs(absl::StatusCode::kInvalidArgument,
                       AllOf(HasSubstr("401 days"), HasSubstr("400"),
                             HasSubstr("2026-01-01"))));
  EXPECT_THAT(
      EnsurePartitions(*db, Utc(2026, 12, 5), Utc(2026, 12, 3)),
      StatusIs(absl::StatusCode::kInvalidArgument, HasSubstr("before from")));
  EXPECT_THAT(
      EnsurePartitions(*db, Utc(2026, 12, 5), absl::InfiniteFuture()),
      StatusIs(absl::StatusCode::kInvalidArgument, HasSubstr("finite")));
  EXPECT_TRUE(Partitions(*db, "scores").empty());
  // Without the partitioned table the message names the table and day.
  ASSERT_OK(db->Exec("DROP TABLE scores CASCADE"));
  EXPECT_THAT(EnsurePartitions(*db, Utc(2026, 12, 5), Utc(2026, 12, 5)),
              StatusIs(absl::StatusCode::kInvalidArgument,
                       AllOf(HasSubstr("2026-12-05"), HasSubstr("scores"))));
}

TEST_F(PgSchemaTest, DropPartitionsBeforeDropsWholeDaysAndTheirRecords) {
  auto db = Connect();
  ASSERT_NE(db, nullptr);
  ASSERT_OK(MigratePgLedger(*db).status());
  ASSERT_OK(EnsurePartitions(*db, Utc(2026, 12, 1), Utc(2026, 12, 5)));
  std::string set_id, name_id;
  AddCourierSet(*db, &set_id, &name_id);
  for (int day = 1; day <= 5; ++day) {
    const std::string record = absl::StrCat("parcel-00012", day);
    ASSERT_OK(
        AddScore(*db, record, Utc(2026, 12, day, 23, 59), set_id, name_id));
    ASSERT_OK(AddOutcome(*db, record, Utc(2026, 12, day, 0, 0)));
  }
  // Cutoff 3 Dec 00:00: 1 and 2 Dec end at or before it; 3 Dec does not.
  ASSERT_OK_AND_ASSIGN(int dropped,
                       DropPartitionsBefore(*db, Utc(2026, 12, 3)));
  EXPECT_EQ(dropped, 4);
  EXPECT_THAT(
      Partitions(*db, "scores"),
      ElementsAre("scores_p20261203", "scores_p20261204", "scores_p20261205"));
  EXPECT_THAT(Partitions(*db, "outcomes"),
              ElementsAre("outcomes_p20261203", "outcomes_p20261204",
                          "outcomes_p20261205"));
  ASSERT_OK_AND_ASSIGN(
      PgResult records,
      db->Query("SELECT record_id FROM score_records ORDER BY record_id"));
  EXPECT_THAT(records.rows, ElementsAre(ElementsAre("parcel-000123"),
                                        ElementsAre("parcel-000124"),
                                        ElementsAre("parcel-000125")));
  ASSERT_OK_AND_ASSIGN(
      PgResult outcomes,
      db->Query("SELECT record_id FROM outcome_records ORDER BY record_id"));
  EXPECT_THAT(outcomes.rows, ElementsAre(ElementsAre("parcel-000123"),
                                         ElementsAre("parcel-000124"),
                                         ElementsAre("parcel-000125")));
  EXPECT_EQ(Count(*db, "SELECT count(*) FROM scores"), 3);
  EXPECT_EQ(Count(*db, "SELECT count(*) FROM outcomes"), 3);

  // Midday of 3 Dec: 3 Dec still holds rows after it, nothing to drop;
  // again the same.
  ASSERT_OK_AND_ASSIGN(dropped,
                       DropPartitionsBefore(*db, Utc(2026, 12, 3, 12)));
  EXPECT_EQ(dropped, 0);
  EXPECT_EQ(Partitions(*db, "scores").size(), 3u);

  // A partition whose name says an old day but whose bounds hold newer
  // rows is never dropped.
  ASSERT_OK(db->Exec(
      "CREATE TABLE scores_p20261120 PARTITION OF scores FOR VALUES FROM "
      "('2026-12-06 00:00:00+00') TO ('2026-12-07 00:00:00+00')"));
  ASSERT_OK(
      AddScore(*db, "parcel-000126", Utc(2026, 12, 6, 7), set_id, name_id));
  EXPECT_THAT(
      DropPartitionsBefore(*db, Utc(2026, 12, 4)),
      StatusIs(absl::StatusCode::kFailedPrecondition,
               AllOf(HasSubstr("scores_p20261120"), HasSubstr("not dropped"),
                     HasSubstr("2026-12-06 00:00:00+00"))));
  EXPECT_EQ(Count(*db, "SELECT count(*) FROM scores_p20261120"), 1);
  EXPECT_EQ(Count(*db,
                  "SELECT count(*) FROM score_records "
                  "WHERE record_id = 'parcel-000126'"),
            1);
  EXPECT_THAT(DropPartitionsBefore(*db, absl::InfinitePast()),
              StatusIs(absl::StatusCode::kInvalidArgument));
}

TEST_F(PgSchemaTest, OneActiveScorePerRecordAndSetAcrossReplicas) {
  auto replica_a = Connect();
  auto replica_b = Connect();
  ASSERT_NE(replica_a, nullptr);
  ASSERT_NE(replica_b, nullptr);
  ASSERT_OK(MigratePgLedger(*replica_a).status());
  ASSERT_OK(EnsurePartitions(*replica_a, Utc(2026, 12, 3), Utc(2026, 12, 4)));
  std::string set_id, name_id;
  AddCourierSet(*replica_a, &set_id, &name_id);
  ASSERT_OK(AddScore(*replica_a, "parcel-000123", Utc(2026, 12, 3, 9), set_id,
                     name_id));
  // The same record and set on another replica, on another day (another
  // partition): score_records refuses it, and its score is rolled back.
  EXPECT_THAT(
      AddScore(*replica_b, "parcel-000123", Utc(2026, 12, 4, 9), set_id,
               name_id),
      StatusIs(absl::StatusCode::kAlreadyExists,
               AllOf(HasSubstr("score_records"), HasSubstr("parcel-000123"))));
  EXPECT_EQ(Count(*replica_b, "SELECT count(*) FROM scores"), 1);
  // Another record is fine; so is one outcome per record, and not two.
  ASSERT_OK(AddScore(*replica_b, "parcel-000124", Utc(2026, 12, 4, 9), set_id,
                     name_id));
  ASSERT_OK(AddOutcome(*replica_a, "parcel-000123", Utc(2026, 12, 3, 18)));
  EXPECT_THAT(
      AddOutcome(*replica_b, "parcel-000123", Utc(2026, 12, 4, 18)),
      StatusIs(absl::StatusCode::kAlreadyExists, HasSubstr("outcome_records")));
  // Score ids increase across the replicas' connections.
  ASSERT_OK_AND_ASSIGN(
      PgResult ids,
      replica_a->Query("SELECT record_id FROM scores ORDER BY id"));
  EXPECT_THAT(ids.rows, ElementsAre(ElementsAre("parcel-000123"),
                                    ElementsAre("parcel-000124")));
}

}  // namespace
}  // namespace plumbline::daemon
