// File: tests/daemon/csv/outcomes_test.cc
//
// plumbctl's outcomes CSV: reading and checking the file, local refusals,
// batching through a fake sender, and the refusals file.
#include "daemon/csv/outcomes.h"

#include <string>
#include <vector>

#include "absl/strings/str_cat.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "tests/testing/process.h"

namespace plumbline::daemon {
namespace {

using ::testing::ElementsAre;
using ::testing::HasSubstr;
using testing::TempDir;
using testing::WriteTextFile;

// Python 3: datetime(2026, 12, 1, 8, 30, tzinfo=timezone.utc).timestamp()
constexpr int64_t kDecember1At0830Utc = 1796113800;

absl::StatusOr<OutcomesCsv> ReadText(const TempDir& dir,
                                     const std::string& text) {
  const std::string path = dir.File("outcomes.csv");
  EXPECT_TRUE(WriteTextFile(path, text).ok());
  return ReadOutcomesCsv(path);
}

TEST(ParseObservedAtTest, AcceptsRfc3339AndUnixSeconds) {
  EXPECT_EQ(*ParseObservedAt("2026-12-01T08:30:00Z"),
            absl::FromUnixSeconds(kDecember1At0830Utc));
  // Python 3: datetime(2026, 12, 1, 9, 30, 0, 250000,
  //   tzinfo=timezone(timedelta(hours=1))).timestamp() == 1796113800.25
  EXPECT_EQ(*ParseObservedAt("2026-12-01T09:30:00.25+01:00"),
            absl::FromUnixMillis(kDecember1At0830Utc * 1000 + 250));
  EXPECT_EQ(*ParseObservedAt("1796113800"),
            absl::FromUnixSeconds(kDecember1At0830Utc));
  EXPECT_EQ(*ParseObservedAt(" 1796113800.25 "),
            absl::FromUnixMillis(kDecember1At0830Utc * 1000 + 250));
  for (const char* bad :
       {"", "yesterday", "2026-12-01", "2026-13-01T00:00:00Z", "nan", "inf"}) {
    EXPECT_EQ(ParseObservedAt(bad).status().code(),
              absl::StatusCode::kInvalidArgument)
        << bad;
  }
}

TEST(ParseLabelTest, OnlyZeroOrOne) {
  EXPECT_EQ(*ParseLabel("0"), 0);
  EXPECT_EQ(*ParseLabel(" 1 "), 1);
  for (const char* bad : {"", "2", "-1", "true", "1.0", "01"}) {
    EXPECT_THAT(ParseLabel(bad).status().message(), HasSubstr("not 0 or 1"))
        << bad;
  }
}

TEST(SetObservedAtTest, SplitsSecondsAndNanosRoundingDown) {
  v1::Outcome outcome;
  SetObservedAt(absl::FromUnixMillis(-1500), &outcome);  // 1.5 s before 1970
  EXPECT_EQ(outcome.observed_at().seconds(), -2);
  EXPECT_EQ(outcome.observed_at().nanos(), 500000000);
}

TEST(ReadOutcomesCsvTest, ChecksRowsAndRefusesBadOnesLocally) {
  TempDir dir;
  absl::StatusOr<OutcomesCsv> csv =
      ReadText(dir,
               "record_id,label,observed_at\n"  // line 1
               "p-1,1,2026-12-01T08:30:00Z\n"   // 2
               "p-2,0,\n"                       // 3: observed_at empty = unset
               ",1,\n"                          // 4: no id
               "p-4,yes,\n"                     // 5: bad label
               "p-5,1,last tuesday\n"           // 6: bad time
               "\"p,6\",0,1796113800\n");       // 7: quoted id with a comma
  ASSERT_TRUE(csv.ok()) << csv.status();
  ASSERT_EQ(csv->outcomes.size(), 3u);
  EXPECT_THAT(csv->lines, ElementsAre(2, 3, 7));
  EXPECT_EQ(csv->outcomes[0].record_id(), "p-1");
  EXPECT_EQ(csv->outcomes[0].label(), 1);
  EXPECT_EQ(csv->outcomes[0].observed_at().seconds(), kDecember1At0830Utc);
  EXPECT_FALSE(csv->outcomes[1].has_observed_at());
  EXPECT_EQ(csv->outcomes[2].record_id(), "p,6");
  ASSERT_EQ(csv->refused.size(), 3u);
  EXPECT_EQ(csv->refused[0].line, 4);
  EXPECT_EQ(csv->refused[0].message, "record_id is empty");
  EXPECT_EQ(csv->refused[1].record_id, "p-4");
  EXPECT_EQ(csv->refused[1].code, absl::StatusCode::kInvalidArgument);
  EXPECT_EQ(csv->refused[1].message, "label 'yes' is not 0 or 1");
  EXPECT_EQ(csv->refused[2].line, 6);
  EXPECT_THAT(csv->refused[2].message, HasSubstr("observed_at 'last tuesday'"));
}

TEST(ReadOutcomesCsvTest, FileOfTheWrongShapeIsInvalidArgumentNamingIt) {
  TempDir dir;
  absl::StatusOr<OutcomesCsv> csv =
      ReadText(dir, "record_id,label,outcome_note,when\np-1,1,x,y\n");
  EXPECT_EQ(csv.status().code(), absl::StatusCode::kInvalidArgument);
  EXPECT_THAT(csv.status().message(),
              HasSubstr("unexpected column(s) 'outcome_note', 'when'"));
  EXPECT_THAT(csv.status().message(), HasSubstr(dir.File("outcomes.csv")));

  csv = ReadText(dir, "record_id,observed_at\np-1,1796113800\n");
  EXPECT_THAT(csv.status().message(), HasSubstr("no 'label' column"));

  // No header: the first record is taken as one and its names are unknown.
  csv = ReadText(dir, "p-1,1\np-2,0\n");
  EXPECT_THAT(csv.status().message(),
              HasSubstr("unexpected column(s) 'p-1', '1'"));

  csv = ReadOutcomesCsv(dir.File("absent.csv"));
  EXPECT_EQ(csv.status().code(), absl::StatusCode::kNotFound);
}

TEST(ReportOutcomesCsvTest, SendsBatchesAndCollectsRefusalsInFileOrder) {
  TempDir dir;
  absl::StatusOr<OutcomesCsv> csv = ReadText(
      dir, "record_id,label\na,1\nb,0\nc,7\nd,1\ne,0\n");  // c refused here
  ASSERT_TRUE(csv.ok()) << csv.status();
  std::vector<int> batch_sizes;
  // The fake daemon: "b" is unknown, "d" a repeat, the rest accepted.
  auto sender = [&](const v1::ReportOutcomesRequest& request)
      -> absl::StatusOr<v1::ReportOutcomesReply> {
    batch_sizes.push_back(request.outcomes_size());
    v1::ReportOutcomesReply reply;
    for (const v1::Outcome& o : request.outcomes()) {
      v1::OutcomeResult* r = reply.add_results();
      r->set_record_id(o.record_id());
      if (o.record_id() == "b") {
        r->set_code(static_cast<int>(absl::StatusCode::kNotFound));
        r->set_message("no score with record_id 'b' is in the ledger");
      }
      r->set_repeat(o.record_id() == "d");
    }
    return reply;
  };
  const OutcomesCsvRun run = ReportOutcomesCsv(*csv, 2, sender);
  ASSERT_TRUE(run.status.ok()) << run.status;
  EXPECT_THAT(batch_sizes, ElementsAre(2, 2));
  EXPECT_EQ(run.batches, 2);
  EXPECT_EQ(run.accepted, 3);
  EXPECT_EQ(run.repeats, 1);
  ASSERT_EQ(run.refusals.size(), 2u);
  EXPECT_EQ(run.refusals[0].record_id, "b");  // line 3
  EXPECT_EQ(run.refusals[0].code, absl::StatusCode::kNotFound);
  EXPECT_EQ(run.refusals[1].record_id, "c");  // line 4, refused locally
  EXPECT_EQ(FormatRefusalsCsv(run.refusals),
            "record_id,line,code,message\n"
            "b,3,NOT_FOUND,no score with record_id 'b' is in the ledger\n"
            "c,4,INVALID_ARGUMENT,label '7' is not 0 or 1\n");
}

TEST(ReportOutcomesCsvTest, StopsAtTheFirstFailedCallSayingWhere) {
  TempDir dir;
  absl::StatusOr<OutcomesCsv> csv =
      ReadText(dir, "record_id,label\na,1\nb,0\nc,1\nd,1\n");
  ASSERT_TRUE(csv.ok()) << csv.status();
  int calls = 0;
  auto sender = [&](const v1::ReportOutcomesRequest& request)
      -> absl::StatusOr<v1::ReportOutcomesReply> {
    if (++calls == 2) return absl::UnavailableError("connection refused");
    v1::ReportOutcomesReply reply;
    for (int i = 0; i < request.outcomes_size(); ++i) reply.add_results();
    return reply;
  };
  const OutcomesCsvRun run = ReportOutcomesCsv(*csv, 2, sender);
  EXPECT_EQ(run.status.code(), absl::StatusCode::kUnavailable);
  EXPECT_THAT(run.status.message(),
              HasSubstr("lines 4..5: connection refused"));
  EXPECT_EQ(run.first_unsent_line, 4);
  EXPECT_EQ(run.accepted, 2);
  EXPECT_EQ(calls, 2);
}

}  // namespace
}  // namespace plumbline::daemon
