// File: daemon/metrics/exporter.cc
#include "daemon/metrics/exporter.h"

#include <civetweb.h>
#include <openssl/crypto.h>
#include <zlib.h>

#include <chrono>
#include <cstring>
#include <utility>

#include "absl/status/status.h"
#include "absl/strings/escaping.h"
#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "daemon/util/address.h"
#include "daemon/util/event_log.h"
#include "prometheus/metric_family.h"
#include "prometheus/text_serializer.h"

namespace plumbline::daemon {
namespace {

constexpr char kRealm[] = "plumbd metrics";
// Threads answering requests: scrapes and page views.
constexpr char kThreads[] = "4";

// The gzip form of `body` (zlib's deflate with a gzip header, the settings
// prometheus-cpp's Exposer used, so the bytes stay the same); empty if
// zlib fails, and then the body goes uncompressed.
std::string Gzip(const std::string& body) {
  z_stream zs{};
  if (deflateInit2(&zs, Z_DEFAULT_COMPRESSION, Z_DEFLATED, 16 + MAX_WBITS, 9,
                   Z_DEFAULT_STRATEGY) != Z_OK) {
    return {};
  }
  zs.next_in = reinterpret_cast<Bytef*>(const_cast<char*>(body.data()));
  zs.avail_in = static_cast<uInt>(body.size());
  std::string out;
  int ret = Z_OK;
  while (ret == Z_OK) {
    constexpr size_t kChunk = 32768;
    out.resize(zs.total_out + kChunk);
    zs.next_out = reinterpret_cast<Bytef*>(out.data() + zs.total_out);
    zs.avail_out = kChunk;
    ret = deflate(&zs, Z_FINISH);
    out.resize(zs.total_out);
  }
  deflateEnd(&zs);
  return ret == Z_STREAM_END ? out : std::string();
}

void WriteAll(mg_connection* conn, const std::string& text) {
  mg_write(conn, text.data(), text.size());
}

const char* ReasonPhrase(int status) {
  switch (status) {
    case 200:
      return "OK";
    case 400:
      return "Bad Request";
    case 404:
      return "Not Found";
    case 405:
      return "Method Not Allowed";
    case 503:
      return "Service Unavailable";
    default:
      return status < 400 ? "OK" : "Error";
  }
}

// A page answer. The headers keep the browser to plumbd: the content
// security policy forbids every script, font, frame and any load from
// another origin, and nothing is cached.
// `head_only`: a HEAD request, answered without the body.
void WritePage(mg_connection* conn, const HttpReply& reply,
               bool head_only = false) {
  std::string head = absl::StrFormat(
      "HTTP/1.1 %d %s\r\n"
      "Content-Type: %s\r\n"
      "Content-Length: %d\r\n"
      "Cache-Control: no-store\r\n"
      "X-Content-Type-Options: nosniff\r\n"
      "Referrer-Policy: no-referrer\r\n"
      "Content-Security-Policy: default-src 'none'; style-src "
      "'unsafe-inline'; img-src 'self' data:; base-uri 'none'; "
      "form-action 'none'; frame-ancestors 'none'\r\n",
      reply.status, ReasonPhrase(reply.status), reply.content_type,
      reply.body.size());
  for (const auto& [name, value] : reply.headers) {
    absl::StrAppend(&head, name, ": ", value, "\r\n");
  }
  absl::StrAppend(&head, "\r\n");
  WriteAll(conn, head);
  if (!head_only) WriteAll(conn, reply.body);
}

}  // namespace

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
  // The Exposer's own families, with its names, help texts and quantiles.
  exporter->exposer_registry_ = std::make_shared<prometheus::Registry>();
  prometheus::Registry& own = *exporter->exposer_registry_;
  exporter->bytes_transferred_ =
      &prometheus::BuildCounter()
           .Name("exposer_transferred_bytes_total")
           .Help("Transferred bytes to metrics services")
           .Register(own)
           .Add({});
  exporter->scrapes_ = &prometheus::BuildCounter()
                            .Name("exposer_scrapes_total")
                            .Help("Number of times metrics were scraped")
                            .Register(own)
                            .Add({});
  exporter->request_latencies_ =
      &prometheus::BuildSummary()
           .Name("exposer_request_latencies")
           .Help("Latencies of serving scrape requests, in microseconds")
           .Register(own)
           .Add({}, prometheus::Summary::Quantiles{
                        {0.5, 0.05}, {0.9, 0.01}, {0.99, 0.001}});

