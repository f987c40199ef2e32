// File: daemon/server/request_errors.cc
#include "daemon/server/request_errors.h"

#include <string>

#include "absl/strings/str_cat.h"
#include "absl/strings/string_view.h"
#include "daemon/util/caller_text.h"

namespace plumbline::daemon {
namespace {

using grpc::experimental::InterceptionHookPoints;

class ParseErrorInterceptor final : public grpc::experimental::Interceptor {
 public:
  explicit ParseErrorInterceptor(const char* method)
      : method_(method != nullptr ? method : "") {}

  void Intercept(
      grpc::experimental::InterceptorBatchMethods* methods) override {
    if (methods->QueryInterceptionHookPoint(
            InterceptionHookPoints::POST_RECV_MESSAGE) &&
        methods->GetRecvMessage() == nullptr) {
      unparsed_ = true;
    }
    if (unparsed_ &&
        methods->QueryInterceptionHookPoint(
            InterceptionHookPoints::PRE_SEND_STATUS) &&
        methods->GetSendStatus().error_code() == grpc::StatusCode::INTERNAL) {
      absl::string_view method = method_;
      if (!method.empty() && method.front() == '/') method.remove_prefix(1);
      methods->ModifySendStatus(grpc::Status(
          grpc::StatusCode::INVALID_ARGUMENT,
          absl::StrCat(CallerText(method),
                       ": the request is not a valid protobuf message for "
                       "this RPC (a string that is not valid UTF-8, values "
                       "nested deeper than protobuf's limit of 100 levels, "
                       "or malformed bytes); nothing was done")));
    }
    methods->Proceed();
  }

 private:
  const std::string method_;
  bool unparsed_ = false;
};

class ParseErrorFactory final
    : public grpc::experimental::ServerInterceptorFactoryInterface {
 public:
  grpc::experimental::Interceptor* CreateServerInterceptor(
      grpc::experimental::ServerRpcInfo* info) override {
    return new ParseErrorInterceptor(info->method());
  }
};

}  // namespace

std::unique_ptr<grpc::experimental::ServerInterceptorFactoryInterface>
MakeParseErrorInterceptorFactory() {
  return std::make_unique<ParseErrorFactory>();
}

}  // namespace plumbline::daemon
