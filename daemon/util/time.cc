// File: daemon/util/time.cc
#include "daemon/util/time.h"

#include <algorithm>
#include <cstdint>

#include "absl/strings/str_cat.h"

namespace plumbline::daemon {
namespace {

// google.protobuf.Timestamp's documented range: 0001-01-01T00:00:00Z to
// 9999-12-31T23:59:59.999999999Z.
constexpr int64_t kMinTimestampSeconds = -62135596800;
constexpr int64_t kMaxTimestampSeconds = 253402300799;

}  // namespace

google::protobuf::Timestamp ToTimestamp(absl::Time t) {
  const absl::Time lo = absl::FromUnixSeconds(kMinTimestampSeconds);
  const absl::Time hi = absl::FromUnixSeconds(kMaxTimestampSeconds);
  t = std::clamp(t, lo, hi);
  // Floor to the microsecond, then split with a non-negative remainder.
  const int64_t micros = absl::ToUnixMicros(t);
  int64_t seconds = micros / 1000000;
  int64_t rest = micros % 1000000;
  if (rest < 0) {
    rest += 1000000;
    --seconds;
  }
  google::protobuf::Timestamp out;
  out.set_seconds(seconds);
  out.set_nanos(static_cast<int32_t>(rest * 1000));
  return out;
}

absl::StatusOr<absl::Time> FromTimestamp(const google::protobuf::Timestamp& ts,
                                         absl::string_view field) {
  if (ts.seconds() < kMinTimestampSeconds ||
      ts.seconds() > kMaxTimestampSeconds || ts.nanos() < 0 ||
      ts.nanos() > 999999999) {
    return absl::InvalidArgumentError(
        absl::StrCat(field, ": not a valid timestamp (seconds ", ts.seconds(),
                     ", nanos ", ts.nanos(), ")"));
  }
  return absl::FromUnixSeconds(ts.seconds()) + absl::Nanoseconds(ts.nanos());
}

}  // namespace plumbline::daemon
