// File: daemon/util/grpc_status.cc
#include "daemon/util/grpc_status.h"

#include <string>

namespace plumbline::daemon {

// absl::StatusCode and grpc::StatusCode share the canonical numbering
// (OK = 0 ... UNAUTHENTICATED = 16); checked here so a change would not
// compile.
static_assert(static_cast<int>(absl::StatusCode::kInvalidArgument) ==
              static_cast<int>(grpc::StatusCode::INVALID_ARGUMENT));
static_assert(static_cast<int>(absl::StatusCode::kNotFound) ==
              static_cast<int>(grpc::StatusCode::NOT_FOUND));
static_assert(static_cast<int>(absl::StatusCode::kUnauthenticated) ==
              static_cast<int>(grpc::StatusCode::UNAUTHENTICATED));

grpc::Status ToGrpcStatus(const absl::Status& status) {
  if (status.ok()) return grpc::Status::OK;
  return grpc::Status(static_cast<grpc::StatusCode>(status.code()),
                      std::string(status.message()));
}

absl::Status FromGrpcStatus(const grpc::Status& status) {
  if (status.ok()) return absl::OkStatus();
  return absl::Status(static_cast<absl::StatusCode>(status.error_code()),
                      status.error_message());
}

}  // namespace plumbline::daemon
