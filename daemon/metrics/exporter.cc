// File: daemon/metrics/exporter.cc
#include "daemon/metrics/exporter.h"

#include <openssl/crypto.h>

#include <exception>
#include <utility>

#include "absl/status/status.h"
#include "absl/strings/str_cat.h"
#include "daemon/util/address.h"
#include "daemon/util/event_log.h"

namespace plumbline::daemon {

absl::StatusOr<std::unique_ptr<MetricsExporter>> MetricsExporter::Start(
    const std::string& listen, const v1::MetricsAuthConfig& auth) {
  std::unique_ptr<MetricsExporter> exporter(new MetricsExporter());
  exporter->registry_ = std::make_shared<prometheus::Registry>();
  if (auth.username().empty() != auth.password_hash().empty()) {
    return absl::InvalidArgumentError(
        "security.metrics_auth: set both username and password_hash (or "
        "neither)");
  }
  if (!auth.username().empty()) {
    absl::StatusOr<std::unique_ptr<SecretCheck>> check =
        SecretCheck::Create(auth.password_hash());
    if (!check.ok()) {
      return absl::InvalidArgumentError(absl::StrCat(
          "security.metrics_auth.password_hash: ", check.status().message()));
    }
    exporter->auth_user_ = auth.username();
    exporter->auth_password_ = *std::move(check);
    exporter->auth_failures_ =
        std::make_unique<AuthFailureCounters>(exporter->registry_);
  }
  try {
    // prometheus-cpp reports a failed bind by throwing (civetweb's
    // CivetException); nothing else in plumbd throws.
    exporter->exposer_ = std::make_unique<prometheus::Exposer>(listen, 2);
  } catch (const std::exception& e) {
    return absl::UnavailableError(absl::StrCat(
        "cannot serve metrics on ", listen,
        " (address in use, or not a HOST:PORT this machine has?): ", e.what()));
  }
  const std::vector<int> ports = exporter->exposer_->GetListeningPorts();
  if (ports.empty() || ports.front() == 0) {
    return absl::UnavailableError(
        absl::StrCat("cannot serve metrics on ", listen, ": no port bound"));
  }
  exporter->bound_address_ = BoundAddress(listen, ports.front());
  // Before the collectable: /metrics answers 404 until then, never without
  // the password.
  if (exporter->auth_password_ != nullptr) {
    MetricsExporter* self = exporter.get();
    exporter->exposer_->RegisterAuth(
        [self](const std::string& user, const std::string& password) {
          return self->Authorize(user, password);
        },
        "plumbd metrics");
  }
  exporter->exposer_->RegisterCollectable(exporter->registry_);
  return exporter;
}

bool MetricsExporter::Authorize(const std::string& user,
                                const std::string& password) const {
  // Both checks always run, so the answer's timing does not tell whether
  // the user name was right.
  const bool user_ok =
      user.size() == auth_user_.size() &&
      CRYPTO_memcmp(user.data(), auth_user_.data(), user.size()) == 0;
  const bool password_ok = auth_password_->Matches(password);
  if (user_ok && password_ok) return true;
  auth_failures_->Count(AuthFailure::kMetricsPassword);
  LogEvent(LogLevel::kWarning, "auth_refused",
           {{"reason", AuthFailureName(AuthFailure::kMetricsPassword)},
            {"endpoint", "metrics"},
            {"user_matches", user_ok ? "true" : "false"}});
  return false;
}

MetricsExporter::~MetricsExporter() { exposer_.reset(); }

void MetricsExporter::Add(
    std::shared_ptr<prometheus::Collectable> collectable) {
  exposer_->RegisterCollectable(collectable);
  absl::MutexLock lock(&mu_);
  owned_.push_back(std::move(collectable));
}

}  // namespace plumbline::daemon
