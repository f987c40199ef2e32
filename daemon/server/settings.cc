// File: daemon/server/settings.cc
#include "daemon/server/settings.h"

#include <grpc/grpc.h>
#include <grpcpp/ext/proto_server_reflection_plugin.h>
#include <grpcpp/impl/server_builder_option.h>

#include <algorithm>
#include <limits>
#include <memory>

namespace plumbline::daemon {
namespace {

int CappedInt(uint64_t value) {
  constexpr auto kMax = static_cast<uint64_t>(std::numeric_limits<int>::max());
  return static_cast<int>(value > kMax ? kMax : value);
}

int SecondsToMs(uint64_t seconds) {
  constexpr uint64_t kMaxSeconds =
      static_cast<uint64_t>(std::numeric_limits<int>::max()) / 1000;
  return seconds > kMaxSeconds ? std::numeric_limits<int>::max()
                               : static_cast<int>(seconds * 1000);
}

// Gives this builder's server gRPC's reflection plugin or takes it away.
// Loading gRPC's reflection library registers the plugin for every server
// of the process (a static initializer), so "off" must remove it and "on"
// adds it only where it is missing.
class ReflectionOption : public grpc::ServerBuilderOption {
 public:
  explicit ReflectionOption(bool on) : on_(on) {}
  void UpdateArguments(grpc::ChannelArguments* /*args*/) override {}
  void UpdatePlugins(std::vector<std::unique_ptr<grpc::ServerBuilderPlugin>>*
                         plugins) override {
    auto reflection =
        std::make_unique<grpc::reflection::ProtoServerReflectionPlugin>();
    const std::string name = reflection->name();
    plugins->erase(std::remove_if(plugins->begin(), plugins->end(),
                                  [&name](const auto& plugin) {
                                    return plugin->name() == name;
                                  }),
                   plugins->end());
    if (on_) plugins->push_back(std::move(reflection));
  }

 private:
  const bool on_;
};

}  // namespace

std::vector<std::pair<std::string, int>> ServerChannelArgs(
    const v1::GrpcServerConfig& config) {
  std::vector<std::pair<std::string, int>> args;
  const auto add_seconds = [&](const char* name, uint64_t seconds) {
    if (seconds != 0) args.emplace_back(name, SecondsToMs(seconds));
  };
  add_seconds(GRPC_ARG_KEEPALIVE_TIME_MS, config.keepalive_time_seconds());
  add_seconds(GRPC_ARG_KEEPALIVE_TIMEOUT_MS,
              config.keepalive_timeout_seconds());
  if (config.keepalive_permit_without_calls()) {
    args.emplace_back(GRPC_ARG_KEEPALIVE_PERMIT_WITHOUT_CALLS, 1);
  }
  add_seconds(GRPC_ARG_HTTP2_MIN_RECV_PING_INTERVAL_WITHOUT_DATA_MS,
              config.min_client_ping_interval_seconds());
  add_seconds(GRPC_ARG_MAX_CONNECTION_IDLE_MS,
              config.max_connection_idle_seconds());
  add_seconds(GRPC_ARG_MAX_CONNECTION_AGE_MS,
              config.max_connection_age_seconds());
  add_seconds(GRPC_ARG_MAX_CONNECTION_AGE_GRACE_MS,
              config.max_connection_age_grace_seconds());
  if (config.max_concurrent_streams() != 0) {
    args.emplace_back(GRPC_ARG_MAX_CONCURRENT_STREAMS,
                      CappedInt(config.max_concurrent_streams()));
  }
  return args;
}

// Idle gRPC handler threads kept polling (see ApplyServerSettings).
constexpr int kMaxIdleHandlerThreads = 64;

void ApplyServerSettings(const v1::GrpcServerConfig& config,
                         uint32_t max_message_bytes,
                         grpc::ServerBuilder* builder) {
  for (const auto& [name, value] : ServerChannelArgs(config)) {
    builder->AddChannelArgument(name, value);
  }
  builder->SetMaxReceiveMessageSize(CappedInt(max_message_bytes));
  builder->SetMaxSendMessageSize(CappedInt(max_message_bytes));
  builder->SetOption(std::make_unique<ReflectionOption>(config.reflection()));
  // gRPC's synchronous server lets a handler thread that finds more than
  // MAX_POLLERS (default 2) threads polling exit, and starts a new one when
  // too few poll. Every durable call blocks its thread until the ledger's
  // fdatasync, so under a few dozen callers threads were created and torn
  // down by the thousand a second (each a stack to map and fault in). Idle
  // threads are kept instead, up to this many polling at once.
  builder->SetSyncServerOption(
      grpc::ServerBuilder::SyncServerOption::MAX_POLLERS,
      kMaxIdleHandlerThreads);
}

}  // namespace plumbline::daemon
