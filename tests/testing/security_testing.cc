// File: tests/testing/security_testing.cc
#include "tests/testing/security_testing.h"

#include <curl/curl.h>
#include <grpcpp/create_channel.h>
#include <grpcpp/security/credentials.h>

#include <cstdlib>
#include <filesystem>
#include <iostream>

#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_split.h"
#include "daemon/security/token_hash.h"
#include "tests/testing/process.h"

namespace plumbline::daemon::testing {
namespace {

// openssl config: the CA's and the leaf certificates' extensions.
constexpr char kOpensslConfig[] = R"([req]
distinguished_name = dn
prompt = no
[dn]
[ca]
basicConstraints = critical,CA:TRUE
keyUsage = critical,keyCertSign,cRLSign
subjectKeyIdentifier = hash
[server]
subjectAltName = IP:127.0.0.1,DNS:localhost
extendedKeyUsage = serverAuth
[client]
extendedKeyUsage = clientAuth
)";

std::string ReadOrDie(const std::string& path) {
  std::string text = ReadTextFile(path);
  if (text.empty()) {
    std::cerr << "cannot read " << path << "\n";
    std::abort();
  }
  return text;
}

size_t Append(char* data, size_t size, size_t count, void* out) {
  static_cast<std::string*>(out)->append(data, size * count);
  return size * count;
}

}  // namespace

absl::StatusOr<TestCerts> MakeTestCerts(const std::string& dir) {
  std::filesystem::create_directories(dir);
  if (absl::Status s = WriteTextFile(dir + "/openssl.cnf", kOpensslConfig);
      !s.ok()) {
    return s;
  }
  // EC P-256 keys: quick to make.
  const std::string key =
      "-newkey ec -pkeyopt ec_paramgen_curve:prime256v1 "
      "-nodes -config openssl.cnf";
  std::string script = absl::StrCat("set -e; cd '", dir, "'\n");
  const auto ca = [&](const std::string& name, const std::string& cn) {
    absl::StrAppend(&script, "openssl req -x509 ", key, " -keyout ", name,
                    ".key -out ", name, ".crt -days 2 -subj '/CN=", cn,
                    "' -extensions ca\n");
  };
  int serial = 1;
  const auto leaf = [&](const std::string& name, const std::string& subject,
                        const std::string& ca_name, const std::string& ext) {
    absl::StrAppend(&script, "openssl req -new ", key, " -keyout ", name,
                    ".key -out ", name, ".csr -subj '", subject, "'\n",
                    "openssl x509 -req -in ", name, ".csr -CA ", ca_name,
                    ".crt -CAkey ", ca_name, ".key -set_serial ", ++serial,
                    " -days 2 -out ", name, ".crt -extfile openssl.cnf ",
                    "-extensions ", ext, "\n");
  };
  ca("ca", "Plumbline Test CA");
  ca("other_ca", "Some Other CA");
  leaf("server", "/CN=localhost", "ca", "server");
  leaf("client", "/O=Courier Co/CN=router-1", "ca", "client");
  leaf("admin", "/O=Courier Co/CN=admin-1", "ca", "client");
  leaf("stranger", "/O=Elsewhere Ltd/CN=stranger", "ca", "client");
  leaf("other_client", "/O=Courier Co/CN=router-1", "other_ca", "client");
  absl::StatusOr<ProcessResult> run =
      RunProcess({"/bin/sh", "-c", script}, dir);
  if (!run.ok()) return run.status();
  if (run->exit_code != 0) {
    return absl::InternalError(absl::StrCat(
        "openssl failed (is the Debian package openssl installed?): ",
        run->err));
  }
  const auto path = [&](const std::string& file) {
    return absl::StrCat(dir, "/", file);
  };
  TestCerts certs;
  certs.ca_crt = path("ca.crt");
  certs.server_crt = path("server.crt");
  certs.server_key = path("server.key");
  certs.client_crt = path("client.crt");
  certs.client_key = path("client.key");
  certs.admin_crt = path("admin.crt");
  certs.admin_key = path("admin.key");
  certs.stranger_crt = path("stranger.crt");
  certs.stranger_key = path("stranger.key");
  certs.other_ca_crt = path("other_ca.crt");
  certs.other_client_crt = path("other_client.crt");
  certs.other_client_key = path("other_client.key");
  return certs;
}

