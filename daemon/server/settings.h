// File: daemon/server/settings.h
//
// The standard gRPC server settings plumbd takes from its config
// (config.proto's grpc, a GrpcServerConfig): keepalive and connection
// limits as gRPC channel arguments, message-size limits, and server
// reflection. DaemonServer applies them to its grpc::ServerBuilder.
//
//   ApplyServerSettings(options.grpc, options.max_message_bytes, &builder);
//
// Thread-safe: free functions.
#ifndef PLUMBLINE_DAEMON_SERVER_SETTINGS_H_
#define PLUMBLINE_DAEMON_SERVER_SETTINGS_H_

#include <grpcpp/server_builder.h>

#include <cstdint>
#include <string>
#include <utility>
#include <vector>

#include "plumbline/v1/security.pb.h"

namespace plumbline::daemon {

// The channel arguments (name, value) `config` asks for; fields at zero
// are left out so gRPC's defaults apply. Seconds become milliseconds,
// capped at INT_MAX.
std::vector<std::pair<std::string, int>> ServerChannelArgs(
    const v1::GrpcServerConfig& config);

// Adds ServerChannelArgs and the send/receive message limit
// (max_message_bytes, capped at INT_MAX) to `builder`, and turns on server
// reflection if config.reflection (and off otherwise, although loading
// gRPC's reflection library turns it on for every server). Call before
// BuildAndStart.
void ApplyServerSettings(const v1::GrpcServerConfig& config,
                         uint32_t max_message_bytes,
                         grpc::ServerBuilder* builder);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SERVER_SETTINGS_H_
