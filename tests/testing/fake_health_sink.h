// File: tests/testing/fake_health_sink.h
//
// A HealthSink for tests that keeps a copy of everything it is told, so a
// test can check which records reached the monitor's side of the ledger
// (daemon/health/committed_feed.h) and with which values.
//
// Thread-safe: calls are recorded under a mutex.
#ifndef PLUMBLINE_TESTS_TESTING_FAKE_HEALTH_SINK_H_
#define PLUMBLINE_TESTS_TESTING_FAKE_HEALTH_SINK_H_

#include <string>
#include <vector>

#include "absl/strings/str_cat.h"
#include "absl/synchronization/mutex.h"
#include "daemon/health/sink.h"

namespace plumbline::daemon::testing {

class FakeHealthSink : public HealthSink {
 public:
  struct Scored {
    std::string set_name;
    std::string set_version;
    // RawValues as text: "9", "'rural'", "missing".
    std::vector<std::string> values;
    double log_odds = 0;
    absl::Time scored_at;
  };

  void OnScored(const scorer::ScoringPlan& plan,
                absl::Span<const scorer::RawValue> values, double log_odds,
                absl::Time scored_at) override {
    Scored s{plan.name(), plan.version(), {}, log_odds, scored_at};
    for (const scorer::RawValue& v : values) {
      switch (v.kind) {
        case scorer::RawValue::Kind::kNumber:
          s.values.push_back(absl::StrCat(v.number));
          break;
        case scorer::RawValue::Kind::kText:
          s.values.push_back(absl::StrCat("'", v.text, "'"));
          break;
        case scorer::RawValue::Kind::kMissing:
          s.values.push_back("missing");
          break;
      }
    }
    absl::MutexLock lock(&mu_);
    scored_.push_back(std::move(s));
  }

  void OnLabelled(const LabelledScore& labelled) override {
    absl::MutexLock lock(&mu_);
    labelled_.push_back(labelled);
  }

  void OnUnknownVersion(const std::string& set,
                        const std::string& version) override {
    absl::MutexLock lock(&mu_);
    unknown_.push_back(absl::StrCat(set, "/", version));
  }

  std::vector<std::string> unknown() const {
    absl::MutexLock lock(&mu_);
    return unknown_;
  }
  std::vector<Scored> scored() const {
    absl::MutexLock lock(&mu_);
    return scored_;
  }
  std::vector<LabelledScore> labelled() const {
    absl::MutexLock lock(&mu_);
    return labelled_;
  }

 private:
  mutable absl::Mutex mu_;
  std::vector<Scored> scored_ ABSL_GUARDED_BY(mu_);
  std::vector<LabelledScore> labelled_ ABSL_GUARDED_BY(mu_);
  std::vector<std::string> unknown_ ABSL_GUARDED_BY(mu_);
};

}  // namespace plumbline::daemon::testing

#endif  // PLUMBLINE_TESTS_TESTING_FAKE_HEALTH_SINK_H_
