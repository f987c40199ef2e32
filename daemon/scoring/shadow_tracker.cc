// File: daemon/scoring/shadow_tracker.cc
#include "daemon/scoring/shadow_tracker.h"

#include "absl/strings/ascii.h"

namespace plumbline::daemon {

std::string StatusCodeLabel(absl::StatusCode code) {
  return absl::AsciiStrToLower(absl::StatusCodeToString(code));
}

ShadowTracker::Verdict ShadowTracker::Record(const SetVersion& shadow,
                                             const absl::Status& status) {
  absl::MutexLock lock(&mu_);
  ShadowStats& s = stats_[shadow];
  if (status.ok()) {
    ++s.scored_calls;
    s.consecutive_failures = 0;
    return kKeep;
  }
  ++s.failures[StatusCodeLabel(status.code())];
  ++s.consecutive_failures;
  s.last_error = std::string(status.message());
  if (!s.stopped && limit_ > 0 && s.consecutive_failures >= limit_) {
    s.stopped = true;
    return kStop;
  }
  return kKeep;
}

bool ShadowTracker::Stopped(const SetVersion& shadow) const {
  absl::MutexLock lock(&mu_);
  auto it = stats_.find(shadow);
  return it != stats_.end() && it->second.stopped;
}

std::map<SetVersion, ShadowStats> ShadowTracker::Snapshot() const {
  absl::MutexLock lock(&mu_);
  return std::map<SetVersion, ShadowStats>(stats_.begin(), stats_.end());
}

ShadowStats ShadowTracker::Of(const SetVersion& shadow) const {
  absl::MutexLock lock(&mu_);
  auto it = stats_.find(shadow);
  return it == stats_.end() ? ShadowStats{} : it->second;
}

}  // namespace plumbline::daemon
