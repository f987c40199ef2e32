// File: tests/daemon/health/health_e2e_test.cc
//
// The model-health monitor end to end through the real plumbd: records are
// scored and their outcomes reported over gRPC, the daemon's tick (1 s in
// the test config) evaluates the windows, and the figures are read back
// three ways (the Monitor RPC, the Prometheus endpoint over HTTP, `plumbctl
// health`). The values are checked against tests/daemon/health_reference.py,
// which computed them with scikit-learn 1.2, SciPy, statsmodels and NumPy on
// the same records (ctest fixture health_reference, directory in
// PLUMBLINE_HEALTH_REF): AUC (roc_auc_score), Hosmer-Lemeshow over deciles
// of risk (NumPy, written out there; p-value scipy.stats.chi2.sf), the
// calibration intercept (statsmodels GLM with the log-odds as offset) and
// slope (statsmodels Logit), the PSI tests (scipy.stats.chi2.sf / isf) and
// the CUSUM charts (the recursion in NumPy).
// promtool (Debian package prometheus) lints the exposition. A second test
// scores records from a shifted distribution and watches the state become
// drifting.
//
// Waits poll (no timing assertions); each daemon is killed in TearDown.
#include <grpcpp/client_context.h>
#include <grpcpp/create_channel.h>
#include <grpcpp/security/credentials.h>

#include <cmath>
#include <filesystem>
#include <map>
#include <string>
#include <vector>

#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "absl/strings/str_join.h"
#include "absl/strings/str_split.h"
#include "daemon/ledger/ledger.h"
#include "daemon/policy/figures.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "plumbline/v1/monitor.grpc.pb.h"
#include "plumbline/v1/outcomes.grpc.pb.h"
#include "tests/testing/http.h"
#include "tests/testing/json_file.h"
#include "tests/testing/process.h"

namespace plumbline::daemon {
namespace {

using ::testing::ElementsAre;
using testing::FindSample;
using testing::PlumbdProcess;
using testing::PollUntil;
using testing::Sample;
using testing::TempDir;

constexpr char kSet[] = "parcel_health";
constexpr char kVersion[] = "e2e-1";

// |got - want| within a relative tolerance (and a tiny absolute one for
// figures near 0).
void ExpectClose(double got, double want, double rel, const std::string& what) {
  EXPECT_LE(std::abs(got - want), rel * std::abs(want) + 1e-15)
      << what << ": got " << absl::StrFormat("%.17g", got) << ", want "
      << absl::StrFormat("%.17g", want);
}

// The sample `name` with `labels` exists and equals `want` to the 16
// significant digits the exposition prints.
void ExpectExported(const std::vector<Sample>& samples, const std::string& name,
                    const std::map<std::string, std::string>& labels,
                    double want) {
  std::optional<double> got = FindSample(samples, name, labels);
  ASSERT_TRUE(got.has_value()) << name << " is not exported";
  ExpectClose(*got, want, 1e-15, name);
}

// The whitespace-separated words of the first line of `text` whose first
// word is `first`.
std::vector<std::string> Tokens(const std::string& text,
                                absl::string_view first) {
  for (absl::string_view line : absl::StrSplit(text, '\n')) {
    std::vector<std::string> words =
        absl::StrSplit(line, ' ', absl::SkipWhitespace());
    if (!words.empty() && words[0] == first) return words;
  }
  return {};
}

std::string Six(double x) { return absl::StrFormat("%.6g", x); }

const google::protobuf::Value& Field(const google::protobuf::Struct& s,
                                     const std::string& key) {
  static const google::protobuf::Value* const kNull =
      new google::protobuf::Value();
  auto it = s.fields().find(key);
  EXPECT_NE(it, s.fields().end()) << "reference has no '" << key << "'";
  return it == s.fields().end() ? *kNull : it->second;
}

class HealthEndToEndTest : public ::testing::Test {
 protected:
  void SetUp() override {
    ref_dir_ = plumbline::testing::ReferencePathFromEnv("PLUMBLINE_HEALTH_REF");
    ASSERT_FALSE(ref_dir_.empty());
    auto records = plumbline::testing::ReadJsonFile(ref_dir_ + "/records.json");
    ASSERT_TRUE(records.ok()) << records.status();
    records_ = *std::move(records);
    auto reference =
        plumbline::testing::ReadJsonFile(ref_dir_ + "/reference.json");
    ASSERT_TRUE(reference.ok()) << reference.status();
    reference_ = *std::move(reference);

    const std::string config = dir_.File("plumbd.json");
    ASSERT_TRUE(testing::WriteTextFile(
                    config, absl::StrCat(R"({
  "sets_dir": ")",
                                         ref_dir_, R"(/sets",
  "ledger_path": ")",
                                         dir_.File("ledger.db"), R"(",
  "metrics_listen": "127.0.0.1:0",
  "ledger": {"relaxed_commits": true},
  "windows": {"labelled_count": 5000, "scored_count": 10000,
              "time_seconds": 86400, "buckets": 20},
  "drift_policy": {"tick_seconds": 1, "min_labelled": 500, "min_scored": 500}
})"))
                    .ok());
    auto plumbd = PlumbdProcess::Start(dir_.path(), {"--config", config});
    ASSERT_TRUE(plumbd.ok()) << plumbd.status();
    plumbd_ = *std::move(plumbd);
    metrics_addr_ = plumbd_->MetricsAddress();
    ASSERT_FALSE(metrics_addr_.empty()) << plumbd_->Log();
    auto channel = grpc::CreateChannel(plumbd_->addr(),
                                       grpc::InsecureChannelCredentials());
    scoring_ = v1::Scoring::NewStub(channel);
    outcomes_ = v1::Outcomes::NewStub(channel);
    monitor_ = v1::Monitor::NewStub(channel);
  }
  void TearDown() override { plumbd_.reset(); }

