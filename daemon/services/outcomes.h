// File: daemon/services/outcomes.h
//
// The gRPC service plumbline.v1.Outcomes: callers report, by record id, what
// happened to records scored earlier. Each outcome is checked here (record
// id, label 0/1, a valid observed_at), then the ledger joins it to its
// score(s) and commits it (the model-health monitor hears of a new outcome
// from the ledger's commit, daemon/health/committed_feed.h). Per-outcome
// refusals (see outcomes.proto):
//   INVALID_ARGUMENT     empty record id, label not 0/1, bad observed_at
//   NOT_FOUND            no score with that record id in the ledger
//   FAILED_PRECONDITION  a different label was recorded before
// ReportOutcome returns that code as the RPC status; ReportOutcomes puts it
// in the outcome's result and fails as a whole only for an empty or
// oversized batch or when the ledger refuses the write (RESOURCE_EXHAUSTED,
// a failed commit). Created and registered by DaemonServer.
//
// Thread-safe: handlers run on many gRPC threads; no mutable state.
#ifndef PLUMBLINE_DAEMON_SERVICES_OUTCOMES_H_
#define PLUMBLINE_DAEMON_SERVICES_OUTCOMES_H_

#include <cstdint>

#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "daemon/ledger/ledger.h"
#include "plumbline/v1/outcomes.grpc.pb.h"

namespace plumbline::daemon {

// Checks `outcome` (called `path` in messages, "outcome" or
// "outcomes[3]") and converts it for the ledger; INVALID_ARGUMENT naming the
// field and the record for an empty id, a label other than 0/1 or an
// observed_at a Timestamp cannot hold.
absl::StatusOr<OutcomeEntry> CheckOutcome(const v1::Outcome& outcome,
                                          absl::string_view path);

class OutcomesService final : public v1::Outcomes::Service {
 public:
  // `ledger` must outlive the service. `max_batch_records` caps
  // ReportOutcomes.
  OutcomesService(Ledger* ledger, uint32_t max_batch_records);

  grpc::Status ReportOutcome(grpc::ServerContext* context,
                             const v1::ReportOutcomeRequest* request,
                             v1::ReportOutcomeReply* reply) override;
  grpc::Status ReportOutcomes(grpc::ServerContext* context,
                              const v1::ReportOutcomesRequest* request,
                              v1::ReportOutcomesReply* reply) override;

 private:
  // Constant after construction.
  Ledger* const ledger_;
  const uint32_t max_batch_records_;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SERVICES_OUTCOMES_H_
