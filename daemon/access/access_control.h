// File: daemon/access/access_control.h
//
// Who may call which RPC of plumbd. Two roles:
//   score  Scoring (Score, ScoreBatch, ListSets), Outcomes (ReportOutcome,
//          ReportOutcomes) and Monitor.GetSetHealth (read-only figures a
//          scoring service may watch)
//   admin  everything score may, and every RPC of plumbline.v1.Registry
// gRPC health checking and reflection do not pass through here: probes
// stay open.
//
// A caller proves its role with a bearer token (`authorization: Bearer
// <token>` metadata, checked against salted hashes from the config; see
// daemon/token_hash.h) and/or, under mutual TLS, with a client certificate
// whose subject or common name the config maps to a role; the higher role
// wins. A token that is sent must be valid, whatever the certificate.
// Answers: no credential, an unknown token or an unmapped certificate →
// UNAUTHENTICATED; a known caller without the role → PERMISSION_DENIED.
// Wrong secrets for a known (public) token id are throttled per id (see
// SecretCheck in daemon/security/token_hash.h): after a burst of wrong
// secrets, a secret plumbd has not checked before is refused unchecked with
// RESOURCE_EXHAUSTED ("too many wrong secrets ... retry in N s") instead of
// costing a PBKDF2 run; a token already accepted keeps working.
// Each refusal is counted (plumbline_auth_failures_total{reason}) and
// logged (event=auth_refused) with the reason, the caller's address and the
// token's public id, never its secret. With no tokens and no subjects in
// the config, access control is off and every call is admitted.
//
// plumbd builds one AccessControl from its config at startup and installs
// it process-wide; every RPC handler then starts with one call:
//
//   grpc::Status ScoringService::Score(grpc::ServerContext* context, ...) {
//     if (grpc::Status s = Admit(context, Role::kScore); !s.ok()) return s;
//     ...
//
// Admit also refuses a call whose deadline has already passed
// (DEADLINE_EXCEEDED), so an expired request is never scored or recorded.
//
// Thread-safe: AccessControl is immutable after Create apart from its
// internally synchronized caches; Admit may run on any number of threads.
#ifndef PLUMBLINE_DAEMON_ACCESS_ACCESS_CONTROL_H_
#define PLUMBLINE_DAEMON_ACCESS_ACCESS_CONTROL_H_

#include <grpcpp/server_context.h>
#include <grpcpp/support/status.h>

#include <memory>
#include <string>
#include <vector>

#include "absl/container/flat_hash_map.h"
#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "absl/time/time.h"
#include "daemon/access/auth_metrics.h"
#include "daemon/security/token_hash.h"
#include "plumbline/v1/security.pb.h"
#include "prometheus/registry.h"

namespace plumbline::daemon {

enum class Role { kScore, kAdmin };

// "score" | "admin".
absl::string_view RoleName(Role role);

// What a caller presented, taken from its call (CredentialsOf) or built by
// tests.
struct PresentedCredentials {
  // Every "authorization" metadata value (normally none or one).
  std::vector<std::string> authorization;
  // Of the client certificate verified by mutual TLS; empty without one.
  std::vector<std::string> subjects;  // RFC 2253 form
  std::vector<std::string> common_names;
  // The caller's address, for logs ("ipv4:10.0.0.7:51234").
  std::string peer;
};

// What `context`'s call presented.
PresentedCredentials CredentialsOf(const grpc::ServerContextBase& context);

class AccessControl {
 public:
  // Checks and compiles `config` (security.access). INVALID_ARGUMENT naming
  // the field (security.access.tokens[1].hash, ...). Refusals are counted
  // in `registry` (may be null: not counted).
  static absl::StatusOr<std::unique_ptr<AccessControl>> Create(
      const v1::AccessConfig& config,
      std::shared_ptr<prometheus::Registry> registry);

  AccessControl(const AccessControl&) = delete;
  AccessControl& operator=(const AccessControl&) = delete;

  // False when the config has no tokens and no subjects: Check admits all.
  bool enabled() const { return !tokens_.empty() || !subjects_.empty(); }
  size_t token_count() const { return tokens_.size(); }
  size_t subject_count() const { return subjects_.size(); }

  // OK if `presented` holds a credential with `role` (or admin);
  // UNAUTHENTICATED, PERMISSION_DENIED or (throttled) RESOURCE_EXHAUSTED
  // otherwise, counted and logged.
  absl::Status Check(const PresentedCredentials& presented, Role role) const;

 private:
  struct TokenEntry {
    std::string name;
    Role role = Role::kScore;
    std::unique_ptr<SecretCheck> check;
  };
  struct SubjectEntry {
    std::string subject;      // empty when matched by common name
    std::string common_name;  // empty when matched by subject
    Role role = Role::kScore;
  };

  explicit AccessControl(std::shared_ptr<prometheus::Registry> registry)
      : failures_(std::move(registry)) {}

  // Counts and logs the refusal; its status. `retry_after`: kThrottled only.
  absl::Status Refuse(AuthFailure reason, const PresentedCredentials& presented,
                      Role role, absl::string_view detail_key,
                      absl::string_view detail,
                      absl::Duration retry_after = absl::ZeroDuration()) const;

  // Constant after Create.
  absl::flat_hash_map<std::string, TokenEntry> tokens_;  // by public id
  std::vector<SubjectEntry> subjects_;
  AuthFailureCounters failures_;
};

// Makes `access` the process-wide access control used by Admit (null: off).
// plumbd installs it once, before its server starts; tests may replace it
// between servers.
void InstallAccessControl(std::shared_ptr<const AccessControl> access);

// AccessControl::Create, a startup log line saying whether access control is
// on (event=access_control_on tokens=N subjects=M) or off
// (event=access_control_off, a warning), and InstallAccessControl.
absl::Status InstallAccessControl(
    const v1::AccessConfig& config,
    std::shared_ptr<prometheus::Registry> registry);

// The check at the top of every RPC handler: DEADLINE_EXCEEDED if the call's
// deadline has passed, else the installed access control's answer (OK when
// none is installed or it is off). A null `context` is a direct in-process
// call of the handler (unit tests), not a gRPC call: admitted.
grpc::Status Admit(const grpc::ServerContextBase* context, Role role);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_ACCESS_ACCESS_CONTROL_H_
