#include "daemon/charts/format.h"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <system_error>

#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"

namespace plumbline::charts {
namespace {

constexpr char kNarrowNbsp[] = "\xE2\x80\xAF";  // U+202F

// Removes trailing zeros of the fraction, and the point if nothing is left
// after it, from printf output without an exponent part.
std::string TrimFraction(std::string s) {
  if (s.find('.') == std::string::npos || s.find('e') != std::string::npos) {
    return s;
  }
  while (s.back() == '0') s.pop_back();
  if (s.back() == '.') s.pop_back();
  return s;
}

std::string FixNegativeZero(std::string s) {
  if (s == "-0") return "0";
  return s;
}

}  // namespace

std::string ExactNumber(double value) {
  if (!std::isfinite(value)) return "0";
  char buffer[64];
  const std::to_chars_result r =
      std::to_chars(buffer, buffer + sizeof(buffer), value);
  if (r.ec != std::errc()) return "0";  // cannot happen with 64 bytes
  return std::string(buffer, r.ptr);
}

std::string ShortNumber(double value, int significant) {
  if (!std::isfinite(value)) return "n/a";
  significant = std::clamp(significant, 1, kMaxDisplayDigits);
  if (value == 0) return "0";
  const double magnitude = std::fabs(value);
  if (magnitude >= 1e-4 && magnitude < 1e6) {
    // Fixed notation with the decimals `significant` digits need.
    const int exponent = static_cast<int>(std::floor(std::log10(magnitude)));
    int decimals = std::max(0, significant - 1 - exponent);
    std::string s = absl::StrFormat("%.*f", decimals, value);
    // Rounding may have carried into a new digit (9.996 -> 10.00); one
    // decimal less then keeps the digit count.
    const double rounded = std::fabs(std::strtod(s.c_str(), nullptr));
    if (decimals > 0 && rounded >= std::pow(10.0, exponent + 1)) {
      s = absl::StrFormat("%.*f", decimals - 1, value);
    }
    return FixNegativeZero(TrimFraction(s));
  }
  return FixNegativeZero(absl::StrFormat("%.*g", significant, value));
}

std::string Coord(double value) {
  if (!std::isfinite(value)) return "0";
  return FixNegativeZero(TrimFraction(absl::StrFormat("%.2f", value)));
}

std::string CountText(int64_t count) {
  // The magnitude in unsigned arithmetic, so INT64_MIN has one too.
  const uint64_t magnitude = count < 0 ? 0 - static_cast<uint64_t>(count)
                                       : static_cast<uint64_t>(count);
  const std::string digits = absl::StrCat(magnitude);
  std::string out;
  const size_t n = digits.size();
  for (size_t i = 0; i < n; ++i) {
    if (i > 0 && (n - i) % 3 == 0) out += kNarrowNbsp;
    out += digits[i];
  }
  return count < 0 ? "\xE2\x88\x92" + out : out;  // U+2212 MINUS SIGN
}

std::string PercentText(double proportion, int significant) {
  if (!std::isfinite(proportion)) return "n/a";
  return ShortNumber(proportion * 100, significant) + "%";
}

std::string ExactTime(absl::Time t) {
  return absl::FormatTime(absl::RFC3339_full, t, absl::UTCTimeZone());
}

std::string DayText(absl::Time t) {
  static constexpr const char* kMonths[] = {"Jan", "Feb", "Mar", "Apr",
                                            "May", "Jun", "Jul", "Aug",
                                            "Sep", "Oct", "Nov", "Dec"};
  const absl::TimeZone utc = absl::UTCTimeZone();
  const absl::CivilSecond cs = absl::ToCivilSecond(t, utc);
  std::string out = absl::StrCat(cs.day(), " ", kMonths[cs.month() - 1]);
  if (cs.hour() != 0 || cs.minute() != 0) {
    absl::StrAppend(&out,
                    absl::StrFormat(" %02d:%02d", cs.hour(), cs.minute()));
  }
  return out;
}

Ticks NiceTicks(double lo, double hi, int target) {
  Ticks ticks;
  const double raw = (hi - lo) / std::max(target, 1);
  const double power = std::pow(10.0, std::floor(std::log10(raw)));
  const double fraction = raw / power;
  // A little tolerance: 0.05 / 0.01 is 5.000000000000001 in doubles.
  constexpr double kSlack = 1 + 1e-9;
  double nice = 10;
  if (fraction <= 1 * kSlack) {
    nice = 1;
  } else if (fraction <= 2 * kSlack) {
    nice = 2;
  } else if (fraction <= 5 * kSlack) {
    nice = 5;
  }
  ticks.step = nice * power;
  const double first = std::floor(lo / ticks.step + 1e-9);
  const double last = std::ceil(hi / ticks.step - 1e-9);
  for (double k = first; k <= last + 0.5; k += 1) {
    // k * step, not repeated addition, so 0.1 * 3 is as close as it gets.
    double v = k * ticks.step;
    if (std::fabs(v) < ticks.step * 1e-9) v = 0;
    ticks.values.push_back(v);
  }
  return ticks;
}

std::string TickLabel(double value, double step) {
  if (!std::isfinite(value)) return "n/a";
  const int decimals =
      std::clamp(static_cast<int>(std::ceil(-std::log10(step) - 1e-9)), 0, 6);
  return FixNegativeZero(absl::StrFormat("%.*f", decimals, value));
}

}  // namespace plumbline::charts
