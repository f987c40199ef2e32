// File: tests/daemon/security/tls_test.cc
//
// Transport security and the standard gRPC surface through a real plumbd,
// with certificates made by the openssl command line in a temp dir: TLS
// serves clients that trust its CA (gRPC and plumbctl) and no plain-text
// client; mutual TLS refuses clients without a certificate or with one of
// another CA; certificate subjects map to roles; plain text on a
// non-loopback address is refused unless the config allows it; server
// reflection follows the config.
#include <grpcpp/client_context.h>
#include <grpcpp/generic/generic_stub.h>

#include <chrono>
#include <filesystem>
#include <memory>
#include <string>
#include <vector>

#include "absl/strings/str_cat.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "plumbline/v1/registry.grpc.pb.h"
#include "plumbline/v1/scoring.grpc.pb.h"
#include "tests/testing/process.h"
#include "tests/testing/security_testing.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using ::testing::HasSubstr;
using testing::PlumbdProcess;
using testing::TestCerts;

grpc::Status ListSets(const std::shared_ptr<grpc::Channel>& channel) {
  grpc::ClientContext context;
  context.set_deadline(std::chrono::system_clock::now() +
                       std::chrono::seconds(30));  // safety net only
  v1::ListSetsReply reply;
  return v1::Scoring::NewStub(channel)->ListSets(&context, {}, &reply);
}

grpc::Status ListVersions(const std::shared_ptr<grpc::Channel>& channel) {
  grpc::ClientContext context;
  v1::ListVersionsReply reply;
  return v1::Registry::NewStub(channel)->ListVersions(&context, {}, &reply);
}

class PlumbdSecurityTest : public ::testing::Test {
 protected:
  void SetUp() override {
    ASSERT_FALSE(testing::SharedTestCerts().ca_crt.empty())
        << "no certificates";
    std::filesystem::create_directory(dir_.File("sets"));
    ASSERT_TRUE(testing::WriteTextFile(dir_.File("sets/courier.json"),
                                       testing::CourierSetJson("courier", "v1"))
                    .ok());
  }
  absl::StatusOr<std::unique_ptr<PlumbdProcess>> Start(
      const std::string& config_json,
      std::vector<std::string> extra_args = {}) {
    absl::Status written =
        testing::WriteTextFile(dir_.File("plumbd.json"), config_json);
    if (!written.ok()) return written;
    std::vector<std::string> args = {"--config", dir_.File("plumbd.json"),
                                     "--sets",   dir_.File("sets"),
                                     "--ledger", dir_.File("ledger.db")};
    args.insert(args.end(), extra_args.begin(), extra_args.end());
    return PlumbdProcess::Start(dir_.path(), args);
  }
  static std::string TlsConfig(bool mutual, const std::string& more = "") {
    const TestCerts& c = testing::SharedTestCerts();
    return absl::StrCat(
        R"({"security": {"tls": {"cert_file": ")", c.server_crt,
        R"(", "key_file": ")", c.server_key, R"(")",
        mutual ? absl::StrCat(R"(, "client_ca_file": ")", c.ca_crt, R"(")")
               : "",
        "}", more, "}}");
  }
  testing::ProcessResult Plumbctl(const std::vector<std::string>& flags,
                                  const std::string& addr) {
    std::vector<std::string> argv = {PLUMBCTL_PATH, "--addr", addr};
    argv.insert(argv.end(), flags.begin(), flags.end());
    argv.push_back("sets");
    absl::StatusOr<testing::ProcessResult> run =
        testing::RunProcess(argv, dir_.path());
    EXPECT_TRUE(run.ok()) << run.status();
    return run.ok() ? *run : testing::ProcessResult();
  }

  testing::TempDir dir_;
};

