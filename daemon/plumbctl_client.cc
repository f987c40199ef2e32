// File: daemon/plumbctl_client.cc
#include "daemon/plumbctl_client.h"

#include <utility>
#include <vector>

#include <grpcpp/client_context.h>
#include <grpcpp/create_channel.h>
#include <grpcpp/security/credentials.h>
#include <grpcpp/support/channel_arguments.h>

#include "absl/strings/str_cat.h"
#include "daemon/grpc_status.h"
#include "daemon/scoring_core.h"

namespace plumbline::daemon {
namespace {

// Replies of big batches can exceed gRPC's 4 MiB default; the daemon caps
// what it accepts itself.
constexpr int kMaxReplyBytes = 256 << 20;

std::shared_ptr<grpc::Channel> NewChannel(const std::string& addr) {
  grpc::ChannelArguments args;
  args.SetMaxReceiveMessageSize(kMaxReplyBytes);
  args.SetMaxSendMessageSize(kMaxReplyBytes);
  return grpc::CreateCustomChannel(addr, grpc::InsecureChannelCredentials(),
                                   args);
}

// Adds the address to errors that are about reaching the daemon.
absl::Status AnnotateWithAddress(const grpc::Status& status,
                                 const std::string& addr) {
  absl::Status out = FromGrpcStatus(status);
  if (out.code() == absl::StatusCode::kUnavailable ||
      out.code() == absl::StatusCode::kDeadlineExceeded) {
    return absl::Status(out.code(), absl::StrCat("plumbd at ", addr, ": ",
                                                 out.message()));
  }
  return out;
}

}  // namespace

ScoringClient::ScoringClient(std::string addr, absl::Duration timeout)
    : addr_(std::move(addr)),
      timeout_(timeout),
      stub_(v1::Scoring::NewStub(NewChannel(addr_))) {}

absl::Status ScoringClient::Annotate(const grpc::Status& status) const {
  return AnnotateWithAddress(status, addr_);
}

absl::StatusOr<v1::ListSetsReply> ScoringClient::ListSets() const {
  grpc::ClientContext context;
  context.set_deadline(absl::ToChronoTime(absl::Now() + timeout_));
  v1::ListSetsReply reply;
  grpc::Status status = stub_->ListSets(&context, v1::ListSetsRequest(), &reply);
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
      stub_(v1::Outcomes::NewStub(NewChannel(addr_))) {}

absl::StatusOr<v1::ReportOutcomeReply> OutcomesClient::ReportOutcome(
    const v1::ReportOutcomeRequest& request) const {
  grpc::ClientContext context;
  context.set_deadline(absl::ToChronoTime(absl::Now() + timeout_));
  v1::ReportOutcomeReply reply;
  grpc::Status status = stub_->ReportOutcome(&context, request, &reply);
  if (!status.ok()) return AnnotateWithAddress(status, addr_);
  return reply;
}

absl::StatusOr<v1::ReportOutcomesReply> OutcomesClient::ReportOutcomes(
    const v1::ReportOutcomesRequest& request) const {
  grpc::ClientContext context;
  context.set_deadline(absl::ToChronoTime(absl::Now() + timeout_));
  v1::ReportOutcomesReply reply;
  grpc::Status status = stub_->ReportOutcomes(&context, request, &reply);
  if (!status.ok()) return AnnotateWithAddress(status, addr_);
  return reply;
}

MonitorClient::MonitorClient(std::string addr, absl::Duration timeout)
    : addr_(std::move(addr)),
      timeout_(timeout),
      stub_(v1::Monitor::NewStub(NewChannel(addr_))) {}

absl::StatusOr<v1::SetHealth> MonitorClient::GetSetHealth(
    const std::string& set) const {
  grpc::ClientContext context;
  context.set_deadline(absl::ToChronoTime(absl::Now() + timeout_));
  v1::GetSetHealthRequest request;
  request.set_set(set);
  v1::SetHealth reply;
  grpc::Status status = stub_->GetSetHealth(&context, request, &reply);
  if (!status.ok()) return AnnotateWithAddress(status, addr_);
  return reply;
}

}  // namespace plumbline::daemon
