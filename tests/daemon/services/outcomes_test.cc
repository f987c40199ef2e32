// File: tests/daemon/services/outcomes_test.cc
//
// OutcomesService called in-process (no network) on a real ledger in a
// temporary directory, with a fake health sink: the per-outcome codes and
// messages, batch limits, and which labelled scores reach the sink.
#include "daemon/services/outcomes.h"

#include <grpcpp/server_context.h>

#include <memory>
#include <string>

#include "absl/strings/str_cat.h"
#include "daemon/health/committed_feed.h"
#include "daemon/ledger/sqlite_ledger.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "tests/testing/fake_health_sink.h"
#include "tests/testing/process.h"

namespace plumbline::daemon {
namespace {

using ::testing::HasSubstr;

class OutcomesServiceTest : public ::testing::Test {
 protected:
  void SetUp() override {
    LedgerOptions options;
    options.path = dir_.File("ledger.db");
    auto ledger = SqliteLedger::Open(options);
    ASSERT_TRUE(ledger.ok()) << ledger.status();
    ledger_ = *std::move(ledger);
    // As plumbd feeds its monitor; no plans: scores count as unknown.
    feed_ = std::make_unique<CommittedFeed>(&sink_, nullptr);
    ledger_->set_rows_observer(
        [this](const CommittedRows& rows) { feed_->Feed(rows); });
    service_ = std::make_unique<OutcomesService>(ledger_.get(), 4);
    std::vector<ScoreEntry> scores;
    for (const char* id : {"a", "b", "c"}) {
      scores.push_back(ScoreEntry{id, "courier", "v1", ScoreRole::kActive,
                                  absl::FromUnixSeconds(1000), 0.5, 0.62,
                                  R"({"distance_km":3})"});
    }
    ASSERT_TRUE(ledger_->AppendScores(std::move(scores)).ok());
  }

  static v1::Outcome Outcome(const std::string& id, int label) {
    v1::Outcome o;
    o.set_record_id(id);
    o.set_label(label);
    return o;
  }
  grpc::Status ReportOne(const v1::Outcome& outcome,
                         v1::ReportOutcomeReply* reply) {
    v1::ReportOutcomeRequest request;
    *request.mutable_outcome() = outcome;
    return service_->ReportOutcome(nullptr, &request, reply);
  }

