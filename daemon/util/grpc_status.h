// File: daemon/util/grpc_status.h
//
// The one place where absl::Status and grpc::Status meet. Their codes are the
// same canonical codes with the same numbers, so the mapping keeps the code
// and the message unchanged. Used by the scoring service (absl → gRPC) and by
// plumbctl (gRPC → absl, to print errors the same way for local and remote
// failures).
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_UTIL_GRPC_STATUS_H_
#define PLUMBLINE_DAEMON_UTIL_GRPC_STATUS_H_

#include <grpcpp/support/status.h>

#include "absl/status/status.h"

namespace plumbline::daemon {

grpc::Status ToGrpcStatus(const absl::Status& status);
absl::Status FromGrpcStatus(const grpc::Status& status);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_UTIL_GRPC_STATUS_H_
