// File: tests/daemon/history/history_store_test.cc
//
// The model-health history on a fresh ledger with a fake clock: one row per
// window at most every interval, only evaluated versions, every defined
// figure kept by metric name (features too), rows past the retention
// deleted, reads from a time on.
#include "daemon/history/history_store.h"

#include <filesystem>

#include "daemon/ledger/schema.h"
#include "daemon/ledger/sqlite_db.h"
#include "daemon/policy/figures.h"
#include "daemon/util/time.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"

namespace plumbline::daemon {
namespace {

class HistoryStoreTest : public ::testing::Test {
 protected:
  void SetUp() override {
    dir_ = std::filesystem::temp_directory_path() /
           ("plumbline-history-" + std::to_string(::getpid()) + "-" +
            ::testing::UnitTest::GetInstance()->current_test_info()->name());
    std::filesystem::remove_all(dir_);
    std::filesystem::create_directories(dir_);
    path_ = (dir_ / "ledger.db").string();
    auto db = SqliteDb::Open(path_);
    ASSERT_TRUE(db.ok()) << db.status();
    ASSERT_TRUE(MigrateLedger(**db).ok());
    HistoryOptions o;
    o.interval = absl::Minutes(5);
    o.retention = absl::Hours(1);
    o.now = [this] { return now_; };
    auto store = HistoryStore::Open(path_, o);
    ASSERT_TRUE(store.ok()) << store.status();
    store_ = *std::move(store);
  }
  void TearDown() override {
    store_.reset();
    std::filesystem::remove_all(dir_);
  }

  v1::SetHealth Health(double log_loss) const {
    v1::SetHealth h;
    h.set_set("courier");
    h.set_version("v1");
    h.set_state(v1::WATCH);
    *h.mutable_evaluated_at() = ToTimestamp(now_);
    for (const char* name : {"count", "time"}) {
      v1::WindowHealth* w = h.add_windows();
      w->set_window(name);
      w->set_labelled(40);
      w->set_scored(90);
      *w->mutable_log_loss() = DefinedFigure(log_loss);
      *w->mutable_auc() = UndefinedFigure("one class");
      v1::FeatureHealth* f = w->add_features();
      f->set_feature("rain \"mm\"");
      *f->mutable_psi() = DefinedFigure(0.31);
    }
    return h;
  }

  std::filesystem::path dir_;
  std::string path_;
  absl::Time now_ = absl::FromUnixSeconds(1'800'000'000);
  std::unique_ptr<HistoryStore> store_;
};

TEST_F(HistoryStoreTest, OneRowPerWindowAndInterval) {
  auto rows = store_->Record({Health(0.5)});
  ASSERT_TRUE(rows.ok()) << rows.status();
  EXPECT_EQ(*rows, 2);
  now_ += absl::Minutes(1);
  EXPECT_EQ(*store_->Record({Health(0.6)}), 0);  // within the interval
  now_ += absl::Minutes(4);
  EXPECT_EQ(*store_->Record({Health(0.7)}), 2);
  // Never evaluated: nothing to keep.
  v1::SetHealth fresh;
  fresh.set_set("depot");
  fresh.set_version("v9");
  EXPECT_EQ(*store_->Record({fresh}), 0);

  auto points = store_->Read("courier", absl::InfinitePast());
  ASSERT_TRUE(points.ok()) << points.status();
  ASSERT_EQ(points->size(), 4u);
  const HistoryPoint& p = (*points)[2];
  EXPECT_EQ(p.at, absl::FromUnixSeconds(1'800'000'000) + absl::Minutes(5));
  EXPECT_EQ(p.window, "count");
  EXPECT_EQ(p.state, v1::WATCH);
  EXPECT_EQ(p.labelled, 40);
  EXPECT_EQ(p.scored, 90);
  EXPECT_EQ(p.figures.at("log_loss"), 0.7);
  EXPECT_FALSE(p.figures.count("auc"));  // undefined: not kept
  EXPECT_EQ(p.features.at("rain \"mm\"").at("feature_psi"), 0.31);
  auto later = store_->Read("courier", now_);
  ASSERT_TRUE(later.ok());
  EXPECT_EQ(later->size(), 2u);
}

TEST_F(HistoryStoreTest, RowsPastTheRetentionGo) {
  ASSERT_TRUE(store_->Record({Health(0.5)}).ok());
  now_ += absl::Minutes(61);
  ASSERT_TRUE(store_->Record({Health(0.6)}).ok());
  auto points = store_->Read("courier", absl::InfinitePast());
  ASSERT_TRUE(points.ok());
  ASSERT_EQ(points->size(), 2u);
  EXPECT_EQ(points->front().figures.at("log_loss"), 0.6);
}

}  // namespace
}  // namespace plumbline::daemon
