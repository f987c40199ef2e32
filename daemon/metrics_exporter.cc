// File: daemon/metrics_exporter.cc
#include "daemon/metrics_exporter.h"

#include <exception>
#include <utility>

#include "absl/status/status.h"
#include "absl/strings/str_cat.h"
#include "daemon/daemon_server.h"

namespace plumbline::daemon {

absl::StatusOr<std::unique_ptr<MetricsExporter>> MetricsExporter::Start(
    const std::string& listen) {
  std::unique_ptr<MetricsExporter> exporter(new MetricsExporter());
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
  exporter->registry_ = std::make_shared<prometheus::Registry>();
  exporter->exposer_->RegisterCollectable(exporter->registry_);
  return exporter;
}

MetricsExporter::~MetricsExporter() { exposer_.reset(); }

void MetricsExporter::Add(std::shared_ptr<prometheus::Collectable> collectable) {
  exposer_->RegisterCollectable(collectable);
  absl::MutexLock lock(&mu_);
  owned_.push_back(std::move(collectable));
}

}  // namespace plumbline::daemon
