// File: daemon/health/committed_feed.h
//
// Turns what a ledger commit wrote (daemon/ledger/ledger.h CommittedRows)
// into what the model-health monitor takes (daemon/health/sink.h): each new
// score with its stored features read back in its version's feature order,
// and each score a new outcome labels. The ledger calls it on its writer
// thread in commit order, so the monitor holds exactly the ledger's rows up
// to a pair of marks, which is what lets a snapshot of its windows be
// restored and completed from the rows after those marks
// (daemon/health/snapshot_store.h). A score whose version has no plan (a
// version no longer loaded) goes to the sink's unmonitored count; one whose
// stored features do not read back (never expected: the writer packed them
// from that plan) is counted and logged once.
//
//   CommittedFeed feed(&monitor, [&](const std::string& set,
//                                    const std::string& version) {
//     return registry.FindVersion(set, version);
//   });
//   ledger->set_rows_observer([&](const CommittedRows& r) { feed.Feed(r); });
//
// Not thread-safe: one caller at a time (the ledger's writer thread).
#ifndef PLUMBLINE_DAEMON_HEALTH_COMMITTED_FEED_H_
#define PLUMBLINE_DAEMON_HEALTH_COMMITTED_FEED_H_

#include <cstdint>
#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "absl/container/flat_hash_map.h"
#include "daemon/health/sink.h"
#include "daemon/ledger/ledger.h"
#include "daemon/scoring/packed_row.h"
#include "daemon/util/set_version.h"
#include "scorer/scoring_plan.h"

namespace plumbline::daemon {

class CommittedFeed {
 public:
  using PlanPtr = std::shared_ptr<const scorer::ScoringPlan>;
  // The loaded plan of (set, version); null when there is none.
  using FindPlan = std::function<PlanPtr(const std::string& set,
                                         const std::string& version)>;

  // `sink` must outlive the feed.
  CommittedFeed(HealthSink* sink, FindPlan find_plan);

  void Feed(const CommittedRows& rows);

  // Scores whose stored features did not read back.
  int64_t undecodable() const { return undecodable_; }

 private:
  // Most versions a feed remembers the plans of; past it they are looked up
  // again (a version is immutable, so a remembered plan never goes stale).
  static constexpr size_t kMaxPlans = 64;

  const PlanPtr& Plan(const std::string& set, const std::string& version);

  HealthSink* const sink_;
  const FindPlan find_plan_;
  absl::flat_hash_map<SetVersion, PlanPtr> plans_;
  StoredFeatureReader reader_;
  std::vector<scorer::RawValue> values_;
  int64_t undecodable_ = 0;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_HEALTH_COMMITTED_FEED_H_
