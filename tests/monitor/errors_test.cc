// File: tests/monitor/errors_test.cc
//
// Every pure function of monitor/ refuses the same kinds of bad input with
// INVALID_ARGUMENT and a message naming what was wrong: empty input, arrays
// of different lengths, a label other than 0/1, a probability outside
// [0, 1] or NaN, a NaN log-odds.
#include <cmath>
#include <functional>
#include <string>
#include <vector>

#include "absl/status/status.h"
#include "absl/types/span.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "monitor/auc.h"
#include "monitor/calibration_fit.h"
#include "monitor/hosmer_lemeshow.h"
#include "monitor/metrics.h"
#include "monitor/reliability.h"

namespace plumbline::monitor {
namespace {

using ::testing::HasSubstr;

using Figure = std::function<absl::Status(absl::Span<const double>,
                                          absl::Span<const int>)>;

struct Case {
  std::string name;
  Figure figure;
  bool takes_probabilities;
};

std::vector<Case> Cases() {
  auto status = [](auto result) { return result.status(); };
  return {
      {"log-loss", [=](auto s, auto y) { return status(LogLoss(s, y)); },
       false},
      {"AUC", [=](auto s, auto y) { return status(Auc(s, y)); }, false},
      {"calibration intercept/slope",
       [=](auto s, auto y) { return status(CalibrationInterceptSlope(s, y)); },
       false},
      {"Brier score", [=](auto s, auto y) { return status(BrierScore(s, y)); },
       true},
      {"calibration-in-the-large",
       [=](auto s, auto y) { return status(CalibrationInTheLarge(s, y)); },
       true},
      {"equal-width reliability table",
       [=](auto s, auto y) { return status(EqualWidthReliability(s, y)); },
       true},
      {"equal-count reliability table",
       [=](auto s, auto y) { return status(EqualCountReliability(s, y)); },
       true},
      {"Hosmer-Lemeshow",
       [=](auto s, auto y) { return status(HosmerLemeshow(s, y)); }, true},
  };
}

void ExpectInvalid(const absl::Status& s, const std::string& figure,
                   const std::string& text) {
  EXPECT_EQ(s.code(), absl::StatusCode::kInvalidArgument)
      << figure << ": " << s;
  EXPECT_THAT(std::string(s.message()), HasSubstr(figure)) << s;
  EXPECT_THAT(std::string(s.message()), HasSubstr(text)) << figure;
}

TEST(PureFunctionErrorsTest, EveryFigureNamesTheProblem) {
  for (const Case& c : Cases()) {
    const std::vector<double> ok = {0.2, 0.7, 0.4};
    ExpectInvalid(c.figure({}, {}), c.name, "no labelled records");
    ExpectInvalid(c.figure(ok, std::vector<int>{1, 0}), c.name,
                  "3 scores but 2 labels");
    ExpectInvalid(c.figure(ok, std::vector<int>{1, 3, 0}), c.name,
                  "labels[1] is 3; labels must be 0 or 1");
    const std::vector<double> nan = {0.2, 0.7, std::nan("")};
    if (c.takes_probabilities) {
      ExpectInvalid(c.figure(std::vector<double>{0.2, 1.01, 0.4},
                             std::vector<int>{1, 0, 1}),
                    c.name, "probabilities[1] is 1.01");
      ExpectInvalid(c.figure(nan, std::vector<int>{1, 0, 1}), c.name,
                    "probabilities[2] is nan");
    } else {
      ExpectInvalid(c.figure(nan, std::vector<int>{1, 0, 1}), c.name, "[2] is");
    }
  }
}

}  // namespace
}  // namespace plumbline::monitor