  // Scores one phase's records in batches of 500 and reports their outcomes;
  // returns the probabilities plumbd answered, in order.
  std::vector<double> ScoreAndLabel(const std::string& phase) {
    const auto& list = Field(records_, phase).list_value().values();
    std::vector<double> probabilities;
    for (int start = 0; start < list.size(); start += 500) {
      v1::ScoreBatchRequest request;
      request.set_set(kSet);
      v1::ReportOutcomesRequest outcomes;
      for (int i = start; i < std::min(list.size(), start + 500); ++i) {
        const google::protobuf::Struct& r = list[i].struct_value();
        v1::Record* record = request.add_records();
        record->set_record_id(Field(r, "record_id").string_value());
        *record->mutable_features() = Field(r, "features").struct_value();
        v1::Outcome* o = outcomes.add_outcomes();
        o->set_record_id(record->record_id());
        o->set_label(static_cast<int>(Field(r, "label").number_value()));
      }
      grpc::ClientContext score_context;
      v1::ScoreBatchReply reply;
      grpc::Status s = scoring_->ScoreBatch(&score_context, request, &reply);
      EXPECT_TRUE(s.ok()) << s.error_message();
      for (const v1::Scored& scored : reply.scores()) {
        probabilities.push_back(scored.probability());
        answered_log_odds_.push_back(scored.log_odds());
        answered_probability_.push_back(scored.probability());
      }
      for (const v1::Outcome& o : outcomes.outcomes()) {
        answered_labels_.push_back(o.label());
      }
      grpc::ClientContext outcome_context;
      v1::ReportOutcomesReply outcome_reply;
      s = outcomes_->ReportOutcomes(&outcome_context, outcomes, &outcome_reply);
      EXPECT_TRUE(s.ok()) << s.error_message();
      EXPECT_EQ(outcome_reply.refused(), 0);
    }
    return probabilities;
  }

  grpc::Status GetHealth(const std::string& set, v1::SetHealth* health) {
    grpc::ClientContext context;
    v1::GetSetHealthRequest request;
    request.set_set(set);
    return monitor_->GetSetHealth(&context, request, health);
  }

  // Waits for an evaluation that has seen `records` labelled and scored
  // records in its count window.
  v1::SetHealth WaitForEvaluation(int64_t records) {
    v1::SetHealth health;
    const bool seen = PollUntil([&] {
      return GetHealth(kSet, &health).ok() && health.windows_size() == 2 &&
             health.windows(0).labelled() == records &&
             health.windows(0).scored() == records;
    });
    EXPECT_TRUE(seen) << health.DebugString();
    return health;
  }

