// File: tests/daemon/health/window_state_test.cc
//
// HealthWindows::Capture and Restore (daemon/health/window_state.h):
// seeded random streams of scored and labelled records over simulated time
// are captured, serialised, parsed and restored into fresh windows, whose
// figures must then equal the original's exactly (serialised SetHealth
// bytes equal, so every double is bit-equal), before and after both are
// fed the same further records. Then the refusals: another shape, a
// malformed or oversized state, cut or garbled bytes, each leaving the
// windows as they were. And the sizes of a saved state (printed; the
// bytes per stored record asserted, since they are deterministic).
#include "daemon/health/window_state.h"

#include <cmath>
#include <cstdio>
#include <memory>
#include <random>
#include <string>
#include <vector>

#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "daemon/health/windows.h"
#include "gmock/gmock.h"
#include "google/protobuf/util/message_differencer.h"
#include "gtest/gtest.h"
#include "scorer/logistic.h"
#include "tests/testing/health_test_sets.h"
#include "tests/testing/status_matchers.h"

namespace plumbline::daemon {
namespace {

using ::plumbline::testing::StatusIs;
using scorer::RawValue;
using testing::BareSetJson;
using testing::BaselineSetJson;
using testing::CompilePlan;
using ::testing::HasSubstr;

const absl::Time kStart = absl::FromUnixSeconds(1'800'000'000);

// Small windows that wrap and advance within a few simulated hours: count
// windows of 200 labelled / 400 scored records, a 1 h time window in 10
// buckets of 6 min, time buckets keeping 10 records each (so the stores
// refuse), 10 min outcome horizon, at most 300 waiting records.
HealthWindowOptions SmallOptions() {
  HealthWindowOptions o;
  o.labelled_count = 200;
  o.scored_count = 400;
  o.time_span = absl::Hours(1);
  o.buckets = 10;
  o.record_store_max_records = 100;
  o.outcome_horizon = absl::Minutes(10);
  o.max_immature_records = 300;
  o.cusum.lattice_states = 40;   // quick limits; the state is what matters
  o.cusum.in_control_arl = 200;  // alarms within the stream
  return o;
}

std::unique_ptr<HealthWindows> Make(
    const std::shared_ptr<const scorer::ScoringPlan>& plan,
    const HealthWindowOptions& options) {
  auto w = HealthWindows::Create(plan, options);
  EXPECT_TRUE(w.ok()) << w.status();
  return w.ok() ? *std::move(w) : nullptr;
}

// The three features of tests/testing/health_test_sets.h, sometimes
// missing, out of range or an unseen level.
std::vector<RawValue> RandomRow(std::mt19937_64& rng) {
  std::uniform_real_distribution<double> u(0, 1);
  std::vector<RawValue> row;
  const double d = u(rng);
  row.push_back(d < 0.1    ? RawValue::Missing()
                : d < 0.15 ? RawValue::Number(25)  // past max 20
                           : RawValue::Number(10 * u(rng)));
  const double r = u(rng);
  row.push_back(r < 0.1    ? RawValue::Missing()
                : r < 0.2  ? RawValue::Text("suburb")  // unseen
                : r < 0.6  ? RawValue::Text("urban")
                : r < 0.65 ? RawValue::Number(1)  // dense level index
                           : RawValue::Text("rural"));
  row.push_back(u(rng) < 0.2 ? RawValue::Missing()
                             : RawValue::Number(std::floor(24 * u(rng))));
  return row;
}

// Feeds `steps` random events to every window in `windows`, the same to
// each, advancing `*now` by up to 20 s per step; asks for figures now and
// then (which matures waiting records) and returns the last `now`.
void Feed(const std::vector<HealthWindows*>& windows, uint64_t seed, int steps,
          absl::Time* now) {
  std::mt19937_64 rng(seed);
  std::uniform_real_distribution<double> u(0, 1);
  std::normal_distribution<double> z(-1, 1.5);
  for (int i = 0; i < steps; ++i) {
    *now += absl::Milliseconds(static_cast<int64_t>(20000 * u(rng)));
    const double e = u(rng);
    const double log_odds = z(rng);
    if (e < 0.55) {
      const std::vector<RawValue> row = RandomRow(rng);
      // Some scored in the future (taken as now) or too old for the ring.
      const absl::Duration age = absl::Seconds(u(rng) < 0.05   ? -30
                                               : u(rng) < 0.03 ? 7200
                                                               : 60 * u(rng));
      for (HealthWindows* w : windows) {
        w->AddScored(log_odds, row, *now - age, *now);
      }
    } else if (e < 0.97) {
      const int label = u(rng) < Logistic(log_odds) ? 1 : 0;
      // Scored up to 20 min ago: some mature, some wait; a few too old.
      const absl::Duration age =
          absl::Seconds(u(rng) < 0.02 ? 9000 : 1200 * u(rng));
      for (HealthWindows* w : windows) {
        w->AddLabelled(log_odds, label, *now - age, *now, *now);
      }
    } else {
      for (HealthWindows* w : windows) w->Figures(*now);
    }
  }
}

// Serialised deterministically: equal bytes mean equal messages with every
// double bit-equal.
std::string Bytes(const google::protobuf::Message& m) {
  std::string out;
  google::protobuf::io::StringOutputStream stream(&out);
  google::protobuf::io::CodedOutputStream coded(&stream);
  coded.SetSerializationDeterministic(true);
  m.SerializeToCodedStream(&coded);
  coded.Trim();
  return out;
}

void ExpectSameFigures(HealthWindows& a, HealthWindows& b, absl::Time now) {
  const v1::SetHealth fa = a.Figures(now);
  const v1::SetHealth fb = b.Figures(now);
  std::string diff;
  google::protobuf::util::MessageDifferencer d;
  d.ReportDifferencesToString(&diff);
  EXPECT_TRUE(d.Compare(fa, fb)) << diff;
  EXPECT_EQ(Bytes(fa), Bytes(fb)) << "some double differs in its bits";
}

// Capture -> bytes -> parse -> Restore into fresh windows.
std::unique_ptr<HealthWindows> RoundTrip(
    const HealthWindows& original,
    const std::shared_ptr<const scorer::ScoringPlan>& plan,
    const HealthWindowOptions& options) {
  const std::string bytes = original.Capture().SerializeAsString();
  v1::HealthWindowsState parsed;
  EXPECT_TRUE(parsed.ParseFromString(bytes));
  std::unique_ptr<HealthWindows> restored = Make(plan, options);
  if (restored == nullptr) return nullptr;
  const absl::Status s = restored->Restore(parsed);
  EXPECT_TRUE(s.ok()) << s;
  return restored;
}

class WindowStateTest : public ::testing::Test {
 protected:
  void SetUp() override {
    plan_ = CompilePlan(BaselineSetJson("courier", "v1"));
    ASSERT_NE(plan_, nullptr);
  }

  // Checks the round trip at `now`, a minute later, and after feeding both
  // the same further records.
  void CheckRoundTrip(HealthWindows& original,
                      const HealthWindowOptions& options, absl::Time now) {
    std::unique_ptr<HealthWindows> restored =
        RoundTrip(original, plan_, options);
    ASSERT_NE(restored, nullptr);
    EXPECT_EQ(Bytes(original.Capture()), Bytes(restored->Capture()));
    ExpectSameFigures(original, *restored, now);
    ExpectSameFigures(original, *restored, now + absl::Minutes(1));
    Feed({&original, restored.get()}, /*seed=*/99, 800, &now);
    ExpectSameFigures(original, *restored, now);
    EXPECT_EQ(Bytes(original.Capture()), Bytes(restored->Capture()));
  }

  std::shared_ptr<const scorer::ScoringPlan> plan_;
};

TEST_F(WindowStateTest, RestoredWindowsGiveTheSameFiguresWithAHorizon) {
  const HealthWindowOptions options = SmallOptions();
  std::unique_ptr<HealthWindows> w = Make(plan_, options);
  ASSERT_NE(w, nullptr);
  absl::Time now = kStart;
  Feed({w.get()}, /*seed=*/1, 300, &now);  // charts buffer
  w->SetCusumLimits(ChooseCusumLimits(plan_->set(), options.cusum));
  Feed({w.get()}, /*seed=*/2, 1500, &now);
  const v1::SetHealth h = w->Figures(now);
  // What the stream reached: wrapped count windows, an advanced time ring,
  // refused stores, waiting records, charts that counted and alarmed.
  ASSERT_EQ(h.windows_size(), 2);
  EXPECT_GT(h.windows(0).labelled(), 180);
  EXPECT_GT(h.labelled_since_start(), 3 * 200)
      << "the labelled count window wrapped";
  EXPECT_GT(h.windows(1).unstored_labelled(), 0);
  EXPECT_GT(h.windows(1).refused_labelled(), 0);
  EXPECT_GT(h.windows(1).refused_scored(), 0);
  EXPECT_GT(h.immature_labelled(), 0);
  ASSERT_GT(h.cusum_size(), 0);
  EXPECT_TRUE(h.cusum(0).ready());
  EXPECT_GT(h.cusum(0).records(), 0);
  int64_t alarms = 0;
  for (const v1::CusumChart& c : h.cusum()) alarms += c.alarms();
  EXPECT_GT(alarms, 0);
  CheckRoundTrip(*w, options, now);
}

TEST_F(WindowStateTest, RestoredWindowsGiveTheSameFiguresWithoutAHorizon) {
  HealthWindowOptions options = SmallOptions();
  options.outcome_horizon = absl::ZeroDuration();
  std::unique_ptr<HealthWindows> w = Make(plan_, options);
  ASSERT_NE(w, nullptr);
  absl::Time now = kStart;
  Feed({w.get()}, /*seed=*/3, 2000, &now);
  w->SetCusumLimits(ChooseCusumLimits(plan_->set(), options.cusum));
  CheckRoundTrip(*w, options, now);
}

TEST_F(WindowStateTest, BufferedChartRecordsAndBareSetsRoundTrip) {
  // No baselines at all: no score accumulator, every feature counted for
  // missing values only; the charts never get limits and keep buffering.
  plan_ = CompilePlan(BareSetJson("courier", "v1"));
  ASSERT_NE(plan_, nullptr);
  const HealthWindowOptions options = SmallOptions();
  std::unique_ptr<HealthWindows> w = Make(plan_, options);
  ASSERT_NE(w, nullptr);
  absl::Time now = kStart;
  Feed({w.get()}, /*seed=*/4, 1200, &now);
  ASSERT_TRUE(w->NeedsCusumLimits());
  std::unique_ptr<HealthWindows> restored = RoundTrip(*w, plan_, options);
  ASSERT_NE(restored, nullptr);
  ExpectSameFigures(*w, *restored, now);
  EXPECT_TRUE(restored->NeedsCusumLimits());
  // The limits arrive after the restart: both replay the same buffer.
  const std::vector<CusumLimit> limits =
      ChooseCusumLimits(plan_->set(), options.cusum);
  w->SetCusumLimits(limits);
  restored->SetCusumLimits(limits);
  ExpectSameFigures(*w, *restored, now);
}

TEST_F(WindowStateTest, AnEmptyStateRoundTrips) {
  const HealthWindowOptions options = SmallOptions();
  std::unique_ptr<HealthWindows> w = Make(plan_, options);
  ASSERT_NE(w, nullptr);
  CheckRoundTrip(*w, options, kStart);
}

// ---- refusals ----

class WindowStateRefusalTest : public WindowStateTest {
 protected:
  void SetUp() override {
    WindowStateTest::SetUp();
    options_ = SmallOptions();
    std::unique_ptr<HealthWindows> w = Make(plan_, options_);
    ASSERT_NE(w, nullptr);
    absl::Time now = kStart;
    Feed({w.get()}, /*seed=*/5, 600, &now);
    w->SetCusumLimits(ChooseCusumLimits(plan_->set(), options_.cusum));
    Feed({w.get()}, /*seed=*/6, 900, &now);
    state_ = w->Capture();
    fresh_ = Bytes(Make(plan_, options_)->Capture());
  }

  // Restoring `state` fails with `code` and a message containing `text`,
  // and the windows stay fresh and usable (the true state restores after).
  void ExpectRefused(const v1::HealthWindowsState& state, absl::StatusCode code,
                     const std::string& text) {
    std::unique_ptr<HealthWindows> w = Make(plan_, options_);
    ASSERT_NE(w, nullptr);
    EXPECT_THAT(w->Restore(state), StatusIs(code, HasSubstr(text)));
    EXPECT_EQ(Bytes(w->Capture()), fresh_) << "a refused state changed them";
    EXPECT_TRUE(w->Restore(state_).ok());
  }

  HealthWindowOptions options_;
  v1::HealthWindowsState state_;
  std::string fresh_;
};

TEST_F(WindowStateRefusalTest, AnotherShapeIsAFailedPrecondition) {
  HealthWindowOptions other = options_;
  other.buckets = 20;
  std::unique_ptr<HealthWindows> w = Make(plan_, other);
  ASSERT_NE(w, nullptr);
  EXPECT_THAT(w->Restore(state_),
              StatusIs(absl::StatusCode::kFailedPrecondition,
                       HasSubstr("buckets: saved '10', these windows '20'")));
  std::unique_ptr<HealthWindows> v2 =
      Make(CompilePlan(BaselineSetJson("courier", "v2")), options_);
  ASSERT_NE(v2, nullptr);
  EXPECT_THAT(v2->Restore(state_),
              StatusIs(absl::StatusCode::kFailedPrecondition,
                       HasSubstr("version: saved 'v1', these windows 'v2'")));
  std::unique_ptr<HealthWindows> bare =
      Make(CompilePlan(BareSetJson("courier", "v1")), options_);
  ASSERT_NE(bare, nullptr);
  EXPECT_THAT(bare->Restore(state_),
              StatusIs(absl::StatusCode::kFailedPrecondition,
                       HasSubstr("layout: saved")));
  HealthWindowOptions horizon = options_;
  horizon.outcome_horizon = absl::Minutes(11);
  EXPECT_NE(HealthWindows::Fingerprint(*plan_, horizon), state_.fingerprint());
  EXPECT_EQ(HealthWindows::Fingerprint(*plan_, options_), state_.fingerprint());
  v1::HealthWindowsState none = state_;
  none.clear_fingerprint();
  ExpectRefused(none, absl::StatusCode::kFailedPrecondition,
                "the state has no fingerprint");
}

TEST_F(WindowStateRefusalTest, MalformedStatesNameTheField) {
  const auto kInvalid = absl::StatusCode::kInvalidArgument;
  {
    v1::HealthWindowsState s = state_;  // a bucket count that differs
    s.mutable_labelled_count()->mutable_fill()->RemoveLast();
    ExpectRefused(s, kInvalid, "labelled_count: 9 fills; the window has 10");
  }
  {
    v1::HealthWindowsState s = state_;
    s.mutable_scored_time()->mutable_buckets()->RemoveLast();
    ExpectRefused(s, kInvalid, "scored_time: ");
  }
  {
    v1::HealthWindowsState s = state_;  // a negative count
    s.mutable_labelled_count()->mutable_buckets(0)->set_count(-1);
    ExpectRefused(s, kInvalid, "labelled_count.buckets[0]");
  }
  {
    v1::HealthWindowsState s = state_;  // NaN in a sum
    s.mutable_labelled_time()->mutable_buckets(0)->mutable_loss()->set_sum(
        std::nan(""));
    ExpectRefused(s, kInvalid, "loss is nan");
  }
  {
    v1::HealthWindowsState s = state_;  // a count that disagrees with fill
    auto* b = s.mutable_scored_count()->mutable_buckets(0);
    b->set_count(b->count() + 1);
    ExpectRefused(s, kInvalid, "scored_count.buckets[0]");
  }
  {
    v1::HealthWindowsState s = state_;  // a store past its bound
    auto* r = s.mutable_labelled_time()->mutable_buckets(0)->mutable_records();
    for (int i = 0; i < 11; ++i) r->add_log_odds(0.5);
    ExpectRefused(s, kInvalid, "the store's capacity is 10");
  }
  {
    v1::HealthWindowsState s = state_;  // labels that do not fit
    s.mutable_labelled_count()
        ->mutable_buckets(0)
        ->mutable_records()
        ->mutable_labels()
        ->push_back('\x01');
    ExpectRefused(s, kInvalid, "records.labels");
  }
  {
    v1::HealthWindowsState s = state_;  // a time bucket in the wrong slot
    auto* n = s.mutable_labelled_time()->mutable_bucket_numbers();
    n->Set(0, n->Get(0) + 1);
    ExpectRefused(s, kInvalid, "belongs in slot");
  }
  {
    v1::HealthWindowsState s = state_;  // a grid cell off the grid
    s.mutable_labelled_count()->mutable_buckets(0)->set_cell_steps(0, 100000);
    ExpectRefused(s, kInvalid, "score grid: cell_steps[0]");
  }
  {
    v1::HealthWindowsState s = state_;
    s.mutable_cusum()->mutable_charts(0)->set_value(1e9);
    ExpectRefused(s, kInvalid, "chart upper: CUSUM state: value is 1e+09");
  }
  {
    v1::HealthWindowsState s = state_;
    s.mutable_coverage()->RemoveLast();
    ExpectRefused(s, kInvalid, "coverage: 20 cohorts; the ring has 21");
  }
  {
    v1::HealthWindowsState s = state_;  // score times going back
    auto* w = s.mutable_waiting();
    ASSERT_GT(w->scored_at_steps_size(), 1);
    w->set_scored_at_steps(1, -5);
    ExpectRefused(s, kInvalid, "waiting.scored_at_steps[1]");
  }
  {
    v1::HealthWindowsState s = state_;
    s.set_refused_scored_time(-3);
    ExpectRefused(s, kInvalid, "refused_scored_time");
  }
}

TEST_F(WindowStateRefusalTest, OversizeRepeatedFieldsAreRefusedByTheirBound) {
  const auto kInvalid = absl::StatusCode::kInvalidArgument;
  {
    v1::HealthWindowsState s = state_;
    auto* w = s.mutable_waiting();
    while (w->scored_at_steps_size() <= options_.max_immature_records) {
      w->add_scored_at_steps(0);
      w->add_log_odds(0);
    }
    ExpectRefused(s, kInvalid, "at most max_immature_records = 300");
  }
  {
    v1::HealthWindowsState s = state_;
    for (int i = 0; i < 5000; ++i) {
      s.mutable_labelled_count()->mutable_buckets(0)->add_cell_steps(1);
    }
    ExpectRefused(s, kInvalid, "at most 4098");
  }
  {
    v1::HealthWindowsState s = state_;
    s.mutable_scored_count()->mutable_buckets(0)->add_features();
    ExpectRefused(s, kInvalid, "4 features; the set has 3");
  }
  {
    v1::HealthWindowsState s = state_;
    s.mutable_cusum()->mutable_buffered_log_odds()->Resize(
        CusumCharts::kMaxBuffered + 1, 0.0);
    ExpectRefused(s, kInvalid, "buffered records; at most 1000000");
  }
  {
    v1::HealthWindowsState s = state_;
    s.mutable_cusum()->mutable_charts(0)->set_note(std::string(5000, 'x'));
    ExpectRefused(s, kInvalid, "note of 5000 bytes");
  }
}

TEST_F(WindowStateRefusalTest, CutOrGarbledBytesNeverRestorePartly) {
  const std::string bytes = state_.SerializeAsString();
  std::unique_ptr<HealthWindows> w = Make(plan_, options_);
  ASSERT_NE(w, nullptr);
  // Every cut that still parses is refused whole (a cut always drops a
  // part the windows need) and leaves the windows fresh.
  int parsed = 0;
  for (size_t cut = 0; cut < bytes.size(); cut += 1 + bytes.size() / 400) {
    v1::HealthWindowsState s;
    if (!s.ParseFromString(bytes.substr(0, cut))) continue;
    ++parsed;
    EXPECT_FALSE(w->Restore(s).ok()) << "cut at " << cut;
    ASSERT_EQ(Bytes(w->Capture()), fresh_) << "cut at " << cut;
  }
  EXPECT_GT(parsed, 0);
  // Garbled bytes: whatever parses either restores whole or is refused
  // whole; never a crash, never a partial restore.
  std::mt19937_64 rng(7);
  for (int trial = 0; trial < 300; ++trial) {
    std::string g = bytes;
    for (int k = 0; k < 4; ++k) {
      g[rng() % g.size()] = static_cast<char>(rng());
    }
    v1::HealthWindowsState s;
    if (!s.ParseFromString(g)) continue;
    std::unique_ptr<HealthWindows> fresh = Make(plan_, options_);
    if (!fresh->Restore(s).ok()) {
      ASSERT_EQ(Bytes(fresh->Capture()), fresh_) << "trial " << trial;
    }
    fresh->Figures(kStart + absl::Hours(1));  // usable either way
  }
}

// ---- sizes ----

// A set of 10 numeric features, each with a 10-bin baseline.
std::string TenFeatureSetJson() {
  std::string features;
  for (int i = 0; i < 10; ++i) {
    absl::StrAppendFormat(
        &features,
        R"json(%s{"name": "x%d", "numeric": {"center": 0, "scale": 1,
           "coefficient": 0.1},
           "baseline": {"edges": [-2, -1.5, -1, -0.5, 0, 0.5, 1, 1.5, 2],
             "proportions": [0.05, 0.05, 0.1, 0.1, 0.2, 0.2, 0.1, 0.1, 0.05,
                             0.05],
             "min": -5, "max": 5, "count": 10000}})json",
        i == 0 ? "" : ",", i);
  }
  return absl::StrFormat(R"json({
  "name": "wide", "version": "v1", "intercept": -1, "features": [%s],
  "scoreBaseline": {"edges": [0.1, 0.2, 0.3, 0.5],
                    "proportions": [0.2, 0.3, 0.2, 0.2, 0.1], "count": 10000}
})json",
                         features);
}

