// File: daemon/metrics/requests.h
//
// Request metrics of plumbd's gRPC server, recorded by a server interceptor
// (grpc::experimental::ServerInterceptorFactoryInterface) that DaemonServer
// registers, so every service (Scoring, Outcomes, Monitor, health checking)
// is counted the same way without code in the handlers:
//
//   plumbline_requests_total{method,code}            counter
//   plumbline_request_duration_seconds{method}       histogram
//
// method is the full gRPC method without the leading slash
// ("plumbline.v1.Scoring/Score"); code the status code's name ("OK",
// "NOT_FOUND"). The duration runs from the moment the server accepted the
// call to the moment it sends the status.
//
// Only the methods of the services plumbd serves get their own series (the
// RPCs of the services named at construction, looked up once in protobuf's
// generated descriptor pool, plus gRPC health checking). Any other name a
// caller sends (gRPC answers UNIMPLEMENTED) is counted under
// method="unknown": a caller cannot create series, or any other state, by
// inventing names, and it is never looked up anywhere with the name.
//
//   RequestMetrics metrics(exporter->registry());
//   builder.experimental().SetInterceptorCreators(
//       MakeInterceptorCreators(&metrics));
//
// Thread-safe. The RequestMetrics must outlive the server.
#ifndef PLUMBLINE_DAEMON_METRICS_REQUESTS_H_
#define PLUMBLINE_DAEMON_METRICS_REQUESTS_H_

#include <grpcpp/support/server_interceptor.h>
#include <grpcpp/support/status.h>

#include <array>
#include <memory>
#include <string>
#include <vector>

#include "absl/base/thread_annotations.h"
#include "absl/container/flat_hash_map.h"
#include "absl/container/flat_hash_set.h"
#include "absl/strings/string_view.h"
#include "absl/synchronization/mutex.h"
#include "absl/time/time.h"
#include "prometheus/counter.h"
#include "prometheus/family.h"
#include "prometheus/histogram.h"
#include "prometheus/registry.h"

namespace plumbline::daemon {

class RequestMetrics {
 public:
  // The services whose methods get their own series by default: plumbd's
  // four and gRPC's reflection service.
  static std::vector<std::string> DefaultServices();

  // Adds the two families to `registry`, which must outlive this object.
  // `services` are full service names ("plumbline.v1.Scoring"); gRPC health
  // checking (grpc.health.v1.Health) is always known.
  explicit RequestMetrics(
      prometheus::Registry& registry,
      const std::vector<std::string>& services = DefaultServices());

  // The label a call to `method` (with or without the leading slash) is
  // counted under: the method itself when known, otherwise "unknown".
  absl::string_view MethodLabel(absl::string_view method) const;

  // Records one finished call.
  void Observe(absl::string_view method, grpc::StatusCode code,
               absl::Duration elapsed);

 private:
  static constexpr int kCodes = 17;  // OK .. UNAUTHENTICATED
  struct Method {
    prometheus::Histogram* duration = nullptr;
    std::array<prometheus::Counter*, kCodes> calls{};
  };

  // Constant after construction.
  prometheus::Family<prometheus::Counter>& requests_;
  prometheus::Family<prometheus::Histogram>& durations_;
  absl::flat_hash_set<std::string> known_;  // "package.Service/Method"

  absl::Mutex mu_;
  // Keyed by MethodLabel: the known methods and "unknown", nothing else.
  absl::flat_hash_map<std::string, Method> methods_ ABSL_GUARDED_BY(mu_);
};

// The interceptor factories for grpc::ServerBuilder::experimental()
// .SetInterceptorCreators. `metrics` must outlive the server.
std::vector<
    std::unique_ptr<grpc::experimental::ServerInterceptorFactoryInterface>>
MakeInterceptorCreators(RequestMetrics* metrics);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_METRICS_REQUESTS_H_
