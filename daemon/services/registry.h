// File: daemon/services/registry.h
//
// The gRPC service plumbline.v1.Registry: the life of set versions over the
// wire (list, load a candidate, activate, approve, shadow, roll back, refit
// now, audit), answered by the lifecycle (daemon/lifecycle.h) and the refit
// worker (daemon/refit_worker.h). Every call needs the admin role
// (daemon/access_control.h). ShowVersion, DiffVersions and GetDossier
// answer with daemon/review's messages; GetRecord with what the ledger holds
// of one record. Actors: the request's actor, or
// "unnamed caller" when it is empty.
//
// Thread-safe: the lifecycle and the worker are; no state of its own.
#ifndef PLUMBLINE_DAEMON_SERVICES_REGISTRY_H_
#define PLUMBLINE_DAEMON_SERVICES_REGISTRY_H_

#include "daemon/ledger/ledger.h"
#include "daemon/policy/drift_policy.h"
#include "daemon/refit/worker.h"
#include "daemon/registry/lifecycle.h"
#include "daemon/review/dossier_store.h"
#include "daemon/review/version_view.h"
#include "daemon/scoring/shadow_tracker.h"
#include "plumbline/v1/registry.grpc.pb.h"

namespace plumbline::daemon {

class RegistryService final : public v1::Registry::Service {
 public:
  // All must outlive the service. `shadows` (may be null) gives
  // `ListVersions` each shadow's report; without `dossiers` (and the
  // `policy` they are drawn with) GetDossier answers NOT_FOUND; without
  // `ledger` GetRecord answers UNIMPLEMENTED.
  RegistryService(Lifecycle* lifecycle, RefitWorker* refits,
                  const ShadowTracker* shadows = nullptr,
                  const DossierStore* dossiers = nullptr,
                  const DriftPolicy* policy = nullptr,
                  Ledger* ledger = nullptr);

  grpc::Status ListVersions(grpc::ServerContext* context,
                            const v1::ListVersionsRequest* request,
                            v1::ListVersionsReply* reply) override;
  grpc::Status LoadCandidate(grpc::ServerContext* context,
                             const v1::LoadCandidateRequest* request,
                             v1::VersionInfo* reply) override;
  grpc::Status Activate(grpc::ServerContext* context,
                        const v1::VersionRequest* request,
                        v1::VersionInfo* reply) override;
  grpc::Status Approve(grpc::ServerContext* context,
                       const v1::VersionRequest* request,
                       v1::VersionInfo* reply) override;
  grpc::Status Shadow(grpc::ServerContext* context,
                      const v1::VersionRequest* request,
                      v1::VersionInfo* reply) override;
  grpc::Status Rollback(grpc::ServerContext* context,
                        const v1::RollbackRequest* request,
                        v1::VersionInfo* reply) override;
  grpc::Status Refit(grpc::ServerContext* context,
                     const v1::RefitRequest* request,
                     v1::RefitReply* reply) override;
  grpc::Status Audit(grpc::ServerContext* context,
                     const v1::AuditRequest* request,
                     v1::AuditReply* reply) override;
  grpc::Status ShowVersion(grpc::ServerContext* context,
                           const v1::ShowVersionRequest* request,
                           v1::VersionDetail* reply) override;
  grpc::Status DiffVersions(grpc::ServerContext* context,
                            const v1::DiffVersionsRequest* request,
                            v1::VersionDiff* reply) override;
  grpc::Status GetDossier(grpc::ServerContext* context,
                          const v1::GetDossierRequest* request,
                          v1::DossierReply* reply) override;
  grpc::Status GetRecord(grpc::ServerContext* context,
                         const v1::GetRecordRequest* request,
                         v1::RecordDetail* reply) override;

  // Asked before a refit request queues a job: a non-OK status refuses the
  // request with it (a fleet's replica that does not lead its refits).
  // Set before serving.
  void set_refit_gate(std::function<absl::Status()> gate) {
    refit_gate_ = std::move(gate);
  }

 private:
  // Activate, Approve and Shadow: admission, checks, then `change`.
  grpc::Status ChangeVersion(
      grpc::ServerContext* context, const v1::VersionRequest& request,
      absl::StatusOr<VersionRecord> (Lifecycle::*change)(const StateChange&),
      v1::VersionInfo* reply);
  // Fills info.shadow from the tracker when the version has been scored as
  // a shadow.
  void AddShadowReport(v1::VersionInfo& info) const;

  // After a version of `set` changed state: the dossier of the job that
  // proposed `version`, if any, is drawn again with the trail as it stands
  // (so the file a validator opens shows the approval).
  void RefreshDossierOf(const std::string& set, const std::string& version);

  Lifecycle* const lifecycle_;
  RefitWorker* const refits_;
  const ShadowTracker* const shadows_;
  const DossierStore* const dossiers_;
  const DriftPolicy* const policy_;
  std::function<absl::Status()> refit_gate_;
  Ledger* const ledger_;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SERVICES_REGISTRY_H_