TEST(WindowStateSizeTest, DefaultOptionsTenFeaturesFullCountWindows) {
  auto plan = CompilePlan(TenFeatureSetJson());
  ASSERT_NE(plan, nullptr);
  const HealthWindowOptions options;  // the defaults
  std::unique_ptr<HealthWindows> w = Make(plan, options);
  ASSERT_NE(w, nullptr);
  std::mt19937_64 rng(8);
  std::normal_distribution<double> z(-1, 1.5), x(0, 1.2);
  std::uniform_real_distribution<double> u(0, 1);
  absl::Time now = kStart;
  std::vector<RawValue> row(10);
  for (int i = 0; i < options.scored_count; ++i) {
    for (RawValue& v : row) v = RawValue::Number(x(rng));
    now += absl::Seconds(1);
    w->AddScored(z(rng), row, now, now);
  }
  for (int i = 0; i < options.labelled_count; ++i) {
    const double l = z(rng);
    w->AddLabelled(l, u(rng) < Logistic(l) ? 1 : 0, now, now, now);
  }
  const v1::HealthWindowsState s = w->Capture();
  const size_t total = s.ByteSizeLong();
  std::printf(
      "default options, 10 features, count windows full (%d labelled, %d "
      "scored), time windows holding the same records:\n"
      "  total %zu bytes: labelled_count %zu, labelled_time %zu, "
      "scored_count %zu, scored_time %zu, cusum %zu\n",
      static_cast<int>(options.labelled_count),
      static_cast<int>(options.scored_count), total,
      s.labelled_count().ByteSizeLong(), s.labelled_time().ByteSizeLong(),
      s.scored_count().ByteSizeLong(), s.scored_time().ByteSizeLong(),
      s.cusum().ByteSizeLong());
  EXPECT_GT(total, 0u);
}

