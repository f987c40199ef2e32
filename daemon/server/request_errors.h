// File: daemon/server/request_errors.h
//
// A gRPC server interceptor for requests protobuf cannot parse. gRPC's
// generated handlers answer such a request themselves, before any plumbd
// code runs, with INTERNAL and an empty message: a caller that sent a
// string that is not valid UTF-8 or a google.protobuf.Struct nested deeper
// than protobuf's recursion limit (100) would read it as a server fault,
// and the request metrics would count it as one. This interceptor sees that
// the request failed to parse (POST_RECV_MESSAGE without a message) and
// rewrites the status to INVALID_ARGUMENT with a message saying so.
//
// DaemonServer installs it ahead of every other interceptor, so the request
// metrics count the rewritten code.
//
// Thread-safe: the factory holds no state; each call gets its own
// interceptor.
#ifndef PLUMBLINE_DAEMON_SERVER_REQUEST_ERRORS_H_
#define PLUMBLINE_DAEMON_SERVER_REQUEST_ERRORS_H_

#include <grpcpp/support/server_interceptor.h>

#include <memory>

namespace plumbline::daemon {

std::unique_ptr<grpc::experimental::ServerInterceptorFactoryInterface>
MakeParseErrorInterceptorFactory();

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SERVER_REQUEST_ERRORS_H_
