// File: daemon/metrics/requests.cc
#include "daemon/metrics/requests.h"

#include <chrono>
#include <utility>

#include "absl/status/status.h"
#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/strip.h"
#include "google/protobuf/descriptor.h"

namespace plumbline::daemon {
namespace {

using grpc::experimental::InterceptionHookPoints;

// The one label of every method plumbd does not serve.
constexpr char kUnknownMethod[] = "unknown";

// Request durations in seconds: 100 µs to 10 s.
const prometheus::Histogram::BucketBoundaries& DurationBuckets() {
  static const auto* buckets = new prometheus::Histogram::BucketBoundaries{
      0.0001, 0.00025, 0.0005, 0.001, 0.0025, 0.005, 0.01, 0.025,
      0.05,   0.1,     0.25,   0.5,   1,      2.5,   5,    10};
  return *buckets;
}

class TimingInterceptor final : public grpc::experimental::Interceptor {
 public:
  TimingInterceptor(RequestMetrics* metrics, const char* method)
      : metrics_(metrics),
        method_(method != nullptr && method[0] == '/' ? method + 1
                                                      : (method ? method : "")),
        start_(std::chrono::steady_clock::now()) {}

  void Intercept(
      grpc::experimental::InterceptorBatchMethods* methods) override {
    if (methods->QueryInterceptionHookPoint(
            InterceptionHookPoints::PRE_SEND_STATUS)) {
      const auto elapsed = std::chrono::steady_clock::now() - start_;
      metrics_->Observe(method_, methods->GetSendStatus().error_code(),
                        absl::FromChrono(elapsed));
    }
    methods->Proceed();
  }

 private:
  RequestMetrics* const metrics_;
  const absl::string_view method_;
  const std::chrono::steady_clock::time_point start_;
};

class TimingFactory final
    : public grpc::experimental::ServerInterceptorFactoryInterface {
 public:
  explicit TimingFactory(RequestMetrics* metrics) : metrics_(metrics) {}
  grpc::experimental::Interceptor* CreateServerInterceptor(
      grpc::experimental::ServerRpcInfo* info) override {
    return new TimingInterceptor(metrics_, info->method());
  }

 private:
  RequestMetrics* const metrics_;
};

}  // namespace

std::vector<std::string> RequestMetrics::DefaultServices() {
  return {"plumbline.v1.Scoring", "plumbline.v1.Outcomes",
          "plumbline.v1.Monitor", "plumbline.v1.Registry",
          "grpc.reflection.v1alpha.ServerReflection"};
}

RequestMetrics::RequestMetrics(prometheus::Registry& registry,
                               const std::vector<std::string>& services)
    : requests_(prometheus::BuildCounter()
                    .Name("plumbline_requests_total")
                    .Help("gRPC calls finished, by method and status code.")
                    .Register(registry)),
      durations_(prometheus::BuildHistogram()
                     .Name("plumbline_request_duration_seconds")
                     .Help("Time from accepting a gRPC call to sending its "
                           "status, by method.")
                     .Register(registry)) {
  // gRPC's own health service is served from upb messages, which are not in
  // protobuf's generated pool.
  known_.insert("grpc.health.v1.Health/Check");
  known_.insert("grpc.health.v1.Health/Watch");
  const google::protobuf::DescriptorPool* pool =
      google::protobuf::DescriptorPool::generated_pool();
  for (const std::string& name : services) {
    // Fixed names, looked up once: a miss (a service this binary does not
    // link) only means its calls count as "unknown".
    const google::protobuf::ServiceDescriptor* service =
        pool->FindServiceByName(name);
    if (service == nullptr) continue;
    for (int i = 0; i < service->method_count(); ++i) {
      known_.insert(absl::StrCat(name, "/", service->method(i)->name()));
    }
  }
}

absl::string_view RequestMetrics::MethodLabel(absl::string_view method) const {
  absl::ConsumePrefix(&method, "/");
  auto it = known_.find(method);
  return it == known_.end() ? absl::string_view(kUnknownMethod)
                            : absl::string_view(*it);
}

void RequestMetrics::Observe(absl::string_view method, grpc::StatusCode code,
                             absl::Duration elapsed) {
  method = MethodLabel(method);
  const int c = static_cast<int>(code);
  const int index = c >= 0 && c < kCodes ? c : static_cast<int>(grpc::UNKNOWN);
  prometheus::Counter* counter = nullptr;
  prometheus::Histogram* histogram = nullptr;
  {
    absl::MutexLock lock(&mu_);
    auto [it, inserted] = methods_.try_emplace(method);
    Method& m = it->second;
    if (inserted) {
      m.duration =
          &durations_.Add({{"method", std::string(method)}}, DurationBuckets());
    }
    if (m.calls[index] == nullptr) {
      m.calls[index] = &requests_.Add(
          {{"method", std::string(method)},
           {"code",
            absl::StatusCodeToString(static_cast<absl::StatusCode>(index))}});
    }
    counter = m.calls[index];
    histogram = m.duration;
  }
  counter->Increment();
  histogram->Observe(absl::ToDoubleSeconds(elapsed));
}

std::vector<
    std::unique_ptr<grpc::experimental::ServerInterceptorFactoryInterface>>
MakeInterceptorCreators(RequestMetrics* metrics) {
  std::vector<
      std::unique_ptr<grpc::experimental::ServerInterceptorFactoryInterface>>
      creators;
  creators.push_back(std::make_unique<TimingFactory>(metrics));
  return creators;
}

}  // namespace plumbline::daemon
