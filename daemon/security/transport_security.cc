// File: daemon/security/transport_security.cc
#include "daemon/security/transport_security.h"

#include <arpa/inet.h>
#include <grpc/grpc_security_constants.h>
#include <openssl/bio.h>
#include <openssl/evp.h>
#include <openssl/pem.h>
#include <openssl/x509.h>

#include <cstdint>
#include <utility>

#include "absl/status/status.h"
#include "absl/strings/ascii.h"
#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "daemon/util/files.h"

namespace plumbline::daemon {
namespace {

struct BioFree {
  void operator()(BIO* bio) const { BIO_free(bio); }
};
struct X509Free {
  void operator()(X509* cert) const { X509_free(cert); }
};
struct KeyFree {
  void operator()(EVP_PKEY* key) const { EVP_PKEY_free(key); }
};
using X509Ptr = std::unique_ptr<X509, X509Free>;
using KeyPtr = std::unique_ptr<EVP_PKEY, KeyFree>;

std::unique_ptr<BIO, BioFree> MemoryBio(const std::string& pem) {
  return std::unique_ptr<BIO, BioFree>(
      BIO_new_mem_buf(pem.data(), static_cast<int>(pem.size())));
}

absl::Status FieldError(absl::string_view field, absl::string_view path,
                        absl::string_view what) {
  return absl::InvalidArgumentError(
      absl::StrCat(field, ": ", path, ": ", what));
}

// Reads `path` (named `field` in errors) and its first PEM certificate.
absl::StatusOr<std::string> ReadCertificates(absl::string_view field,
                                             const std::string& path,
                                             X509Ptr* first) {
  absl::StatusOr<std::string> pem = ReadFileToString(path);
  if (!pem.ok()) {
    return absl::Status(pem.status().code(),
                        absl::StrCat(field, ": ", pem.status().message()));
  }
  auto bio = MemoryBio(*pem);
  X509Ptr cert(PEM_read_bio_X509(bio.get(), nullptr, nullptr, nullptr));
  if (cert == nullptr) {
    return FieldError(field, path, "holds no PEM certificate");
  }
  if (first != nullptr) *first = std::move(cert);
  return pem;
}

// Reads `path` (named `field`) and checks it is a PEM private key that
// belongs to `cert` (if given).
absl::StatusOr<std::string> ReadKey(absl::string_view field,
                                    const std::string& path, X509* cert,
                                    absl::string_view cert_field) {
  absl::StatusOr<std::string> pem = ReadFileToString(path);
  if (!pem.ok()) {
    return absl::Status(pem.status().code(),
                        absl::StrCat(field, ": ", pem.status().message()));
  }
  auto bio = MemoryBio(*pem);
  KeyPtr key(PEM_read_bio_PrivateKey(bio.get(), nullptr, nullptr, nullptr));
  if (key == nullptr) {
    return FieldError(field, path, "holds no unencrypted PEM private key");
  }
  if (cert != nullptr && X509_check_private_key(cert, key.get()) != 1) {
    return FieldError(
        field, path,
        absl::StrCat("is not the key of the certificate in ", cert_field));
  }
  return pem;
}

}  // namespace

bool IsLoopbackListen(absl::string_view listen) {
  if (absl::StartsWith(listen, "unix:") ||
      absl::StartsWith(listen, "unix-abstract:")) {
    return true;
  }
  absl::string_view host;
  if (absl::StartsWith(listen, "[")) {
    const size_t close = listen.find(']');
    if (close == absl::string_view::npos) return false;
    host = listen.substr(1, close - 1);
  } else {
    const size_t colon = listen.rfind(':');
    host = colon == absl::string_view::npos ? listen : listen.substr(0, colon);
  }
  const std::string name = absl::AsciiStrToLower(host);
  if (name == "localhost") return true;
  in_addr v4{};
  if (inet_pton(AF_INET, name.c_str(), &v4) == 1) {
    return (ntohl(v4.s_addr) >> 24) == 127;
  }
  in6_addr v6{};
  if (inet_pton(AF_INET6, name.c_str(), &v6) == 1) {
    return IN6_IS_ADDR_LOOPBACK(&v6);
  }
  return false;
}

absl::StatusOr<ServerTransport> ServerTransportFor(
    const std::string& listen, const v1::SecurityConfig& security) {
  const v1::TlsConfig& tls = security.tls();
  ServerTransport transport;
  if (tls.cert_file().empty() && tls.key_file().empty()) {
    if (!tls.client_ca_file().empty()) {
      return absl::InvalidArgumentError(
          "security.tls.client_ca_file needs security.tls.cert_file and "
          "key_file: mutual TLS is TLS with client certificates");
    }
    if (!IsLoopbackListen(listen) && !security.allow_plaintext_non_loopback()) {
      return absl::InvalidArgumentError(absl::StrCat(
          "refusing to listen in plain text on ", listen,
          ", which is not a loopback address: set security.tls.cert_file and "
          "key_file, or set security.allow_plaintext_non_loopback to true "
          "if the network is protected otherwise"));
    }
    transport.credentials = grpc::InsecureServerCredentials();
    transport.mode = "plaintext";
    return transport;
  }
  if (tls.cert_file().empty() || tls.key_file().empty()) {
    return absl::InvalidArgumentError(
        "security.tls: set both cert_file and key_file (or neither)");
  }
  X509Ptr cert;
  absl::StatusOr<std::string> cert_pem =
      ReadCertificates("security.tls.cert_file", tls.cert_file(), &cert);
  if (!cert_pem.ok()) return cert_pem.status();
  absl::StatusOr<std::string> key_pem =
      ReadKey("security.tls.key_file", tls.key_file(), cert.get(),
              "security.tls.cert_file");
  if (!key_pem.ok()) return key_pem.status();

  grpc::SslServerCredentialsOptions options;
  options.pem_key_cert_pairs.push_back({*key_pem, *cert_pem});
  transport.mode = "tls";
  options.client_certificate_request = GRPC_SSL_DONT_REQUEST_CLIENT_CERTIFICATE;
  if (!tls.client_ca_file().empty()) {
    absl::StatusOr<std::string> ca_pem = ReadCertificates(
        "security.tls.client_ca_file", tls.client_ca_file(), nullptr);
    if (!ca_pem.ok()) return ca_pem.status();
    options.pem_root_certs = *ca_pem;
    options.client_certificate_request =
        GRPC_SSL_REQUEST_AND_REQUIRE_CLIENT_CERTIFICATE_AND_VERIFY;
    transport.mode = "mutual_tls";
  }
  transport.credentials = grpc::SslServerCredentials(options);
  return transport;
}

absl::StatusOr<std::shared_ptr<grpc::ChannelCredentials>>
ClientChannelCredentials(const ClientTlsFiles& files) {
  if (!files.enabled()) {
    if (!files.key_file.empty()) {
      return absl::InvalidArgumentError("--tls_key needs --tls_cert");
    }
    return grpc::InsecureChannelCredentials();
  }
  grpc::SslCredentialsOptions options;
  if (!files.ca_file.empty()) {
    absl::StatusOr<std::string> ca =
        ReadCertificates("--tls_ca", files.ca_file, nullptr);
    if (!ca.ok()) return ca.status();
    options.pem_root_certs = *ca;
  }
  if (files.cert_file.empty() != files.key_file.empty()) {
    return absl::InvalidArgumentError(
        "--tls_cert and --tls_key go together (the client certificate and "
        "its key)");
  }
  if (!files.cert_file.empty()) {
    X509Ptr cert;
    absl::StatusOr<std::string> cert_pem =
        ReadCertificates("--tls_cert", files.cert_file, &cert);
    if (!cert_pem.ok()) return cert_pem.status();
    absl::StatusOr<std::string> key_pem =
        ReadKey("--tls_key", files.key_file, cert.get(), "--tls_cert");
    if (!key_pem.ok()) return key_pem.status();
    options.pem_cert_chain = *cert_pem;
    options.pem_private_key = *key_pem;
  }
  return grpc::SslCredentials(options);
}

}  // namespace plumbline::daemon