TEST_F(PlumbdSecurityTest, TlsServesClientsThatTrustItsCa) {
  auto plumbd = Start(TlsConfig(/*mutual=*/false));
  ASSERT_TRUE(plumbd.ok()) << plumbd.status();
  const std::string addr = (*plumbd)->addr();
  const TestCerts& c = testing::SharedTestCerts();
  EXPECT_THAT((*plumbd)->Log(), HasSubstr("event=grpc_transport"));
  EXPECT_THAT((*plumbd)->Log(), HasSubstr("mode=tls"));
  const grpc::Status trusted = ListSets(testing::TlsChannel(addr, c.ca_crt));
  EXPECT_TRUE(trusted.ok()) << trusted.error_message();
  EXPECT_EQ(ListSets(testing::PlainChannel(addr)).error_code(),
            grpc::StatusCode::UNAVAILABLE);
  EXPECT_EQ(ListSets(testing::TlsChannel(addr, c.other_ca_crt)).error_code(),
            grpc::StatusCode::UNAVAILABLE);

  const testing::ProcessResult with_ca = Plumbctl({"--tls_ca", c.ca_crt}, addr);
  EXPECT_EQ(with_ca.exit_code, 0) << with_ca.err;
  EXPECT_THAT(with_ca.out, HasSubstr("courier"));
  const testing::ProcessResult plain = Plumbctl({}, addr);
  EXPECT_EQ(plain.exit_code, 1);
  EXPECT_THAT(plain.err, HasSubstr("UNAVAILABLE"));
  EXPECT_THAT(plain.err, HasSubstr("--tls_ca"));
}

TEST_F(PlumbdSecurityTest, MutualTlsRefusesClientsWithoutACertOfItsCa) {
  auto plumbd = Start(TlsConfig(/*mutual=*/true));
  ASSERT_TRUE(plumbd.ok()) << plumbd.status();
  const std::string addr = (*plumbd)->addr();
  const TestCerts& c = testing::SharedTestCerts();
  EXPECT_THAT((*plumbd)->Log(), HasSubstr("mode=mutual_tls"));
  const grpc::Status with_cert =
      ListSets(testing::TlsChannel(addr, c.ca_crt, c.client_crt, c.client_key));
  EXPECT_TRUE(with_cert.ok()) << with_cert.error_message();
  EXPECT_FALSE(ListSets(testing::TlsChannel(addr, c.ca_crt)).ok());
  EXPECT_FALSE(ListSets(testing::TlsChannel(addr, c.ca_crt, c.other_client_crt,
                                            c.other_client_key))
                   .ok());
  EXPECT_FALSE(ListSets(testing::PlainChannel(addr)).ok());

  const testing::ProcessResult ctl =
      Plumbctl({"--tls_ca", c.ca_crt, "--tls_cert", c.client_crt, "--tls_key",
                c.client_key},
               addr);
  EXPECT_EQ(ctl.exit_code, 0) << ctl.err;
  const testing::ProcessResult no_cert = Plumbctl({"--tls_ca", c.ca_crt}, addr);
  EXPECT_EQ(no_cert.exit_code, 1);
  const testing::ProcessResult half =
      Plumbctl({"--tls_ca", c.ca_crt, "--tls_cert", c.client_crt}, addr);
  EXPECT_EQ(half.exit_code, 2);
  EXPECT_THAT(half.err, HasSubstr("--tls_key"));
}

TEST_F(PlumbdSecurityTest, CertificateSubjectsMapToRoles) {
  auto plumbd = Start(TlsConfig(/*mutual=*/true, R"(, "access": {"subjects": [
      {"common_name": "router-1", "role": "SCORE"},
      {"subject": "CN=admin-1,O=Courier Co", "role": "ADMIN"}]})"));
  ASSERT_TRUE(plumbd.ok()) << plumbd.status();
  const std::string addr = (*plumbd)->addr();
  const TestCerts& c = testing::SharedTestCerts();
  auto router = testing::TlsChannel(addr, c.ca_crt, c.client_crt, c.client_key);
  auto admin = testing::TlsChannel(addr, c.ca_crt, c.admin_crt, c.admin_key);
  auto stranger =
      testing::TlsChannel(addr, c.ca_crt, c.stranger_crt, c.stranger_key);
  EXPECT_TRUE(ListSets(router).ok());
  EXPECT_EQ(ListVersions(router).error_code(),
            grpc::StatusCode::PERMISSION_DENIED);
  EXPECT_TRUE(ListSets(admin).ok());
  const grpc::Status admin_versions = ListVersions(admin);
  EXPECT_TRUE(admin_versions.ok()) << admin_versions.error_message();
  EXPECT_EQ(ListSets(stranger).error_code(), grpc::StatusCode::UNAUTHENTICATED);
  EXPECT_THAT((*plumbd)->Log(), HasSubstr("reason=unknown_subject peer="));
  EXPECT_THAT((*plumbd)->Log(),
              HasSubstr("subject=\"CN=stranger,O=Elsewhere Ltd\""));
}

