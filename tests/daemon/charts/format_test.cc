// Tests of daemon/charts/format.h: exact and readable numbers, ticks, times.
#include "daemon/charts/format.h"

#include <cmath>
#include <cstdlib>
#include <limits>
#include <string>
#include <vector>

#include "absl/time/civil_time.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"

namespace plumbline::charts {
namespace {

using ::testing::ElementsAre;

TEST(FormatTest, ExactNumberReadsBackAsTheSameDouble) {
  const std::vector<double> values = {0.1,
                                      1.0 / 3,
                                      2.0 / 3,
                                      0.30000000000000004,
                                      1e-300,
                                      5e-324,
                                      -0.0,
                                      1e300,
                                      std::numeric_limits<double>::max(),
                                      0.4422,
                                      123456789,
                                      -2.5e-7,
                                      0.9999999999999999};
  for (double v : values) {
    const std::string s = ExactNumber(v);
    EXPECT_EQ(std::strtod(s.c_str(), nullptr), v) << s;
    EXPECT_EQ(std::signbit(std::strtod(s.c_str(), nullptr)), std::signbit(v));
  }
  EXPECT_EQ(ExactNumber(0.1),
            "0.1");  // shortest form, not 0.1000000000000000055
  EXPECT_EQ(ExactNumber(std::nan("")), "0");
  EXPECT_EQ(ExactNumber(std::numeric_limits<double>::infinity()), "0");
}

TEST(FormatTest, ShortNumberRoundsToSignificantDigits) {
  EXPECT_EQ(ShortNumber(0.0123456, 3), "0.0123");
  EXPECT_EQ(ShortNumber(0.4122, 3), "0.412");
  EXPECT_EQ(ShortNumber(0.5, 3), "0.5");
  EXPECT_EQ(ShortNumber(9.996, 3), "10");  // carry keeps 3 digits
  EXPECT_EQ(ShortNumber(0.09996, 3), "0.1");
  EXPECT_EQ(ShortNumber(1234.5678, 6), "1234.57");
  EXPECT_EQ(ShortNumber(1234.5678, 10), "1234.57");  // at most 6
  EXPECT_EQ(ShortNumber(123456789, 3), "1.23e+08");
  EXPECT_EQ(ShortNumber(-0.0001, 2), "-0.0001");
  EXPECT_EQ(ShortNumber(-0.0, 3), "0");
  EXPECT_EQ(ShortNumber(std::nan(""), 3), "n/a");
  EXPECT_EQ(ShortNumber(-std::numeric_limits<double>::infinity()), "n/a");
  EXPECT_EQ(PercentText(0.1234), "12.3%");
  EXPECT_EQ(PercentText(std::nan("")), "n/a");
}

TEST(FormatTest, CoordHasAtMostTwoDecimalsAndNeverNan) {
  EXPECT_EQ(Coord(72), "72");
  EXPECT_EQ(Coord(72.126), "72.13");
  EXPECT_EQ(Coord(72.5), "72.5");
  EXPECT_EQ(Coord(-0.001), "0");
  EXPECT_EQ(Coord(std::nan("")), "0");
}

TEST(FormatTest, CountTextGroupsDigitsWithNarrowSpaces) {
  EXPECT_EQ(CountText(0), "0");
  EXPECT_EQ(CountText(999), "999");
  EXPECT_EQ(CountText(1204),
            "1\xE2\x80\xAF"
            "204");
  EXPECT_EQ(CountText(1234567),
            "1\xE2\x80\xAF"
            "234\xE2\x80\xAF"
            "567");
  EXPECT_EQ(CountText(-1204),
            "\xE2\x88\x92"
            "1\xE2\x80\xAF"
            "204");
}

TEST(FormatTest, NiceTicksCoverTheRangeInRoundSteps) {
  Ticks t = NiceTicks(0, 1, 5);
  EXPECT_DOUBLE_EQ(t.step, 0.2);
  ASSERT_EQ(t.values.size(), 6u);
  EXPECT_EQ(t.values.front(), 0);
  EXPECT_DOUBLE_EQ(t.values.back(), 1);
  t = NiceTicks(0.03, 0.41, 5);  // raw step 0.076 -> 0.1
  EXPECT_DOUBLE_EQ(t.step, 0.1);
  EXPECT_EQ(t.values.front(), 0);
  EXPECT_DOUBLE_EQ(t.values.back(), 0.5);
  t = NiceTicks(0.35, 0.55, 4);
  EXPECT_DOUBLE_EQ(t.step, 0.05);
  EXPECT_THAT(std::vector<std::string>({TickLabel(t.values[0], t.step),
                                        TickLabel(t.values[1], t.step)}),
              ElementsAre("0.35", "0.40"));
  EXPECT_EQ(TickLabel(20, 5), "20");
  EXPECT_EQ(TickLabel(0.2, 0.2), "0.2");
}

TEST(FormatTest, TimesAreExactInAttributesAndShortOnAxes) {
  const absl::Time t = absl::FromCivil(absl::CivilSecond(2024, 5, 14, 6, 30, 0),
                                       absl::UTCTimeZone()) +
                       absl::Nanoseconds(1);
  EXPECT_EQ(ExactTime(t), "2024-05-14T06:30:00.000000001+00:00");
  EXPECT_EQ(DayText(t), "14 May 06:30");
  EXPECT_EQ(
      DayText(absl::FromCivil(absl::CivilDay(2024, 1, 2), absl::UTCTimeZone())),
      "2 Jan");
}

}  // namespace
}  // namespace plumbline::charts
