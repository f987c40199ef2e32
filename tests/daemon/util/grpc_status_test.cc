// File: tests/daemon/util/grpc_status_test.cc
#include "daemon/util/grpc_status.h"

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

}  // namespace
}  // namespace plumbline::daemon
