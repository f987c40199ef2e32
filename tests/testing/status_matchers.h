// File: tests/testing/status_matchers.h
//
// GoogleTest helpers for absl::Status and absl::StatusOr<T> (Debian's
// Abseil ships none):
//
//   ASSERT_OK(ledger->Flush());
//   EXPECT_OK(status);
//   ASSERT_OK_AND_ASSIGN(std::unique_ptr<Ledger> ledger,
//   SqliteLedger::Open(o)); EXPECT_THAT(Parse(""),
//   StatusIs(absl::StatusCode::kInvalidArgument,
//                                   HasSubstr("field 'name'")));
//
// A failure prints the code and the message of the Status.
//
// Thread-safe: as GoogleTest's assertions.
#ifndef PLUMBLINE_TESTS_TESTING_STATUS_MATCHERS_H_
#define PLUMBLINE_TESTS_TESTING_STATUS_MATCHERS_H_

#include <ostream>
#include <string>
#include <utility>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"

namespace plumbline::testing {
namespace internal {

inline const absl::Status& GetStatus(const absl::Status& status) {
  return status;
}
template <typename T>
const absl::Status& GetStatus(const absl::StatusOr<T>& status_or) {
  return status_or.status();
}

// The matcher behind StatusIs, for Status and StatusOr<T> alike.
template <typename CodeMatcher, typename MessageMatcher>
class StatusIsMatcher {
 public:
  StatusIsMatcher(CodeMatcher code, MessageMatcher message)
      : code_(std::move(code)), message_(std::move(message)) {}

  template <typename T>
  operator ::testing::Matcher<const T&>() const {  // NOLINT: implicit
    return ::testing::MakeMatcher(new Impl<const T&>(code_, message_));
  }

 private:
  template <typename T>
  class Impl : public ::testing::MatcherInterface<T> {
   public:
    Impl(const CodeMatcher& code, const MessageMatcher& message)
        : code_(::testing::SafeMatcherCast<absl::StatusCode>(code)),
          message_(::testing::SafeMatcherCast<const std::string&>(message)) {}

    bool MatchAndExplain(
        T value, ::testing::MatchResultListener* listener) const override {
      const absl::Status& status = GetStatus(value);
      *listener << "whose status is " << status;
      return code_.Matches(status.code()) &&
             message_.Matches(std::string(status.message()));
    }
    void DescribeTo(std::ostream* os) const override {
      *os << "has a status code that ";
      code_.DescribeTo(os);
      *os << " and a message that ";
      message_.DescribeTo(os);
    }
    void DescribeNegationTo(std::ostream* os) const override {
      *os << "has a status code that ";
      code_.DescribeNegationTo(os);
      *os << " or a message that ";
      message_.DescribeNegationTo(os);
    }

   private:
    ::testing::Matcher<absl::StatusCode> code_;
    ::testing::Matcher<const std::string&> message_;
  };

  CodeMatcher code_;
  MessageMatcher message_;
};

}  // namespace internal

// Matches a Status or StatusOr whose code matches `code` and whose message
// matches `message` (anything when omitted).
template <typename CodeMatcher, typename MessageMatcher>
internal::StatusIsMatcher<CodeMatcher, MessageMatcher> StatusIs(
    CodeMatcher code, MessageMatcher message) {
  return {std::move(code), std::move(message)};
}
template <typename CodeMatcher>
auto StatusIs(CodeMatcher code) {
  return StatusIs(std::move(code), ::testing::_);
}

// Matches an OK Status or a StatusOr holding a value.
inline auto IsOk() { return StatusIs(absl::StatusCode::kOk); }

}  // namespace plumbline::testing

#define PLUMBLINE_STATUS_CONCAT_INNER_(a, b) a##b
#define PLUMBLINE_STATUS_CONCAT_(a, b) PLUMBLINE_STATUS_CONCAT_INNER_(a, b)

// Fails the test (and returns) unless `expr` (a Status or StatusOr) is OK.
#define ASSERT_OK(expr) ASSERT_THAT((expr), ::plumbline::testing::IsOk())
#define EXPECT_OK(expr) EXPECT_THAT((expr), ::plumbline::testing::IsOk())

// `lhs` = the value of the StatusOr `rexpr`, or a fatal failure naming its
// status. `lhs` may declare a variable: ASSERT_OK_AND_ASSIGN(auto x, F());
#define ASSERT_OK_AND_ASSIGN(lhs, rexpr) \
  ASSERT_OK_AND_ASSIGN_IMPL_(            \
      PLUMBLINE_STATUS_CONCAT_(plumbline_status_or_, __LINE__), lhs, rexpr)
#define ASSERT_OK_AND_ASSIGN_IMPL_(statusor, lhs, rexpr) \
  auto statusor = (rexpr);                               \
  ASSERT_OK(statusor);                                   \
  lhs = std::move(statusor).value()

#endif  // PLUMBLINE_TESTS_TESTING_STATUS_MATCHERS_H_
