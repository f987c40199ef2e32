// File: tests/testing/security_testing.h
//
// Test-only helpers of the transport-security and access-control tests:
// certificates made with the openssl command line in a temp dir, gRPC
// channels with or without TLS, bearer tokens with their config entries,
// and HTTP GETs of the metrics endpoint with basic auth.
//
//   absl::StatusOr<TestCerts> certs = MakeTestCerts(dir.File("certs"));
//   auto channel = TlsChannel(addr, certs->ca_crt, certs->client_crt,
//                             certs->client_key);
//
// Not thread-safe; one test thread uses each helper at a time.
#ifndef PLUMBLINE_TESTS_TESTING_SECURITY_TESTING_H_
#define PLUMBLINE_TESTS_TESTING_SECURITY_TESTING_H_

#include <grpcpp/channel.h>

#include <memory>
#include <string>

#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"

namespace plumbline::daemon::testing {

// Paths of PEM files. CA 1 signs the server (SAN IP:127.0.0.1, localhost)
// and three clients; CA 2 signs one client with the same name as CA 1's
// router-1.
struct TestCerts {
  std::string ca_crt;
  std::string server_crt, server_key;
  // Subject "CN=router-1,O=Courier Co" (RFC 2253 form).
  std::string client_crt, client_key;
  // Subject "CN=admin-1,O=Courier Co".
  std::string admin_crt, admin_key;
  // Subject "CN=stranger,O=Elsewhere Ltd".
  std::string stranger_crt, stranger_key;
  std::string other_ca_crt;
  std::string other_client_crt, other_client_key;
};

// Runs `openssl` (Debian package openssl) to make the files in `dir`.
absl::StatusOr<TestCerts> MakeTestCerts(const std::string& dir);

// One MakeTestCerts for the whole test binary, in a temp dir removed at
// exit. All paths are empty if openssl failed (the error is printed).
const TestCerts& SharedTestCerts();

// A channel to `addr` in plain text.
std::shared_ptr<grpc::Channel> PlainChannel(const std::string& addr);
// A TLS channel trusting `ca_file`, with a client certificate if
// `cert_file` is set. Aborts the test binary if a file cannot be read.
std::shared_ptr<grpc::Channel> TlsChannel(const std::string& addr,
                                          const std::string& ca_file,
                                          const std::string& cert_file = "",
                                          const std::string& key_file = "");

// A token and the JSON of its security.access.tokens entry.
struct TestToken {
  std::string token;
  std::string entry_json;
};
// role is "SCORE" or "ADMIN"; the hash uses kMinHashIterations (speed).
TestToken MakeTestToken(absl::string_view name, absl::string_view role);

// What `plumbctl token new` printed: the secret line and the config entry.
struct TokenCommandOutput {
  std::string secret;
  std::string entry_json;
};
// Runs PLUMBCTL_PATH token new --role `role` --name `name` (scratch files
// in `dir`).
absl::StatusOr<TokenCommandOutput> RunTokenNew(const std::string& plumbctl,
                                               const std::string& role,
                                               const std::string& name,
                                               const std::string& dir);

struct HttpReply {
  long status = 0;
  std::string body;
};
// GET http://host_port/path, with basic auth when `user_password`
// ("user:password") is not empty.
absl::StatusOr<HttpReply> HttpGetWithAuth(const std::string& host_port,
                                          const std::string& path,
                                          const std::string& user_password);

// HOST:PORT of the "event=metrics_listening addr=..." line of plumbd's log.
std::string MetricsAddressFromLog(const std::string& log);

}  // namespace plumbline::daemon::testing

#endif  // PLUMBLINE_TESTS_TESTING_SECURITY_TESTING_H_