  testing::TempDir dir_;
  testing::FakeHealthSink sink_;
  std::unique_ptr<CommittedFeed> feed_;
  std::unique_ptr<Ledger> ledger_;
  std::unique_ptr<OutcomesService> service_;
};

TEST_F(OutcomesServiceTest, ReportOutcomeMapsEachResultToTheRpcStatus) {
  v1::ReportOutcomeReply reply;
  v1::Outcome first = Outcome("a", 1);
  first.mutable_observed_at()->set_seconds(2000);
  grpc::Status status = ReportOne(first, &reply);
  ASSERT_TRUE(status.ok()) << status.error_message();
  EXPECT_EQ(reply.result().record_id(), "a");
  EXPECT_EQ(reply.result().code(), 0);
  EXPECT_FALSE(reply.result().repeat());

  status = ReportOne(Outcome("a", 1), &reply);
  ASSERT_TRUE(status.ok());
  EXPECT_TRUE(reply.result().repeat());

  status = ReportOne(Outcome("a", 0), &reply);
  EXPECT_EQ(status.error_code(), grpc::StatusCode::FAILED_PRECONDITION);
  EXPECT_THAT(status.error_message(), HasSubstr("'a' already has outcome 1"));

  status = ReportOne(Outcome("nobody", 1), &reply);
  EXPECT_EQ(status.error_code(), grpc::StatusCode::NOT_FOUND);
  EXPECT_THAT(status.error_message(), HasSubstr("'nobody'"));

  status = ReportOne(Outcome("b", 2), &reply);
  EXPECT_EQ(status.error_code(), grpc::StatusCode::INVALID_ARGUMENT);
  EXPECT_THAT(status.error_message(),
              HasSubstr("outcome.label: record 'b': must be 0 or 1, got 2"));

  status = ReportOne(Outcome("", 1), &reply);
  EXPECT_EQ(status.error_code(), grpc::StatusCode::INVALID_ARGUMENT);
  EXPECT_THAT(status.error_message(), HasSubstr("outcome.record_id: empty"));

  v1::Outcome bad_time = Outcome("b", 1);
  bad_time.mutable_observed_at()->set_nanos(-5);
  status = ReportOne(bad_time, &reply);
  EXPECT_EQ(status.error_code(), grpc::StatusCode::INVALID_ARGUMENT);
  EXPECT_THAT(status.error_message(),
              HasSubstr("outcome.observed_at: record 'b'"));

  // Only the one new outcome reached the sink, joined to its score.
  const std::vector<LabelledScore> labelled = sink_.labelled();
  ASSERT_EQ(labelled.size(), 1u);
  EXPECT_EQ(labelled[0].record_id, "a");
  EXPECT_EQ(labelled[0].label, 1);
  EXPECT_EQ(labelled[0].log_odds, 0.5);
  EXPECT_EQ(labelled[0].observed_at, absl::FromUnixSeconds(2000));
}

TEST_F(OutcomesServiceTest, ReportOutcomesAnswersEachInRequestOrder) {
  v1::ReportOutcomesRequest request;
  *request.add_outcomes() = Outcome("b", 0);
  *request.add_outcomes() = Outcome("", 1);
  *request.add_outcomes() = Outcome("zz", 1);
  *request.add_outcomes() = Outcome("c", 1);
  v1::ReportOutcomesReply reply;
  grpc::Status status = service_->ReportOutcomes(nullptr, &request, &reply);
  ASSERT_TRUE(status.ok()) << status.error_message();
  ASSERT_EQ(reply.results_size(), 4);
  EXPECT_EQ(reply.accepted(), 2);
  EXPECT_EQ(reply.refused(), 2);
  EXPECT_EQ(reply.results(0).code(), 0);
  EXPECT_EQ(reply.results(1).code(),
            static_cast<int>(grpc::StatusCode::INVALID_ARGUMENT));
  EXPECT_THAT(reply.results(1).message(), HasSubstr("outcomes[1].record_id"));
  EXPECT_EQ(reply.results(2).record_id(), "zz");
  EXPECT_EQ(reply.results(2).code(),
            static_cast<int>(grpc::StatusCode::NOT_FOUND));
  EXPECT_EQ(reply.results(3).record_id(), "c");
  EXPECT_EQ(reply.results(3).code(), 0);
  EXPECT_EQ(sink_.labelled().size(), 2u);
}

TEST_F(OutcomesServiceTest, EmptyOrOversizedBatchIsRefusedWhole) {
  v1::ReportOutcomesRequest request;
  v1::ReportOutcomesReply reply;
  grpc::Status status = service_->ReportOutcomes(nullptr, &request, &reply);
  EXPECT_EQ(status.error_code(), grpc::StatusCode::INVALID_ARGUMENT);
  EXPECT_THAT(status.error_message(), HasSubstr("empty batch"));
  for (int i = 0; i < 5; ++i) *request.add_outcomes() = Outcome("a", 1);
  status = service_->ReportOutcomes(nullptr, &request, &reply);
  EXPECT_EQ(status.error_code(), grpc::StatusCode::INVALID_ARGUMENT);
  EXPECT_THAT(status.error_message(),
              HasSubstr("5 outcomes, over the limit of 4 (max_batch_records)"));
  EXPECT_TRUE(sink_.labelled().empty());
}

TEST_F(OutcomesServiceTest, WithoutObservedAtTheOutcomeIsDatedWhenReported) {
  const absl::Time before = absl::Now();
  v1::ReportOutcomeReply reply;
  ASSERT_TRUE(ReportOne(Outcome("c", 0), &reply).ok());
  const std::vector<LabelledScore> labelled = sink_.labelled();
  ASSERT_EQ(labelled.size(), 1u);
  EXPECT_GE(labelled[0].observed_at, before);
  EXPECT_LE(labelled[0].observed_at, absl::Now());
}

}  // namespace
}  // namespace plumbline::daemon
