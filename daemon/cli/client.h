// File: daemon/cli/client.h
//
// plumbctl's connection to a running plumbd: the Scoring, Outcomes and
// Monitor stubs with a deadline on every call, and errors turned into
// absl::Status whose message says which daemon could not be reached.
//
//   ScoringClient client("127.0.0.1:7390", absl::Seconds(10));
//   absl::StatusOr<v1::ListSetsReply> sets = client.ListSets();
//   OutcomesClient outcomes("127.0.0.1:7390", absl::Seconds(10));
//   MonitorClient monitor("127.0.0.1:7390", absl::Seconds(10));
//
// How plumbctl reaches plumbd (TLS files, bearer token) is set once,
// process-wide, by plumbctl's main from --tls_ca, --tls_cert, --tls_key and
// --token / PLUMBLINE_TOKEN, before any client is made; every channel to
// plumbd is made by NewPlumbdChannel, which applies it (the token goes out
// as `authorization: Bearer <token>` metadata on every call).
//
//   if (absl::Status s = SetClientSecurity(security); !s.ok()) ...
//   auto stub = v1::Registry::NewStub(NewPlumbdChannel(addr));
//
// Thread-safe: yes (the gRPC stub is); each call has its own context.
// SetClientSecurity must not run while clients are being made.
#ifndef PLUMBLINE_DAEMON_CLI_CLIENT_H_
#define PLUMBLINE_DAEMON_CLI_CLIENT_H_

#include <memory>
#include <string>

#include "absl/status/statusor.h"
#include "absl/time/time.h"
#include "daemon/security/transport_security.h"
#include "plumbline/v1/monitor.grpc.pb.h"
#include "plumbline/v1/outcomes.grpc.pb.h"
#include "plumbline/v1/scoring.grpc.pb.h"

namespace plumbline::daemon {

struct ClientSecurity {
  // TLS to plumbd; off (plain text) unless ca_file or cert_file is set.
  ClientTlsFiles tls;
  // Bearer token sent on every call; empty sends none.
  std::string token;
};

// Makes `security` the process-wide way to reach plumbd. INVALID_ARGUMENT
// naming the flag if a TLS file is wrong or the token holds characters
// that cannot travel as gRPC metadata.
absl::Status SetClientSecurity(const ClientSecurity& security);

// A channel to plumbd at `addr` with the process-wide security, the
// token interceptor and plumbctl's message-size limits.
std::shared_ptr<grpc::Channel> NewPlumbdChannel(const std::string& addr);

// A failed call's status for plumbctl's output: the address added to
// errors about reaching plumbd, and a hint about --tls_ca or --token where
// plumbctl's own flags may be the cause.
absl::Status FromPlumbdStatus(const grpc::Status& status,
                              const std::string& addr);

class ScoringClient {
 public:
  ScoringClient(std::string addr, absl::Duration timeout);

  absl::StatusOr<v1::ListSetsReply> ListSets() const;
  absl::StatusOr<v1::ScoreReply> Score(const v1::ScoreRequest& request) const;
  absl::StatusOr<v1::ScoreBatchReply> ScoreBatch(
      const v1::ScoreBatchRequest& request) const;

  // The summary of set `name` from ListSets; NOT_FOUND naming the loaded
  // sets if the daemon does not have it.
  absl::StatusOr<v1::SetSummary> FindSet(const std::string& name) const;

 private:
  // Adds the address to errors that are about reaching the daemon.
  absl::Status Annotate(const grpc::Status& status) const;

  // Constant after construction.
  const std::string addr_;
  const absl::Duration timeout_;
  std::unique_ptr<v1::Scoring::Stub> stub_;
};

class OutcomesClient {
 public:
  OutcomesClient(std::string addr, absl::Duration timeout);

  absl::StatusOr<v1::ReportOutcomeReply> ReportOutcome(
      const v1::ReportOutcomeRequest& request) const;
  absl::StatusOr<v1::ReportOutcomesReply> ReportOutcomes(
      const v1::ReportOutcomesRequest& request) const;

 private:
  // Constant after construction.
  const std::string addr_;
  const absl::Duration timeout_;
  std::unique_ptr<v1::Outcomes::Stub> stub_;
};

class MonitorClient {
 public:
  MonitorClient(std::string addr, absl::Duration timeout);

  absl::StatusOr<v1::SetHealth> GetSetHealth(const std::string& set) const;

 private:
  // Constant after construction.
  const std::string addr_;
  const absl::Duration timeout_;
  std::unique_ptr<v1::Monitor::Stub> stub_;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CLI_CLIENT_H_
