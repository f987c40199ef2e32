// File: daemon/security/transport_security.h
//
// TLS on plumbd's gRPC port and on plumbctl's connection to it. The server
// side turns config.proto's security.tls into gRPC server credentials:
//   cert_file + key_file                 TLS
//   ... + client_ca_file                 mutual TLS: every client must
//                                        present a certificate of that CA
//   none                                 plain text, only on a loopback
//                                        address unless
//                                        allow_plaintext_non_loopback
// The PEM files are read and checked with OpenSSL at startup (does the key
// match the certificate?) so a mistake is reported naming the config field
// and the file, not as a failure to listen. The client side builds the
// channel credentials for plumbctl's --tls_ca, --tls_cert and --tls_key.
//
//   absl::StatusOr<ServerTransport> t = ServerTransportFor(listen, security);
//   builder.AddListeningPort(listen, t->credentials, &port);
//
// Thread-safe: free functions without shared state.
#ifndef PLUMBLINE_DAEMON_SECURITY_TRANSPORT_SECURITY_H_
#define PLUMBLINE_DAEMON_SECURITY_TRANSPORT_SECURITY_H_

#include <grpcpp/security/credentials.h>
#include <grpcpp/security/server_credentials.h>

#include <memory>
#include <string>

#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "plumbline/v1/security.pb.h"

namespace plumbline::daemon {

// Whether the host of `listen` (HOST:PORT, [V6]:PORT or unix:PATH) is
// reached only from this machine: 127.0.0.0/8, ::1, "localhost" or a unix
// socket.
bool IsLoopbackListen(absl::string_view listen);

struct ServerTransport {
  std::shared_ptr<grpc::ServerCredentials> credentials;
  // "plaintext", "tls" or "mutual_tls", for the startup log.
  std::string mode;
};

// The credentials for listening on `listen` under `security`.
// INVALID_ARGUMENT naming the field (security.tls.key_file, ...) for: only
// one of cert_file and key_file, client_ca_file without them, a file that
// is not PEM of the right kind, a key that does not belong to the
// certificate; and for plain text on a non-loopback address without
// security.allow_plaintext_non_loopback. NOT_FOUND naming a missing file.
absl::StatusOr<ServerTransport> ServerTransportFor(
    const std::string& listen, const v1::SecurityConfig& security);

// plumbctl's side. TLS is on when ca_file or cert_file is set.
struct ClientTlsFiles {
  // PEM roots to trust; empty: the system's roots.
  std::string ca_file;
  // PEM client certificate and key for mutual TLS; both or neither.
  std::string cert_file;
  std::string key_file;
  bool enabled() const { return !ca_file.empty() || !cert_file.empty(); }
};

// TLS channel credentials from the files, or insecure credentials when
// !files.enabled(). INVALID_ARGUMENT naming the flag (--tls_cert, ...).
absl::StatusOr<std::shared_ptr<grpc::ChannelCredentials>>
ClientChannelCredentials(const ClientTlsFiles& files);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SECURITY_TRANSPORT_SECURITY_H_
