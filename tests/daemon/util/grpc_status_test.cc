// File: tests/daemon/util/grpc_status_test.cc
#include "daemon/util/grpc_status.h"

#include <string>

#include "gtest/gtest.h"

namespace plumbline::daemon {
namespace {

TEST(GrpcStatusTest, OkMapsToOk) {
  EXPECT_TRUE(ToGrpcStatus(absl::OkStatus()).ok());
  EXPECT_TRUE(FromGrpcStatus(grpc::Status::OK).ok());
}

TEST(GrpcStatusTest, EveryCanonicalCodeKeepsCodeAndMessage) {
  // Codes 1..16 are the canonical error codes shared by absl and gRPC.
  for (int code = 1; code <= 16; ++code) {
    const absl::Status in(static_cast<absl::StatusCode>(code),
                          "feature 'x': bad");
    const grpc::Status out = ToGrpcStatus(in);
    EXPECT_EQ(static_cast<int>(out.error_code()), code);
    EXPECT_EQ(out.error_message(), "feature 'x': bad");
    const absl::Status back = FromGrpcStatus(out);
    EXPECT_EQ(back, in) << "code " << code;
  }
}

TEST(GrpcStatusTest, NamedCodesLineUp) {
  EXPECT_EQ(ToGrpcStatus(absl::InvalidArgumentError("m")).error_code(),
            grpc::StatusCode::INVALID_ARGUMENT);
  EXPECT_EQ(ToGrpcStatus(absl::NotFoundError("m")).error_code(),
            grpc::StatusCode::NOT_FOUND);
  EXPECT_EQ(FromGrpcStatus(grpc::Status(grpc::StatusCode::UNAVAILABLE, "down"))
                .code(),
            absl::StatusCode::kUnavailable);
}

TEST(GrpcStatusTest, LongMessageIsCutOnACharacterBoundary) {
  // 'é' is two bytes (0xc3 0xa9); 1500 of them are 3000 bytes, so the cut at
  // kMaxStatusMessageBytes (2048, even) falls between two characters.
  std::string long_text = "x";  // shifts the boundary by one byte
  for (int i = 0; i < 1500; ++i) long_text += "\xc3\xa9";
  const grpc::Status out = ToGrpcStatus(absl::InvalidArgumentError(long_text));
  EXPECT_EQ(out.error_code(), grpc::StatusCode::INVALID_ARGUMENT);
  const std::string& m = out.error_message();
  ASSERT_LT(m.size(), kMaxStatusMessageBytes + 100);
  const size_t marker = m.find("... (message cut at 2047 of 3001 bytes)");
  ASSERT_NE(marker, std::string::npos) << m.substr(m.size() - 60);
  EXPECT_EQ(m.substr(0, marker), long_text.substr(0, 2047));
}

TEST(GrpcStatusTest, MessageAtTheLimitIsKept) {
  const std::string text(kMaxStatusMessageBytes, 'a');
  EXPECT_EQ(ToGrpcStatus(absl::NotFoundError(text)).error_message(), text);
}

}  // namespace
}  // namespace plumbline::daemon
