// File: tests/daemon/security/transport_security_test.cc
//
// In process: which listen addresses count as loopback, the refusal of
// plain text elsewhere, the checks of the TLS files (each mistake named by
// its config field), the keepalive channel arguments, and the config file's
// security, grpc and log sections as DaemonOptions carries them.
#include "daemon/security/transport_security.h"

#include <grpc/grpc.h>

#include <string>

#include "daemon/server/options.h"
#include "daemon/server/settings.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "tests/testing/process.h"
#include "tests/testing/security_testing.h"

namespace plumbline::daemon {
namespace {

using ::testing::HasSubstr;
using ::testing::Pair;
using testing::TestCerts;
using ::testing::UnorderedElementsAre;

TEST(TransportSecurityTest, LoopbackAddresses) {
  for (const char* listen :
       {"127.0.0.1:7390", "127.8.9.10:1", "[::1]:7390", "localhost:7390",
        "LOCALHOST:1", "unix:/run/p.sock"}) {
    EXPECT_TRUE(IsLoopbackListen(listen)) << listen;
  }
  for (const char* listen :
       {"0.0.0.0:7390", "[::]:7390", "10.1.2.3:7390", "plumbd.internal:7390",
        "128.0.0.1:1", "[::2]:1"}) {
    EXPECT_FALSE(IsLoopbackListen(listen)) << listen;
  }
}

TEST(TransportSecurityTest, PlainTextOffLoopbackNeedsTheExplicitSwitch) {
  v1::SecurityConfig security;
  EXPECT_TRUE(ServerTransportFor("127.0.0.1:0", security).ok());
  absl::StatusOr<ServerTransport> refused =
      ServerTransportFor("0.0.0.0:7390", security);
  ASSERT_FALSE(refused.ok());
  EXPECT_EQ(refused.status().code(), absl::StatusCode::kInvalidArgument);
  EXPECT_THAT(std::string(refused.status().message()),
              HasSubstr("security.allow_plaintext_non_loopback"));
  security.set_allow_plaintext_non_loopback(true);
  absl::StatusOr<ServerTransport> allowed =
      ServerTransportFor("0.0.0.0:7390", security);
  ASSERT_TRUE(allowed.ok());
  EXPECT_EQ(allowed->mode, "plaintext");
}

TEST(TransportSecurityTest, TlsFileMistakesNameTheField) {
  const TestCerts& certs = testing::SharedTestCerts();
  ASSERT_FALSE(certs.ca_crt.empty()) << "no certificates";
  const auto error = [](const v1::TlsConfig& tls) {
    v1::SecurityConfig security;
    *security.mutable_tls() = tls;
    absl::StatusOr<ServerTransport> t =
        ServerTransportFor("0.0.0.0:1", security);
    return t.ok() ? std::string("OK") : std::string(t.status().message());
  };
  v1::TlsConfig tls;
  tls.set_cert_file(certs.server_crt);
  EXPECT_THAT(error(tls), HasSubstr("set both cert_file and key_file"));
  tls.set_key_file(certs.client_key);  // another certificate's key
  EXPECT_THAT(error(tls), HasSubstr("security.tls.key_file"));
  EXPECT_THAT(error(tls), HasSubstr("is not the key of the certificate"));
  tls.set_key_file(certs.server_crt);  // a certificate, not a key
  EXPECT_THAT(error(tls), HasSubstr("no unencrypted PEM private key"));
  tls.set_key_file(certs.server_key);
  tls.set_cert_file(certs.server_key);  // a key, not a certificate
  EXPECT_THAT(error(tls), HasSubstr("security.tls.cert_file"));
  tls.set_cert_file(certs.server_crt);
  tls.set_client_ca_file("/nonexistent/ca.pem");
  EXPECT_THAT(error(tls), HasSubstr("security.tls.client_ca_file"));
  tls.set_client_ca_file(certs.ca_crt);
  EXPECT_EQ(error(tls), "OK");
  v1::TlsConfig ca_only;
  ca_only.set_client_ca_file(certs.ca_crt);
  EXPECT_THAT(error(ca_only), HasSubstr("needs security.tls.cert_file"));
}

TEST(ServerSettingsTest, KeepaliveFieldsBecomeChannelArguments) {
  v1::GrpcServerConfig config;
  EXPECT_TRUE(ServerChannelArgs(config).empty());  // gRPC's defaults
  config.set_keepalive_time_seconds(60);
  config.set_keepalive_timeout_seconds(20);
  config.set_keepalive_permit_without_calls(true);
  config.set_min_client_ping_interval_seconds(30);
  config.set_max_connection_idle_seconds(600);
  config.set_max_connection_age_seconds(uint64_t{1} << 40);  // capped
  config.set_max_connection_age_grace_seconds(5);
  config.set_max_concurrent_streams(100);
  EXPECT_THAT(
      ServerChannelArgs(config),
      UnorderedElementsAre(
          Pair(GRPC_ARG_KEEPALIVE_TIME_MS, 60000),
          Pair(GRPC_ARG_KEEPALIVE_TIMEOUT_MS, 20000),
          Pair(GRPC_ARG_KEEPALIVE_PERMIT_WITHOUT_CALLS, 1),
          Pair(GRPC_ARG_HTTP2_MIN_RECV_PING_INTERVAL_WITHOUT_DATA_MS, 30000),
          Pair(GRPC_ARG_MAX_CONNECTION_IDLE_MS, 600000),
          Pair(GRPC_ARG_MAX_CONNECTION_AGE_MS, 2147483647),
          Pair(GRPC_ARG_MAX_CONNECTION_AGE_GRACE_MS, 5000),
          Pair(GRPC_ARG_MAX_CONCURRENT_STREAMS, 100)));
}

TEST(SecurityConfigTest, TheConfigFileCarriesSecurityGrpcAndLog) {
  testing::TempDir dir;
  ASSERT_TRUE(testing::WriteTextFile(dir.File("plumbd.json"), R"({
    "listen": "0.0.0.0:7390",
    "security": {
      "tls": {"cert_file": "/etc/plumbd/tls.crt",
              "key_file": "/etc/plumbd/tls.key",
              "client_ca_file": "/etc/plumbd/clients.pem"},
      "allow_plaintext_non_loopback": false,
      "access": {
        "tokens": [{"name": "router", "role": "SCORE", "id": "0123456789ab",
                    "hash": "pbkdf2-sha256$600000$c2FsdA==$a2V5"}],
        "subjects": [{"common_name": "router-1", "role": "ADMIN"}]},
      "metrics_auth": {"username": "metrics",
                       "password_hash": "pbkdf2-sha256$600000$c2FsdA==$a2V5"}},
    "log": {"level": "ERROR", "format": "JSON_LINES",
            "log_record_values": true},
    "grpc": {"reflection": true, "keepalive_time_seconds": 60}
  })")
                  .ok());
  absl::StatusOr<DaemonOptions> options =
      LoadDaemonOptions(dir.File("plumbd.json"));
  ASSERT_TRUE(options.ok()) << options.status();
  EXPECT_EQ(options->security.tls().client_ca_file(),
            "/etc/plumbd/clients.pem");
  ASSERT_EQ(options->security.access().tokens_size(), 1);
  EXPECT_EQ(options->security.access().tokens(0).role(),
            v1::AccessConfig::SCORE);
  EXPECT_EQ(options->security.access().subjects(0).role(),
            v1::AccessConfig::ADMIN);
  EXPECT_EQ(options->security.metrics_auth().username(), "metrics");
  EXPECT_EQ(options->log.min_level, LogLevel::kError);
  EXPECT_EQ(options->log.format, LogFormat::kJsonLines);
  EXPECT_TRUE(options->log.record_values);
  EXPECT_TRUE(options->grpc.reflection());
  EXPECT_EQ(options->grpc.keepalive_time_seconds(), 60u);
  // The defaults: plain text on loopback, key=value at info, nothing else.
  const DaemonOptions defaults = OptionsFromConfig(v1::DaemonConfig());
  EXPECT_TRUE(IsLoopbackListen(defaults.listen));
  EXPECT_FALSE(defaults.security.has_tls());
  EXPECT_EQ(defaults.log.min_level, LogLevel::kInfo);
  EXPECT_EQ(defaults.log.format, LogFormat::kKeyValue);
  EXPECT_FALSE(defaults.log.record_values);
  EXPECT_FALSE(defaults.grpc.reflection());
}

}  // namespace
}  // namespace plumbline::daemon
