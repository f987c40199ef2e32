// File: daemon/util/time.h
//
// Time at plumbd's edges: the one sentinel for "no time given" and the one
// conversion between absl::Time and google.protobuf.Timestamp.
//
//   absl::Time at = request.has_observed_at() ? ... : kNoTime;
//   absl::Time when = OrNow(at, clock());             // kNoTime -> now
//   *reply.mutable_evaluated_at() = ToTimestamp(when);
//   absl::StatusOr<absl::Time> t = FromTimestamp(ts,
//   "outcomes[3].observed_at");
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_UTIL_TIME_H_
#define PLUMBLINE_DAEMON_UTIL_TIME_H_

#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "absl/time/time.h"
#include "google/protobuf/timestamp.pb.h"

namespace plumbline::daemon {

// "No time given": the caller's clock decides (OrNow). The only sentinel
// time in the daemon; a lower bound of "from the beginning" is spelled
// absl::InfinitePast() where it is meant as such.
inline constexpr absl::Time kNoTime = absl::InfinitePast();

// `t`, or `now` when `t` is kNoTime.
inline absl::Time OrNow(absl::Time t, absl::Time now) {
  return t == kNoTime ? now : t;
}

// `t` as a Timestamp (microsecond precision, as the ledger keeps times),
// clamped to the range a Timestamp may hold (years 1 to 9999).
google::protobuf::Timestamp ToTimestamp(absl::Time t);

// A Timestamp from a caller as absl::Time. INVALID_ARGUMENT naming `field`
// when it is outside years 1 to 9999 or its nanos are not in [0, 1e9).
absl::StatusOr<absl::Time> FromTimestamp(const google::protobuf::Timestamp& ts,
                                         absl::string_view field);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_UTIL_TIME_H_
