// File: daemon/cli/client.cc
#include "daemon/cli/client.h"

#include <grpcpp/client_context.h>
#include <grpcpp/create_channel.h>
#include <grpcpp/security/credentials.h>
#include <grpcpp/support/channel_arguments.h>
#include <grpcpp/support/client_interceptor.h>

#include <utility>
#include <vector>

#include "absl/base/const_init.h"
#include "absl/strings/str_cat.h"
#include "absl/synchronization/mutex.h"
#include "daemon/scoring/core.h"
#include "daemon/util/grpc_status.h"

namespace plumbline::daemon {
namespace {

// Replies of big batches can exceed gRPC's 4 MiB default; the daemon caps
// what it accepts itself.
constexpr int kMaxReplyBytes = 256 << 20;

// The process-wide security (SetClientSecurity).
struct InstalledSecurity {
  std::shared_ptr<grpc::ChannelCredentials> credentials;
  std::string authorization;  // "Bearer <token>", or empty
  bool tls = false;
};
ABSL_CONST_INIT absl::Mutex security_mu(absl::kConstInit);
InstalledSecurity& Security() ABSL_EXCLUSIVE_LOCKS_REQUIRED(security_mu) {
  static auto* security = new InstalledSecurity{
      grpc::InsecureChannelCredentials(), std::string(), false};
  return *security;
}
InstalledSecurity CurrentSecurity() {
  absl::MutexLock lock(&security_mu);
  return Security();
}

// Adds the authorization metadata to every call of a channel.
class TokenInterceptor : public grpc::experimental::Interceptor {
 public:
  explicit TokenInterceptor(const std::string* authorization)
      : authorization_(authorization) {}
  void Intercept(
      grpc::experimental::InterceptorBatchMethods* methods) override {
    if (methods->QueryInterceptionHookPoint(
            grpc::experimental::InterceptionHookPoints::
                PRE_SEND_INITIAL_METADATA)) {
      methods->GetSendInitialMetadata()->emplace("authorization",
                                                 *authorization_);
    }
    methods->Proceed();
  }