  // The exact outcome figures from scikit-learn, statsmodels and NumPy on the
  // log-odds, probabilities and labels plumbd answered, in the order their
  // outcomes were reported (health_reference.py --outcome-figures).
  google::protobuf::Struct OutcomeReference() {
    std::string json = "{\"log_odds\": [";
    for (size_t i = 0; i < answered_log_odds_.size(); ++i) {
      absl::StrAppendFormat(&json, "%s%.17g", i ? ", " : "",
                            answered_log_odds_[i]);
    }
    absl::StrAppend(&json, "], \"probability\": [");
    for (size_t i = 0; i < answered_probability_.size(); ++i) {
      absl::StrAppendFormat(&json, "%s%.17g", i ? ", " : "",
                            answered_probability_[i]);
    }
    absl::StrAppend(&json, "], \"labels\": [",
                    absl::StrJoin(answered_labels_, ", "), "]}");
    const std::string in = dir_.File("answered.json");
    const std::string out = dir_.File("outcome_reference.json");
    EXPECT_TRUE(testing::WriteTextFile(in, json).ok());
    auto run =
        testing::RunProcess({PLUMBLINE_PYTHON_PATH, HEALTH_REFERENCE_SCRIPT,
                             "--outcome-figures", in, out},
                            dir_.path());
    EXPECT_TRUE(run.ok()) << run.status();
    if (run.ok()) {
      EXPECT_EQ(run->exit_code, 0) << run->out << run->err;
    }
    auto reference = plumbline::testing::ReadJsonFile(out);
    EXPECT_TRUE(reference.ok()) << reference.status();
    return reference.ok() ? *reference : google::protobuf::Struct();
  }