  mg_init_library(0);
  const char* options[] = {"listening_ports", listen.c_str(), "num_threads",
                           kThreads, nullptr};
  mg_callbacks callbacks{};
  exporter->server_ = mg_start(&callbacks, exporter.get(), options);
  if (exporter->server_ == nullptr) {
    return absl::UnavailableError(absl::StrCat(
        "cannot serve metrics on ", listen,
        " (address in use, or not a HOST:PORT this machine has?)"));
  }
  mg_server_port ports[4] = {};
  const int n = mg_get_server_ports(exporter->server_, 4, ports);
  if (n < 1 || ports[0].port == 0) {
    return absl::UnavailableError(
        absl::StrCat("cannot serve metrics on ", listen, ": no port bound"));
  }
  exporter->bound_address_ = BoundAddress(listen, ports[0].port);
  // /metrics (and /metrics/...) and /serving first; "**" takes every other
  // path.
  mg_set_request_handler(exporter->server_, "/metrics", &HandleMetrics,
                         exporter.get());
  mg_set_request_handler(exporter->server_, "/serving", &HandleServing,
                         exporter.get());
  mg_set_request_handler(exporter->server_, "**", &HandlePage, exporter.get());
  return exporter;
}

MetricsExporter::~MetricsExporter() {
  if (server_ != nullptr) mg_stop(server_);  // waits for requests in flight
}

void MetricsExporter::Add(
    std::shared_ptr<prometheus::Collectable> collectable) {
  absl::MutexLock lock(&mu_);
  owned_.push_back(std::move(collectable));
}

void MetricsExporter::AttachPages(HttpPages* pages) {
  absl::MutexLock lock(&pages_mu_);
  pages_ = pages;
}

void MetricsExporter::DetachPages() {
  absl::MutexLock lock(&pages_mu_);  // after the page requests in flight
  pages_ = nullptr;
}

int MetricsExporter::HandleMetrics(mg_connection* conn, void* cbdata) {
  auto* self = static_cast<MetricsExporter*>(cbdata);
  if (!self->Admit(conn, "metrics")) return 401;
  self->ServeMetrics(conn);
  return 200;
}

int MetricsExporter::HandlePage(mg_connection* conn, void* cbdata) {
  auto* self = static_cast<MetricsExporter*>(cbdata);
  if (!self->Admit(conn, "pages")) return 401;
  const mg_request_info* info = mg_get_request_info(conn);
  HttpReply reply;
  if (std::strcmp(info->request_method, "GET") != 0) {
    reply.status = 405;
    reply.content_type = "text/plain; charset=utf-8";
    reply.body = "plumbd serves its pages to GET only\n";
    reply.headers.emplace_back("Allow", "GET");
    WritePage(conn, reply);
    return reply.status;
  }
  {
    absl::ReaderMutexLock lock(&self->pages_mu_);
    if (self->pages_ != nullptr) {
      reply = self->pages_->Get(
          info->local_uri != nullptr ? info->local_uri : "/",
          info->query_string != nullptr ? info->query_string : "");
    } else {
      reply.status = 404;
      reply.content_type = "text/plain; charset=utf-8";
      reply.body = "no page here: plumbd serves /metrics\n";
    }
  }
  WritePage(conn, reply);
  return reply.status;
}

