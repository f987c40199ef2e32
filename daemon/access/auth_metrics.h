// File: daemon/access/auth_metrics.h
//
// The counter of refused authentication and authorization attempts, shared
// by the gRPC access control (daemon/access_control) and the metrics
// endpoint's basic auth (daemon/metrics_exporter):
//
//   plumbline_auth_failures_total{reason}   counter
//   plumbline_auth_secret_hashes_total      counter: PBKDF2 runs made to
//                                           check presented tokens (the
//                                           CPU that access control costs)
//
// reason is one of AuthFailureName's values. Every reason's series exists
// from the start (at 0), so alerts on its rate see the first failure.
//
//   AuthFailureCounters failures(exporter->shared_registry());
//   failures.Count(AuthFailure::kUnknownToken);
//
// Thread-safe (prometheus-cpp counters are).
#ifndef PLUMBLINE_DAEMON_ACCESS_AUTH_METRICS_H_
#define PLUMBLINE_DAEMON_ACCESS_AUTH_METRICS_H_

#include <array>
#include <memory>

#include "absl/strings/string_view.h"
#include "prometheus/counter.h"
#include "prometheus/registry.h"

namespace plumbline::daemon {

enum class AuthFailure {
  kMissingCredentials,    // no token and no mapped client certificate
  kMalformedCredentials,  // an authorization value that is not "Bearer X"
  kUnknownToken,          // a token no configured hash matches
  kUnknownSubject,        // a client certificate mapped to no role
  kWrongRole,             // a known caller without the role the RPC needs
  kMetricsPassword,       // a wrong user or password on the metrics endpoint
  kThrottled,             // a token id with too many wrong secrets of late:
                          // the secret was not checked (RESOURCE_EXHAUSTED)
};
inline constexpr int kAuthFailureKinds = 7;

// "missing_credentials", "malformed_credentials", "unknown_token",
// "unknown_subject", "wrong_role", "metrics_password", "throttled".
absl::string_view AuthFailureName(AuthFailure failure);

class AuthFailureCounters {
 public:
  // Registers (or finds) the family in `registry`; a null registry counts
  // nothing (unit tests).
  explicit AuthFailureCounters(std::shared_ptr<prometheus::Registry> registry);

  void Count(AuthFailure failure) const;
  // One PBKDF2 run to check a presented secret.
  void CountHash() const;

 private:
  // Keeps the counters alive as long as this object.
  std::shared_ptr<prometheus::Registry> registry_;
  std::array<prometheus::Counter*, kAuthFailureKinds> counters_{};
  prometheus::Counter* hashes_ = nullptr;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_ACCESS_AUTH_METRICS_H_
