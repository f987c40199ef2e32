// File: daemon/charts/format.h
//
// How the charts write numbers: exactly in data- attributes (so a test or a
// script reads back the very double it gave), at a readable precision in
// visible text, with fewer digits on axes, and as pixel coordinates. Also the
// "nice" tick positions of an axis. Nothing here ever writes "nan" or "inf":
// the chart code keeps non-finite values out, and these functions map any
// that slip through to "0" (coordinates) or to "n/a" (visible text).
//
//   ExactNumber(0.1)            -> "0.1"      (shortest round-trip form)
//   ShortNumber(0.0123456, 3)   -> "0.0123"
//   CountText(1204)             -> "1 204"    (narrow no-break space)
//   Ticks t = NiceTicks(0.03, 0.41, 5);  // 0, 0.1, ..., 0.5
//   TickLabel(0.2, t.step)      -> "0.2"
//
// Thread-safe (pure functions).
#ifndef PLUMBLINE_DAEMON_CHARTS_FORMAT_H_
#define PLUMBLINE_DAEMON_CHARTS_FORMAT_H_

#include <cstdint>
#include <string>
#include <vector>

#include "absl/time/time.h"

namespace plumbline::charts {

// Most significant digits any chart prints as visible text.
inline constexpr int kMaxDisplayDigits = 6;

// The shortest decimal text that reads back as exactly `value`
// (std::to_chars); "0" for a non-finite value.
std::string ExactNumber(double value);

// `value` rounded to `significant` digits (clamped to 1..kMaxDisplayDigits),
// without trailing zeros; "-0" prints as "0"; "n/a" when not finite.
std::string ShortNumber(double value, int significant = 3);

// A pixel coordinate with at most two decimals; "0" when not finite.
std::string Coord(double value);

// A count with narrow no-break spaces between groups of three digits.
std::string CountText(int64_t count);

// A proportion as a percentage for visible text, e.g. 0.1234 -> "12.3%".
std::string PercentText(double proportion, int significant = 3);

// An RFC 3339 UTC time for data- attributes, exact to the nanosecond
// (absl::RFC3339_full), e.g. "2024-05-14T00:00:00+00:00".
std::string ExactTime(absl::Time t);

// A UTC day for axis labels, e.g. "14 May"; with the time when it is not
// midnight, e.g. "14 May 06:00".
std::string DayText(absl::Time t);

struct Ticks {
  std::vector<double> values;  // lo' <= ... <= hi', lo' <= lo, hi' >= hi
  double step = 1;
};

// Round tick values (1, 2 or 5 times a power of ten apart) covering
// [lo, hi] with about `target` intervals.
// REQUIRES: lo, hi finite, lo < hi, target >= 1.
Ticks NiceTicks(double lo, double hi, int target);

// A tick value with just the decimals its step needs.
std::string TickLabel(double value, double step);

}  // namespace plumbline::charts

#endif  // PLUMBLINE_DAEMON_CHARTS_FORMAT_H_
