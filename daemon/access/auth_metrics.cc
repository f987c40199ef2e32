// File: daemon/access/auth_metrics.cc
#include "daemon/access/auth_metrics.h"

#include <string>
#include <utility>

#include "prometheus/family.h"

namespace plumbline::daemon {

absl::string_view AuthFailureName(AuthFailure failure) {
  switch (failure) {
    case AuthFailure::kMissingCredentials:
      return "missing_credentials";
    case AuthFailure::kMalformedCredentials:
      return "malformed_credentials";
    case AuthFailure::kUnknownToken:
      return "unknown_token";
    case AuthFailure::kUnknownSubject:
      return "unknown_subject";
    case AuthFailure::kWrongRole:
      return "wrong_role";
    case AuthFailure::kMetricsPassword:
      return "metrics_password";
    case AuthFailure::kThrottled:
      return "throttled";
  }
  return "unknown";
}

AuthFailureCounters::AuthFailureCounters(
    std::shared_ptr<prometheus::Registry> registry)
    : registry_(std::move(registry)) {
  if (registry_ == nullptr) return;
  // The registry merges a second registration of the same family (the
  // exporter and the access control both build it).
  auto& family = prometheus::BuildCounter()
                     .Name("plumbline_auth_failures_total")
                     .Help(
                         "Refused authentication or authorization attempts "
                         "on the gRPC port and the metrics endpoint, by "
                         "reason.")
                     .Register(*registry_);
  for (int i = 0; i < kAuthFailureKinds; ++i) {
    counters_[static_cast<size_t>(i)] = &family.Add(
        {{"reason",
          std::string(AuthFailureName(static_cast<AuthFailure>(i)))}});
  }
  hashes_ = &prometheus::BuildCounter()
                 .Name("plumbline_auth_secret_hashes_total")
                 .Help(
                     "PBKDF2 runs made to check presented tokens and "
                     "passwords (secrets already checked are cached; wrong "
                     "ones are throttled per token).")
                 .Register(*registry_)
                 .Add({});
}

void AuthFailureCounters::CountHash() const {
  if (hashes_ != nullptr) hashes_->Increment();
}

void AuthFailureCounters::Count(AuthFailure failure) const {
  prometheus::Counter* counter = counters_[static_cast<size_t>(failure)];
  if (counter != nullptr) counter->Increment();
}

}  // namespace plumbline::daemon