const TestCerts& SharedTestCerts() {
  static TempDir dir;
  static const TestCerts certs = [] {
    absl::StatusOr<TestCerts> made = MakeTestCerts(dir.File("certs"));
    if (!made.ok()) {
      std::cerr << "cannot make the test certificates: " << made.status()
                << "\n";
      return TestCerts();
    }
    return *std::move(made);
  }();
  return certs;
}

std::shared_ptr<grpc::Channel> PlainChannel(const std::string& addr) {
  return grpc::CreateChannel(addr, grpc::InsecureChannelCredentials());
}

std::shared_ptr<grpc::Channel> TlsChannel(const std::string& addr,
                                          const std::string& ca_file,
                                          const std::string& cert_file,
                                          const std::string& key_file) {
  grpc::SslCredentialsOptions options;
  options.pem_root_certs = ReadOrDie(ca_file);
  if (!cert_file.empty()) {
    options.pem_cert_chain = ReadOrDie(cert_file);
    options.pem_private_key = ReadOrDie(key_file);
  }
  return grpc::CreateChannel(addr, grpc::SslCredentials(options));
}

TestToken MakeTestToken(absl::string_view name, absl::string_view role) {
  absl::StatusOr<NewToken> token = MakeToken();
  absl::StatusOr<std::string> hash =
      token.ok() ? HashSecret(token->token, kMinHashIterations)
                 : absl::StatusOr<std::string>(token.status());
  if (!hash.ok()) {
    std::cerr << "cannot make a test token: " << hash.status() << "\n";
    std::abort();
  }
  TestToken out;
  out.token = token->token;
  out.entry_json = absl::StrCat(R"({"name": ")", name, R"(", "role": ")", role,
                                R"(", "id": ")", token->id, R"(", "hash": ")",
                                *hash, R"("})");
  return out;
}

absl::StatusOr<TokenCommandOutput> RunTokenNew(const std::string& plumbctl,
                                               const std::string& role,
                                               const std::string& name,
                                               const std::string& dir) {
  absl::StatusOr<ProcessResult> run = RunProcess(
      {plumbctl, "token", "new", "--role", role, "--name", name}, dir);
  if (!run.ok()) return run.status();
  if (run->exit_code != 0) {
    return absl::InternalError(absl::StrCat("plumbctl token new: ", run->err));
  }
  TokenCommandOutput out;
  for (absl::string_view line : absl::StrSplit(run->out, '\n')) {
    if (line.empty() || line[0] == '#') continue;
    if (line[0] == '{') {
      out.entry_json = std::string(line);
    } else {
      out.secret = std::string(line);
    }
  }
  if (out.secret.empty() || out.entry_json.empty()) {
    return absl::InternalError(absl::StrCat(
        "plumbctl token new printed no secret or entry: ", run->out));
  }
  return out;
}

absl::StatusOr<HttpReply> HttpGetWithAuth(const std::string& host_port,
                                          const std::string& path,
                                          const std::string& user_password) {
  CURL* curl = curl_easy_init();
  if (curl == nullptr) return absl::InternalError("curl_easy_init failed");
  const std::string url = absl::StrCat("http://", host_port, path);
  HttpReply reply;
  curl_easy_setopt(curl, CURLOPT_URL, url.c_str());
  curl_easy_setopt(curl, CURLOPT_WRITEFUNCTION, &Append);
  curl_easy_setopt(curl, CURLOPT_WRITEDATA, &reply.body);
  curl_easy_setopt(curl, CURLOPT_TIMEOUT, 30L);  // safety net, not a check
  if (!user_password.empty()) {
    curl_easy_setopt(curl, CURLOPT_HTTPAUTH, CURLAUTH_BASIC);
    curl_easy_setopt(curl, CURLOPT_USERPWD, user_password.c_str());
  }
  const CURLcode rc = curl_easy_perform(curl);
  curl_easy_getinfo(curl, CURLINFO_RESPONSE_CODE, &reply.status);
  curl_easy_cleanup(curl);
  if (rc != CURLE_OK) {
    return absl::UnavailableError(
        absl::StrCat("GET ", url, ": ", curl_easy_strerror(rc)));
  }
  return reply;
}

std::string MetricsAddressFromLog(const std::string& log) {
  for (absl::string_view line : absl::StrSplit(log, '\n')) {
    if (!absl::StrContains(line, "event=metrics_listening")) continue;
    const size_t at = line.find("addr=");
    if (at == absl::string_view::npos) continue;
    absl::string_view rest = line.substr(at + 5);
    return std::string(rest.substr(0, rest.find(' ')));
  }
  return "";
}

}  // namespace plumbline::daemon::testing