  TempDir dir_;
  std::vector<double> answered_log_odds_;
  std::vector<double> answered_probability_;
  std::vector<int> answered_labels_;
  std::string ref_dir_;
  google::protobuf::Struct records_;
  google::protobuf::Struct reference_;
  std::unique_ptr<PlumbdProcess> plumbd_;
  std::string metrics_addr_;
  std::unique_ptr<v1::Scoring::Stub> scoring_;
  std::unique_ptr<v1::Outcomes::Stub> outcomes_;
  std::unique_ptr<v1::Monitor::Stub> monitor_;
};

TEST_F(HealthEndToEndTest, FiguresMatchScikitLearnAndSciPyEverywhere) {
  const std::vector<double> probabilities = ScoreAndLabel("steady");
  const auto& want_p = Field(reference_, "probability").list_value().values();
  ASSERT_EQ(probabilities.size(), static_cast<size_t>(want_p.size()));
  for (size_t i = 0; i < probabilities.size(); ++i) {
    // The same records: plumbd's probability against numpy's expit of the
    // log-odds the script computed from the coefficients.
    ASSERT_NEAR(probabilities[i], want_p[static_cast<int>(i)].number_value(),
                1e-12)
        << i;
  }
  const v1::SetHealth health = WaitForEvaluation(3000);
  const google::protobuf::Struct outcome = OutcomeReference();
  EXPECT_EQ(health.set(), kSet);
  EXPECT_EQ(health.version(), kVersion);
  EXPECT_EQ(health.state(), v1::STEADY) << health.DebugString();

  absl::StatusOr<std::string> scrape =
      testing::HttpGet(metrics_addr_, "/metrics");
  ASSERT_TRUE(scrape.ok()) << scrape.status();
  const std::vector<Sample> samples = testing::ParseExposition(*scrape);
  const std::map<std::string, std::string> version = {{"set", kSet},
                                                      {"version", kVersion}};
  EXPECT_EQ(FindSample(samples, "plumbline_drift_state", version), 0.0);

  const auto& features = Field(reference_, "features").struct_value();
  for (const v1::WindowHealth& w : health.windows()) {
    SCOPED_TRACE(w.window());
    EXPECT_EQ(w.labelled(), 3000);
    EXPECT_EQ(w.positives(), Field(reference_, "positives").number_value());
    std::map<std::string, std::string> labels = version;
    labels["window"] = w.window();
    // Each figure: the RPC against the reference, the metric against the RPC
    // (the exposition prints 16 significant digits).
    auto check = [&](const char* metric, const v1::Figure& figure, double want,
                     double rel) {
      ASSERT_TRUE(figure.defined()) << metric << ": " << figure.note();
      ExpectClose(figure.value(), want, rel, metric);
      ExpectExported(samples, absl::StrCat("plumbline_", metric), labels,
                     figure.value());
    };
    // sklearn.metrics.log_loss and brier_score_loss.
    check("log_loss", w.log_loss(),
          Field(reference_, "log_loss").number_value(), 1e-9);
    check("brier_score", w.brier_score(),
          Field(reference_, "brier").number_value(), 1e-9);
    // PSI: scipy.special.rel_entr with the 1e-4 floor of monitor/stability.h.
    check("score_psi", w.score_psi(),
          Field(reference_, "score_psi").number_value(), 1e-9);
    // sklearn.metrics.roc_auc_score: exact (Mann-Whitney over the records).
    ASSERT_TRUE(w.auc().defined()) << w.auc().note();
    EXPECT_NEAR(w.auc().value(), Field(outcome, "auc").number_value(), 1e-12);
    ExpectExported(samples, "plumbline_auc", labels, w.auc().value());
    EXPECT_EQ(w.exact_records(), 3000);
    EXPECT_EQ(w.unstored_labelled(), 0);
    // Hosmer-Lemeshow over deciles of risk: the NumPy implementation in
    // health_reference.py, p-value scipy.stats.chi2.sf on 8 degrees of
    // freedom.
    const auto& hl = Field(outcome, "hosmer_lemeshow").struct_value();
    check("hosmer_lemeshow_statistic", w.hosmer_lemeshow_statistic(),
          Field(hl, "statistic").number_value(), 1e-9);
    check("hosmer_lemeshow_p_value", w.hosmer_lemeshow_p_value(),
          Field(hl, "p_value").number_value(), 1e-9);
    // statsmodels GLM(Binomial) with the log-odds as offset (slope 1), and
    // statsmodels Logit on a constant and the log-odds (the slope).
    check("calibration_intercept", w.calibration_intercept(),
          Field(outcome, "calibration_intercept").number_value(), 1e-8);
    check("calibration_slope", w.calibration_slope(),
          Field(outcome, "calibration_slope").number_value(), 1e-8);
    // The score PSI's test: scipy.stats.chi2.sf(PSI / (1/n + 1/m), B - 1)
    // and chi2.isf(0.01 / 10, B - 1) * (1/n + 1/m).
    const auto& score_test = Field(reference_, "score_psi_test").struct_value();
    ASSERT_TRUE(w.score_psi_test().defined()) << w.score_psi_test().note();
    ExpectClose(w.score_psi_test().p_value(),
                Field(score_test, "p_value").number_value(), 1e-9,
                "score psi p-value");
    ExpectClose(w.score_psi_test().critical_psi(),
                Field(score_test, "critical_psi").number_value(), 1e-9,
                "score critical psi");
    EXPECT_EQ(w.score_psi_test().baseline_count(),
              Field(score_test, "baseline_count").number_value());
    EXPECT_EQ(w.score_psi_test().degrees_of_freedom(),
              Field(score_test, "degrees_of_freedom").number_value());
    ExpectExported(samples, "plumbline_score_psi_p_value", labels,
                   w.score_psi_test().p_value());
    ExpectExported(samples, "plumbline_score_psi_critical", labels,
                   w.score_psi_test().critical_psi());
    // The other figures: the metric equals the RPC.
    for (const WindowFigure& other : kWindowFigures) {
      const v1::Figure& f = (w.*(other.get))();
      ASSERT_TRUE(f.defined()) << other.metric << ": " << f.note();
      ExpectExported(samples, absl::StrCat("plumbline_", other.metric), labels,
                     f.value());
    }
    labels["kind"] = "labelled";
    EXPECT_EQ(FindSample(samples, "plumbline_window_records", labels), 3000.0);
    EXPECT_EQ(
        FindSample(samples, "plumbline_window_refused_records_total", labels),
        0.0);
    labels.erase("kind");

    ASSERT_EQ(w.features_size(), 5);
    for (const v1::FeatureHealth& f : w.features()) {
      SCOPED_TRACE(f.feature());
      const auto& ref = Field(features, f.feature()).struct_value();
      labels["feature"] = f.feature();
      ExpectClose(f.missing_rate().value(),
                  Field(ref, "missing").number_value(), 1e-12, "missing rate");
      ExpectExported(samples, "plumbline_feature_missing_ratio", labels,
                     f.missing_rate().value());
      if (f.feature() == "rainfall_mm") {  // the set gives it no baseline
        EXPECT_FALSE(f.psi().defined());
        EXPECT_EQ(f.psi().note(), "no baseline");
        EXPECT_EQ(FindSample(samples, "plumbline_feature_psi", labels),
                  std::nullopt);
        continue;
      }
      ExpectClose(f.psi().value(), Field(ref, "psi").number_value(), 1e-9,
                  "psi");
      // scipy.stats.chi2.sf / isf at the feature's counts.
      const auto& test = Field(ref, "psi_test").struct_value();
      ASSERT_TRUE(f.psi_test().defined()) << f.psi_test().note();
      ExpectClose(f.psi_test().p_value(), Field(test, "p_value").number_value(),
                  1e-9, "feature psi p-value");
      ExpectClose(f.psi_test().critical_psi(),
                  Field(test, "critical_psi").number_value(), 1e-9,
                  "feature critical psi");
      EXPECT_EQ(f.psi_test().baseline_count(),
                Field(test, "baseline_count").number_value());
      EXPECT_EQ(f.psi_test().window_count(),
                Field(test, "window_count").number_value());
      ExpectExported(samples, "plumbline_feature_psi_p_value", labels,
                     f.psi_test().p_value());
      ExpectExported(samples, "plumbline_feature_psi_critical", labels,
                     f.psi_test().critical_psi());
      ExpectClose(f.out_of_range_rate().value(),
                  Field(ref, "out_of_range").number_value(), 1e-12,
                  "out of range");
      ExpectExported(samples, "plumbline_feature_psi", labels, f.psi().value());
      ExpectExported(samples, "plumbline_feature_out_of_range_ratio", labels,
                     f.out_of_range_rate().value());
    }
  }

  // alpha 0.01 over 10 tests (score and 4 features with a baseline, two
  // windows): Bonferroni.
  EXPECT_DOUBLE_EQ(health.stability_test_alpha(),
                   Field(reference_, "stability_test_alpha").number_value());
  ExpectExported(samples, "plumbline_stability_test_alpha", version,
                 health.stability_test_alpha());
  // The CUSUM charts against the recursion run in NumPy over the records in
  // the order their outcomes were reported (no alarm in this stream).
  const auto& cusum = Field(outcome, "cusum").struct_value();
  ASSERT_EQ(health.cusum_size(), 3);
  for (const v1::CusumChart& c : health.cusum()) {
    SCOPED_TRACE(c.chart());
    ASSERT_TRUE(c.ready()) << c.note();
    const auto& ref = Field(cusum, c.chart()).struct_value();
    EXPECT_EQ(c.alarms(), 0);
    EXPECT_LT(Field(ref, "max").number_value(), c.limit());
    EXPECT_NEAR(c.value(), Field(ref, "value").number_value(), 1e-9);
    EXPECT_EQ(c.records(), 3000);
    std::map<std::string, std::string> chart = version;
    chart["chart"] = c.chart();
    ExpectExported(samples, "plumbline_cusum_value", chart, c.value());
    ExpectExported(samples, "plumbline_cusum_limit", chart, c.limit());
    EXPECT_EQ(FindSample(samples, "plumbline_cusum_alarms_total", chart), 0.0);
  }
  // Outcome coverage: every record scored in the last few seconds has its
  // outcome.
  ASSERT_EQ(health.outcome_coverage_size(), 4);
  EXPECT_EQ(health.outcome_coverage(0).scored(), 3000);
  EXPECT_EQ(health.outcome_coverage(0).coverage().value(), 1.0);

  // Request and ledger metrics.
  EXPECT_EQ(FindSample(samples, "plumbline_requests_total",
                       {{"method", "plumbline.v1.Scoring/ScoreBatch"},
                        {"code", "OK"}}),
            6.0);
  EXPECT_EQ(FindSample(samples, "plumbline_request_duration_seconds_count",
                       {{"method", "plumbline.v1.Scoring/ScoreBatch"}}),
            6.0);
  v1::SetHealth unknown;
  EXPECT_EQ(GetHealth("no_such_set", &unknown).error_code(),
            grpc::StatusCode::NOT_FOUND);
  absl::StatusOr<std::string> rescrape =
      testing::HttpGet(metrics_addr_, "/metrics");
  ASSERT_TRUE(rescrape.ok());
  const std::vector<Sample> later = testing::ParseExposition(*rescrape);
  EXPECT_EQ(FindSample(later, "plumbline_requests_total",
                       {{"method", "plumbline.v1.Monitor/GetSetHealth"},
                        {"code", "NOT_FOUND"}}),
            1.0);
  std::optional<double> committed =
      FindSample(later, "plumbline_ledger_committed_rows_total", {});
  ASSERT_TRUE(committed.has_value());
  EXPECT_GE(*committed, 6000.0);  // 3000 scores and 3000 outcomes
  EXPECT_TRUE(FindSample(later, "plumbline_ledger_queue_rows", {}).has_value());
  // The default capacity (LedgerOptions; this test's config sets none).
  EXPECT_EQ(FindSample(later, "plumbline_ledger_queue_capacity_rows", {}),
            static_cast<double>(LedgerOptions{}.queue_capacity_rows));
  EXPECT_GT(
      FindSample(later, "plumbline_ledger_commit_duration_seconds_count", {})
          .value_or(0),
      0.0);

  // promtool finds no problem in the exposition.
  ASSERT_STRNE(PROMTOOL_PATH, "")
      << "promtool not found when the build was configured: run ops/setup "
         "(it installs the Debian package prometheus) and reconfigure";
  const std::string scraped = dir_.File("scrape.txt");
  ASSERT_TRUE(testing::WriteTextFile(scraped, *rescrape).ok());
  auto lint = testing::RunProcess(
      {"/bin/sh", "-c",
       absl::StrCat(PROMTOOL_PATH, " check metrics < ", scraped)},
      dir_.path());
  ASSERT_TRUE(lint.ok()) << lint.status();
  EXPECT_EQ(lint->exit_code, 0) << lint->out << lint->err;
  EXPECT_EQ(lint->out + lint->err, "");

  // plumbctl health prints the same figures (six significant digits).
  auto shown = testing::RunProcess(
      {PLUMBCTL_PATH, "--addr", plumbd_->addr(), "health", "--set", kSet},
      dir_.path());
  ASSERT_TRUE(shown.ok()) << shown.status();
  ASSERT_EQ(shown->exit_code, 0) << shown->err;
  v1::SetHealth now;
  ASSERT_TRUE(GetHealth(kSet, &now).ok());
  EXPECT_THAT(Tokens(shown->out, "state:"), ElementsAre("state:", "steady"));
  const v1::WindowHealth& count = now.windows(0);
  const v1::WindowHealth& time = now.windows(1);
  EXPECT_THAT(Tokens(shown->out, "log_loss"),
              ElementsAre("log_loss", Six(count.log_loss().value()),
                          Six(time.log_loss().value())));
  EXPECT_THAT(Tokens(shown->out, "score_psi"),
              ElementsAre("score_psi", Six(count.score_psi().value()),
                          Six(time.score_psi().value())));
  for (const char* metric :
       {"auc", "hosmer_lemeshow_statistic", "hosmer_lemeshow_p_value",
        "calibration_intercept", "calibration_slope"}) {
    const WindowFigure* wf = FindWindowFigure(metric);
    ASSERT_NE(wf, nullptr);
    EXPECT_THAT(Tokens(shown->out, metric),
                ElementsAre(metric, Six((count.*(wf->get))().value()),
                            Six((time.*(wf->get))().value())));
  }
  EXPECT_THAT(
      Tokens(shown->out, "score_psi_p_value"),
      ElementsAre("score_psi_p_value", Six(count.score_psi_test().p_value()),
                  Six(time.score_psi_test().p_value())));
  EXPECT_THAT(Tokens(shown->out, "score_psi_critical"),
              ElementsAre("score_psi_critical",
                          Six(count.score_psi_test().critical_psi()),
                          Six(time.score_psi_test().critical_psi())));
  EXPECT_THAT(
      Tokens(shown->out, "distance_km"),
      ElementsAre("distance_km", "count", Six(count.features(0).psi().value()),
                  Six(count.features(0).psi_test().p_value()),
                  Six(count.features(0).psi_test().critical_psi()),
                  Six(count.features(0).missing_rate().value()),
                  Six(count.features(0).out_of_range_rate().value())));
  const std::vector<std::string> upper = Tokens(shown->out, "upper");
  // "upper  odds x 1.5  VALUE  LIMIT  ARL ..."
  ASSERT_GE(upper.size(), 6u) << shown->out;
  EXPECT_EQ(upper[4], Six(now.cusum(0).value()));
  EXPECT_EQ(upper[5], Six(now.cusum(0).limit()));
}

TEST_F(HealthEndToEndTest, ShiftedRecordsDriveTheSetToDrifting) {
  ScoreAndLabel("shifted");
  v1::SetHealth health;
  const bool drifting = PollUntil([&] {
    return GetHealth(kSet, &health).ok() && health.state() == v1::DRIFTING &&
           health.windows(0).scored() == 2000;
  });
  ASSERT_TRUE(drifting) << health.DebugString();
  // PSI 0.25: rule of thumb of credit-scoring practice (common practice, no
  // source) and Plumbline's default drifting threshold; each reason is
  // significant too, and says at what p-value.
  bool score_reason = false, distance_reason = false, building_reason = false;
  for (const v1::DriftReason& r : health.reasons()) {
    if (r.state() != v1::DRIFTING) continue;
    EXPECT_GT(r.value(), r.threshold()) << r.text();
    EXPECT_EQ(r.test(), "psi_test") << r.text();
    EXPECT_LT(r.p_value(), health.stability_test_alpha()) << r.text();
    EXPECT_THAT(r.text(), ::testing::HasSubstr("PSI test p-value"));
    if (r.metric() == "score_psi") score_reason = true;
    if (r.metric() == "feature_psi" && r.feature() == "distance_km") {
      distance_reason = true;
    }
    if (r.metric() == "feature_psi" && r.feature() == "building_type") {
      building_reason = true;
    }
  }
  EXPECT_TRUE(score_reason) << health.DebugString();
  EXPECT_TRUE(distance_reason);
  EXPECT_TRUE(building_reason);
  EXPECT_GT(health.windows(0).score_psi().value(), 0.25);
  // The unseen level "locker_bank" counts as out of range.
  EXPECT_GT(health.windows(0).features(2).out_of_range_rate().value(), 0.2);

  absl::StatusOr<std::string> scrape =
      testing::HttpGet(metrics_addr_, "/metrics");
  ASSERT_TRUE(scrape.ok()) << scrape.status();
  EXPECT_EQ(
      FindSample(testing::ParseExposition(*scrape), "plumbline_drift_state",
                 {{"set", kSet}, {"version", kVersion}}),
      2.0);
  EXPECT_GE(plumbd_->CountLogLines("event=drift_state"), 1) << plumbd_->Log();
  // Counted with the metric that entered the state (the first evaluation
  // may see watch before drifting).
  double into_drifting = 0;
  for (const Sample& sample : testing::ParseExposition(*scrape)) {
    if (sample.name == "plumbline_drift_transitions_total" &&
        sample.labels.at("to") == "drifting") {
      into_drifting += sample.value;
      EXPECT_THAT(sample.labels.at("trigger"),
                  ::testing::AnyOf("score_psi", "feature_psi"));
    }
  }
  EXPECT_EQ(into_drifting, 1.0);
}

}  // namespace
}  // namespace plumbline::daemon
