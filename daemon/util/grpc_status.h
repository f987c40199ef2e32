// File: daemon/util/grpc_status.h
//
// The one place where absl::Status and grpc::Status meet. Their codes are the
// same canonical codes with the same numbers, so the mapping keeps the code
// and the message, except that ToGrpcStatus cuts a message longer than
// kMaxStatusMessageBytes: gRPC sends the message as percent-encoded trailing
// metadata, and a client refuses trailers over its metadata limit (8 KiB by
// default) with RESOURCE_EXHAUSTED, hiding the real code. Messages that
// quote caller input already cut it (caller_text.h); this is the last guard.
// Used by the scoring service (absl → gRPC) and by plumbctl (gRPC → absl, to
// print errors the same way for local and remote failures).
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_UTIL_GRPC_STATUS_H_
#define PLUMBLINE_DAEMON_UTIL_GRPC_STATUS_H_

#include <grpcpp/support/status.h>

#include <cstddef>

#include "absl/status/status.h"

namespace plumbline::daemon {

// Longest status message sent; even all non-ASCII (three bytes each once
// percent-encoded) it stays under 8 KiB with the other trailers.
inline constexpr size_t kMaxStatusMessageBytes = 2048;

grpc::Status ToGrpcStatus(const absl::Status& status);
absl::Status FromGrpcStatus(const grpc::Status& status);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_UTIL_GRPC_STATUS_H_