TEST(WindowStateSizeTest, StoredRecordsTakeUnderNineBytesEach) {
  auto plan = CompilePlan(TenFeatureSetJson());
  ASSERT_NE(plan, nullptr);
  HealthWindowOptions options;  // the defaults: 24 h, 20 buckets
  // A fifth of the default store (1e6), so the sanitizer tree runs it in
  // seconds too: what is checked is the bytes per record, which the store
  // size does not change.
  options.record_store_max_records = 200'000;
  options.cusum.enabled = false;  // no chart buffer in this count
  std::unique_ptr<HealthWindows> w = Make(plan, options);
  ASSERT_NE(w, nullptr);
  std::mt19937_64 rng(9);
  std::normal_distribution<double> z(-1, 1.5);
  std::uniform_real_distribution<double> u(0, 1);
  // 200,000 records evenly over the 20 buckets of one window, starting
  // at a bucket boundary: 10,000 per bucket, each bucket's share of the
  // store.
  const int64_t n = options.record_store_max_records;
  const absl::Duration step = options.time_span / n;
  const absl::Duration bucket = options.time_span / options.buckets;
  absl::Duration rem;
  absl::Time now =
      absl::UnixEpoch() +
      absl::IDivDuration(kStart - absl::UnixEpoch(), bucket, &rem) * bucket;
  for (int64_t i = 0; i < n; ++i) {
    const double l = z(rng);
    w->AddLabelled(l, u(rng) < Logistic(l) ? 1 : 0, now, now, now);
    now += step;
  }
  now -= step;
  const v1::SetHealth h = w->Figures(now);
  ASSERT_EQ(h.windows(1).exact_records(), n);
  ASSERT_EQ(h.windows(1).unstored_labelled(), 0);
  const v1::HealthWindowsState s = w->Capture();
  const size_t window = s.labelled_time().ByteSizeLong();
  const size_t total = s.ByteSizeLong();
  std::printf(
      "default time window with %lld stored labelled records: %zu bytes "
      "(%.3f per record); whole state %zu bytes\n",
      static_cast<long long>(n), window,
      static_cast<double>(window) / static_cast<double>(n), total);
  // 8 bytes of log-odds and 1 bit of label per record, plus the non-empty
  // score grid cells of 20 buckets (a cost that grows slower than the
  // records: about 0.5 byte per record at the default 1e6, 1.6 here).
  EXPECT_LE(window, static_cast<size_t>(10 * n));
  // And it restores to the same figures. The times are printed for the
  // record, never asserted.
  const absl::Time t0 = absl::Now();
  const std::string bytes = w->Capture().SerializeAsString();
  const absl::Time t1 = absl::Now();
  v1::HealthWindowsState parsed;
  ASSERT_TRUE(parsed.ParseFromString(bytes));
  std::unique_ptr<HealthWindows> restored = Make(plan, options);
  ASSERT_NE(restored, nullptr);
  const absl::Time t2 = absl::Now();
  ASSERT_TRUE(restored->Restore(parsed).ok());
  const absl::Time t3 = absl::Now();
  std::printf(
      "capture + serialise %.1f ms, parse + create %.1f ms, restore %.1f "
      "ms\n",
      absl::ToDoubleMilliseconds(t1 - t0), absl::ToDoubleMilliseconds(t2 - t1),
      absl::ToDoubleMilliseconds(t3 - t2));
  ExpectSameFigures(*w, *restored, now);
}

}  // namespace
}  // namespace plumbline::daemon