// Deliberately before Admit: a balancer's health probe has no password, and
// the answer tells only whether this replica takes calls.
int MetricsExporter::HandleServing(mg_connection* conn, void* cbdata) {
  auto* self = static_cast<MetricsExporter*>(cbdata);
  const mg_request_info* info = mg_get_request_info(conn);
  // civetweb hands this handler /serving/... too: those are pages.
  if (info->local_uri == nullptr ||
      std::strcmp(info->local_uri, "/serving") != 0) {
    return HandlePage(conn, cbdata);
  }
  const bool head = std::strcmp(info->request_method, "HEAD") == 0;
  HttpReply reply;
  reply.content_type = "text/plain; charset=utf-8";
  if (!head && std::strcmp(info->request_method, "GET") != 0) {
    reply.status = 405;
    reply.body = "plumbd answers /serving to GET and HEAD only\n";
    reply.headers.emplace_back("Allow", "GET, HEAD");
  } else {
    switch (self->serving_.load()) {
      case ServingState::kServing:
        reply.body = "serving\n";
        break;
      case ServingState::kDraining:
        reply.status = 503;
        reply.body = "draining\n";
        break;
      case ServingState::kStarting:
        reply.status = 503;
        reply.body = "starting\n";
        break;
    }
  }
  WritePage(conn, reply, head);
  return reply.status;
}

bool MetricsExporter::Admit(mg_connection* conn, const char* endpoint) {
  if (auth_password_ == nullptr) return true;
  bool ok = false;
  // "Basic base64(user:password)"; the user holds no colon.
  const char* header = mg_get_header(conn, "Authorization");
  constexpr absl::string_view kBasic = "Basic ";
  if (header != nullptr && absl::StartsWith(header, kBasic)) {
    std::string decoded;
    if (absl::Base64Unescape(absl::string_view(header).substr(kBasic.size()),
                             &decoded)) {
      const size_t colon = decoded.find(':');
      if (colon != std::string::npos) {
        ok = Authorize(decoded.substr(0, colon), decoded.substr(colon + 1),
                       endpoint);
      }
    }
  }
  if (!ok) {
    // The Exposer's 401, byte for byte.
    WriteAll(conn, absl::StrCat("HTTP/1.1 401 Unauthorized\r\n"
                                "WWW-Authenticate: Basic realm=\"",
                                kRealm,
                                "\"\r\n"
                                "Connection: close\r\n"
                                "Content-Length: 0\r\n"
                                "\r\n"));
  }
  return ok;
}

bool MetricsExporter::Authorize(const std::string& user,
                                const std::string& password,
                                const char* endpoint) const {
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
            {"endpoint", endpoint},
            {"user_matches", user_ok ? "true" : "false"}});
  return false;
}

void MetricsExporter::ServeMetrics(mg_connection* conn) {
  const auto start = std::chrono::steady_clock::now();
  std::vector<prometheus::MetricFamily> families = exposer_registry_->Collect();
  {
    auto append = [&families](std::vector<prometheus::MetricFamily> more) {
      families.insert(families.end(), std::make_move_iterator(more.begin()),
                      std::make_move_iterator(more.end()));
    };
    append(registry_->Collect());
    absl::MutexLock lock(&mu_);
    for (const auto& c : owned_) append(c->Collect());
  }
  const std::string body = prometheus::TextSerializer().Serialize(families);
  std::string head =
      "HTTP/1.1 200 OK\r\n"
      "Content-Type: text/plain; charset=utf-8\r\n";
  size_t sent = 0;
  const char* accept = mg_get_header(conn, "Accept-Encoding");
  std::string gzipped;
  if (accept != nullptr && std::strstr(accept, "gzip") != nullptr) {
    gzipped = Gzip(body);
  }
  if (!gzipped.empty()) {
    absl::StrAppend(&head, "Content-Encoding: gzip\r\nContent-Length: ",
                    gzipped.size(), "\r\n\r\n");
    WriteAll(conn, head);
    WriteAll(conn, gzipped);
    sent = gzipped.size();
  } else {
    absl::StrAppend(&head, "Content-Length: ", body.size(), "\r\n\r\n");
    WriteAll(conn, head);
    WriteAll(conn, body);
    sent = body.size();
  }
  const auto micros = std::chrono::duration_cast<std::chrono::microseconds>(
      std::chrono::steady_clock::now() - start);
  request_latencies_->Observe(static_cast<double>(micros.count()));
  bytes_transferred_->Increment(static_cast<double>(sent));
  scrapes_->Increment();
}

}  // namespace plumbline::daemon
