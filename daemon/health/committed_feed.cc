// File: daemon/health/committed_feed.cc
#include "daemon/health/committed_feed.h"

#include <utility>

#include "absl/strings/str_cat.h"
#include "daemon/util/event_log.h"

namespace plumbline::daemon {

CommittedFeed::CommittedFeed(HealthSink* sink, FindPlan find_plan)
    : sink_(sink), find_plan_(std::move(find_plan)) {}

const CommittedFeed::PlanPtr& CommittedFeed::Plan(const std::string& set,
                                                  const std::string& version) {
  SetVersion key{set, version};
  if (auto it = plans_.find(key); it != plans_.end() && it->second != nullptr) {
    return it->second;
  }
  if (plans_.size() >= kMaxPlans) plans_.clear();
  PlanPtr plan = find_plan_ ? find_plan_(set, version) : nullptr;
  return plans_.insert_or_assign(std::move(key), std::move(plan)).first->second;
}

void CommittedFeed::Feed(const CommittedRows& rows) {
  for (const ScoreEntry* e : rows.scores) {
    const PlanPtr& plan = Plan(e->set_name, e->set_version);
    if (plan == nullptr) {
      sink_->OnUnknownVersion(e->set_name, e->set_version);
      continue;
    }
    if (absl::Status s =
            reader_.Read(*plan, e->layout.get(), e->features, &values_);
        !s.ok()) {
      if (undecodable_++ == 0) {
        LogEvent(LogLevel::kError, "health_feed_undecodable",
                 {{"set", e->set_name},
                  {"version", e->set_version},
                  {"error", s.message()},
                  {"effect",
                   "the record is in the ledger but not in the windows; "
                   "logged once"}});
      }
      continue;
    }
    sink_->OnScored(*plan, values_, e->log_odds, e->scored_at);
  }
  for (const LabelledScore* l : rows.labelled) sink_->OnLabelled(*l);
}

}  // namespace plumbline::daemon