 private:
  const std::string* authorization_;  // owned by the factory
};

class TokenInterceptorFactory
    : public grpc::experimental::ClientInterceptorFactoryInterface {
 public:
  explicit TokenInterceptorFactory(std::string authorization)
      : authorization_(std::move(authorization)) {}
  grpc::experimental::Interceptor* CreateClientInterceptor(
      grpc::experimental::ClientRpcInfo* /*info*/) override {
    return new TokenInterceptor(&authorization_);
  }

 private:
  const std::string authorization_;
};

}  // namespace

absl::Status FromPlumbdStatus(const grpc::Status& status,
                              const std::string& addr) {
  absl::Status out = FromGrpcStatus(status);
  const InstalledSecurity security = CurrentSecurity();
  if (out.code() == absl::StatusCode::kUnavailable ||
      out.code() == absl::StatusCode::kDeadlineExceeded) {
    return absl::Status(
        out.code(),
        absl::StrCat(
            "plumbd at ", addr, ": ", out.message(),
            out.code() == absl::StatusCode::kUnavailable && !security.tls
                ? " (if plumbd serves TLS, pass --tls_ca, and "
                  "--tls_cert/--tls_key for mutual TLS)"
                : ""));
  }
  if (out.code() == absl::StatusCode::kUnauthenticated &&
      security.authorization.empty()) {
    return absl::Status(
        out.code(), absl::StrCat(out.message(),
                                 " (plumbctl sent no token: pass --token or "
                                 "set PLUMBLINE_TOKEN)"));
  }
  return out;
}

absl::Status SetClientSecurity(const ClientSecurity& security) {
  for (char c : security.token) {
    // gRPC metadata values must be printable ASCII.
    if (c < 0x20 || c > 0x7e) {
      return absl::InvalidArgumentError(
          "--token / PLUMBLINE_TOKEN: holds a character that is not "
          "printable ASCII (a stray newline?)");
    }
  }
  absl::StatusOr<std::shared_ptr<grpc::ChannelCredentials>> credentials =
      ClientChannelCredentials(security.tls);
  if (!credentials.ok()) return credentials.status();
  absl::MutexLock lock(&security_mu);
  InstalledSecurity& installed = Security();
  installed.credentials = *std::move(credentials);
  installed.authorization = security.token.empty()
                                ? std::string()
                                : absl::StrCat("Bearer ", security.token);
  installed.tls = security.tls.enabled();
  return absl::OkStatus();
}

std::shared_ptr<grpc::Channel> NewPlumbdChannel(const std::string& addr) {
  const InstalledSecurity security = CurrentSecurity();
  grpc::ChannelArguments args;
  args.SetMaxReceiveMessageSize(kMaxReplyBytes);
  args.SetMaxSendMessageSize(kMaxReplyBytes);
  std::vector<
      std::unique_ptr<grpc::experimental::ClientInterceptorFactoryInterface>>
      interceptors;
  if (!security.authorization.empty()) {
    interceptors.push_back(
        std::make_unique<TokenInterceptorFactory>(security.authorization));
  }
  return grpc::experimental::CreateCustomChannelWithInterceptors(
      addr, security.credentials, args, std::move(interceptors));
}

ScoringClient::ScoringClient(std::string addr, absl::Duration timeout)
    : addr_(std::move(addr)),
      timeout_(timeout),
      stub_(v1::Scoring::NewStub(NewPlumbdChannel(addr_))) {}

absl::Status ScoringClient::Annotate(const grpc::Status& status) const {
  return FromPlumbdStatus(status, addr_);
}

absl::StatusOr<v1::ListSetsReply> ScoringClient::ListSets() const {
  grpc::ClientContext context;
  context.set_deadline(absl::ToChronoTime(absl::Now() + timeout_));
  v1::ListSetsReply reply;
  grpc::Status status =
      stub_->ListSets(&context, v1::ListSetsRequest(), &reply);
  if (!status.ok()) return Annotate(status);
  return reply;
}

absl::StatusOr<v1::ScoreReply> ScoringClient::Score(
    const v1::ScoreRequest& request) const {
  grpc::ClientContext context;
  context.set_deadline(absl::ToChronoTime(absl::Now() + timeout_));
  v1::ScoreReply reply;
  grpc::Status status = stub_->Score(&context, request, &reply);
  if (!status.ok()) return Annotate(status);
  return reply;
}

absl::StatusOr<v1::ScoreBatchReply> ScoringClient::ScoreBatch(
    const v1::ScoreBatchRequest& request) const {
  grpc::ClientContext context;
  context.set_deadline(absl::ToChronoTime(absl::Now() + timeout_));
  v1::ScoreBatchReply reply;
  grpc::Status status = stub_->ScoreBatch(&context, request, &reply);
  if (!status.ok()) return Annotate(status);
  return reply;
}

absl::StatusOr<v1::SetSummary> ScoringClient::FindSet(
    const std::string& name) const {
  absl::StatusOr<v1::ListSetsReply> sets = ListSets();
  if (!sets.ok()) return sets.status();
  std::vector<std::string> loaded;
  for (const v1::SetSummary& set : sets->sets()) {
    if (set.name() == name) return set;
    loaded.push_back(set.name());
  }
  return SetNotFound(name, loaded);
}

OutcomesClient::OutcomesClient(std::string addr, absl::Duration timeout)
    : addr_(std::move(addr)),
      timeout_(timeout),
      stub_(v1::Outcomes::NewStub(NewPlumbdChannel(addr_))) {}

absl::StatusOr<v1::ReportOutcomeReply> OutcomesClient::ReportOutcome(
    const v1::ReportOutcomeRequest& request) const {
  grpc::ClientContext context;
  context.set_deadline(absl::ToChronoTime(absl::Now() + timeout_));
  v1::ReportOutcomeReply reply;
  grpc::Status status = stub_->ReportOutcome(&context, request, &reply);
  if (!status.ok()) return FromPlumbdStatus(status, addr_);
  return reply;
}

absl::StatusOr<v1::ReportOutcomesReply> OutcomesClient::ReportOutcomes(
    const v1::ReportOutcomesRequest& request) const {
  grpc::ClientContext context;
  context.set_deadline(absl::ToChronoTime(absl::Now() + timeout_));
  v1::ReportOutcomesReply reply;
  grpc::Status status = stub_->ReportOutcomes(&context, request, &reply);
  if (!status.ok()) return FromPlumbdStatus(status, addr_);
  return reply;
}

MonitorClient::MonitorClient(std::string addr, absl::Duration timeout)
    : addr_(std::move(addr)),
      timeout_(timeout),
      stub_(v1::Monitor::NewStub(NewPlumbdChannel(addr_))) {}

absl::StatusOr<v1::SetHealth> MonitorClient::GetSetHealth(
    const std::string& set) const {
  grpc::ClientContext context;
  context.set_deadline(absl::ToChronoTime(absl::Now() + timeout_));
  v1::GetSetHealthRequest request;
  request.set_set(set);
  v1::SetHealth reply;
  grpc::Status status = stub_->GetSetHealth(&context, request, &reply);
  if (!status.ok()) return FromPlumbdStatus(status, addr_);
  return reply;
}

}  // namespace plumbline::daemon