TEST_F(PlumbdSecurityTest, PlainTextOffLoopbackOnlyWhenAllowed) {
  // Metrics stay on loopback: open metrics need their own permission
  // (security.allow_unauthenticated_metrics_non_loopback).
  const std::vector<std::string> open = {"--listen", "0.0.0.0:0",
                                         "--metrics_listen", "127.0.0.1:0"};
  auto refused = Start("{}", open);
  ASSERT_FALSE(refused.ok());
  EXPECT_THAT(std::string(refused.status().message()),
              HasSubstr("security.allow_plaintext_non_loopback"));

  auto allowed =
      Start(R"({"security": {"allow_plaintext_non_loopback": true}})", open);
  ASSERT_TRUE(allowed.ok()) << allowed.status();
  EXPECT_THAT((*allowed)->Log(), HasSubstr("mode=plaintext"));
  EXPECT_THAT((*allowed)->Log(),
              HasSubstr("level=warning event=plaintext_non_loopback"));
  const std::string port =
      (*allowed)->addr().substr((*allowed)->addr().rfind(':') + 1);
  EXPECT_TRUE(ListSets(testing::PlainChannel("127.0.0.1:" + port)).ok());
  allowed->reset();

  auto tls = Start(TlsConfig(/*mutual=*/false), open);
  ASSERT_TRUE(tls.ok()) << tls.status();
  EXPECT_THAT((*tls)->Log(), HasSubstr("mode=tls"));
}

// Asks for the list of services by gRPC server reflection (v1alpha); the
// reply's bytes in `reply`.
grpc::Status ReflectionListServices(
    const std::shared_ptr<grpc::Channel>& channel, std::string* reply) {
  grpc::GenericStub stub(channel);
  grpc::ClientContext context;
  context.set_deadline(std::chrono::system_clock::now() +
                       std::chrono::seconds(30));  // safety net only
  grpc::CompletionQueue cq;
  auto call = stub.PrepareCall(
      &context,
      "/grpc.reflection.v1alpha.ServerReflection/ServerReflectionInfo", &cq);
  const auto wait = [&cq](intptr_t expected) {
    void* tag = nullptr;
    bool ok = false;
    EXPECT_TRUE(cq.Next(&tag, &ok));
    EXPECT_EQ(reinterpret_cast<intptr_t>(tag), expected);
    return ok;
  };
  call->StartCall(reinterpret_cast<void*>(1));
  wait(1);
  // ServerReflectionRequest{list_services: ""}: field 7, length-delimited,
  // empty (grpc/reflection/v1alpha/reflection.proto in grpc/grpc).
  const char request[] = {0x3a, 0x00};
  grpc::Slice slice(request, sizeof(request));
  grpc::ByteBuffer buffer(&slice, 1);
  call->Write(buffer, reinterpret_cast<void*>(2));
  wait(2);
  call->WritesDone(reinterpret_cast<void*>(3));
  wait(3);
  grpc::ByteBuffer response;
  call->Read(&response, reinterpret_cast<void*>(4));
  if (wait(4)) {
    std::vector<grpc::Slice> slices;
    (void)response.Dump(&slices);
    for (const grpc::Slice& s : slices) {
      reply->append(reinterpret_cast<const char*>(s.begin()), s.size());
    }
  }
  grpc::Status status;
  call->Finish(&status, reinterpret_cast<void*>(5));
  wait(5);
  cq.Shutdown();
  return status;
}

TEST_F(PlumbdSecurityTest, ReflectionFollowsTheConfig) {
  {
    auto plumbd = Start("{}");
    ASSERT_TRUE(plumbd.ok()) << plumbd.status();
    std::string reply;
    EXPECT_EQ(
        ReflectionListServices(testing::PlainChannel((*plumbd)->addr()), &reply)
            .error_code(),
        grpc::StatusCode::UNIMPLEMENTED);
  }
  auto plumbd = Start(R"({"grpc": {"reflection": true}})");
  ASSERT_TRUE(plumbd.ok()) << plumbd.status();
  EXPECT_THAT((*plumbd)->Log(), HasSubstr("reflection=on"));
  std::string reply;
  const grpc::Status status =
      ReflectionListServices(testing::PlainChannel((*plumbd)->addr()), &reply);
  EXPECT_TRUE(status.ok()) << status.error_message();
  EXPECT_THAT(reply, HasSubstr("plumbline.v1.Scoring"));
  EXPECT_THAT(reply, HasSubstr("plumbline.v1.Registry"));
}

}  // namespace
}  // namespace plumbline::daemon
