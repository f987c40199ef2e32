// File: tests/daemon/metrics/exporter_test.cc
//
// The metrics listener against the server it replaced: prometheus-cpp's
// pull Exposer (linked into this test only) serves the same registry and
// collectables, and every answer of /metrics — the first scrape plain and
// gzipped, a refused and a wrong password — must be the same bytes, status
// line and headers included. Then the pages: served behind the same basic
// auth, 404 when none are attached, GET only, and a detach that waits for
// nothing and leaves /metrics alone. Last the readiness probe /serving:
// its three answers, HEAD, no password asked even with auth on, and only
// GET and HEAD.
#include "daemon/metrics/exporter.h"

#include <arpa/inet.h>
#include <netinet/in.h>
#include <sys/socket.h>
#include <unistd.h>
#include <zlib.h>

#include <string>

#include "absl/strings/escaping.h"
#include "absl/strings/numbers.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_split.h"
#include "daemon/security/token_hash.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "prometheus/counter.h"
#include "prometheus/exposer.h"
#include "prometheus/gauge.h"

namespace plumbline::daemon {
namespace {

using ::testing::HasSubstr;
using ::testing::StartsWith;

// The whole answer (status line, headers, body) to a GET with `headers`.
std::string RawGet(const std::string& host_port, const std::string& method,
                   const std::string& path, const std::string& headers = "") {
  std::vector<std::string> parts = absl::StrSplit(host_port, ':');
  int port = 0;
  EXPECT_TRUE(absl::SimpleAtoi(parts.back(), &port)) << host_port;
  const int fd = socket(AF_INET, SOCK_STREAM, 0);
  sockaddr_in addr{};
  addr.sin_family = AF_INET;
  addr.sin_port = htons(static_cast<uint16_t>(port));
  inet_pton(AF_INET, "127.0.0.1", &addr.sin_addr);
  if (connect(fd, reinterpret_cast<sockaddr*>(&addr), sizeof(addr)) != 0) {
    close(fd);
    ADD_FAILURE() << "cannot connect to " << host_port;
    return "";
  }
  const std::string request =
      absl::StrCat(method, " ", path, " HTTP/1.1\r\nHost: test\r\n", headers,
                   "Connection: close\r\n\r\n");
  EXPECT_EQ(send(fd, request.data(), request.size(), 0),
            static_cast<ssize_t>(request.size()));
  std::string out;
  char buffer[65536];
  for (;;) {
    const ssize_t n = recv(fd, buffer, sizeof(buffer), 0);
    if (n <= 0) break;
    out.append(buffer, static_cast<size_t>(n));
  }
  close(fd);
  return out;
}

std::string Gunzip(const std::string& data) {
  z_stream zs{};
  EXPECT_EQ(inflateInit2(&zs, 16 + MAX_WBITS), Z_OK);
  zs.next_in = reinterpret_cast<Bytef*>(const_cast<char*>(data.data()));
  zs.avail_in = static_cast<uInt>(data.size());
  std::string out;
  int ret = Z_OK;
  while (ret == Z_OK) {
    char buffer[32768];
    zs.next_out = reinterpret_cast<Bytef*>(buffer);
    zs.avail_out = sizeof(buffer);
    ret = inflate(&zs, Z_NO_FLUSH);
    out.append(buffer, sizeof(buffer) - zs.avail_out);
  }
  inflateEnd(&zs);
  EXPECT_EQ(ret, Z_STREAM_END);
  return out;
}

// A collectable computed at scrape time, as plumbd's health gauges are.
class FixedCollectable : public prometheus::Collectable {
 public:
  std::vector<prometheus::MetricFamily> Collect() const override {
    prometheus::MetricFamily f;
    f.name = "plumbline_test_figure";
    f.help = "A figure computed at scrape time.";
    f.type = prometheus::MetricType::Gauge;
    prometheus::ClientMetric m;
    m.label = {{"set", "courier"}, {"window", "count"}};
    m.gauge.value = 0.125;
    f.metric.push_back(m);
    return {f};
  }
};

// Both servers over one registry (with a counter, a gauge and a histogram)
// and one collectable, registered in plumbd's order.
struct Pair {
  explicit Pair(const v1::MetricsAuthConfig& auth = {},
                const std::string& password = "") {
    auto started = MetricsExporter::Start("127.0.0.1:0", auth);
    EXPECT_TRUE(started.ok()) << started.status();
    ours = *std::move(started);
    prometheus::Registry& r = ours->registry();
    prometheus::BuildCounter()
        .Name("plumbline_requests_total")
        .Help("Calls.")
        .Register(r)
        .Add({{"method", "Score"}, {"code", "OK"}})
        .Increment(7);
    prometheus::BuildGauge()
        .Name("plumbline_ledger_queue_rows")
        .Help("Rows queued.")
        .Register(r)
        .Add({})
        .Set(3);
    auto collectable = std::make_shared<FixedCollectable>();
    ours->Add(collectable);
    theirs = std::make_unique<prometheus::Exposer>("127.0.0.1:0", 2);
    if (!password.empty()) {
      auto check = SecretCheck::Create(auth.password_hash());
      EXPECT_TRUE(check.ok());
      std::shared_ptr<SecretCheck> shared = *std::move(check);
      theirs->RegisterAuth(
          [shared, user = auth.username()](const std::string& u,
                                           const std::string& p) {
            return u == user && shared->Matches(p);
          },
          "plumbd metrics");
    }
    theirs->RegisterCollectable(ours->shared_registry());
    theirs->RegisterCollectable(collectable);
    kept = collectable;
  }
  std::string their_address() const {
    return absl::StrCat("127.0.0.1:", theirs->GetListeningPorts().front());
  }
  std::unique_ptr<MetricsExporter> ours;
  std::unique_ptr<prometheus::Exposer> theirs;
  std::shared_ptr<prometheus::Collectable> kept;
};

TEST(MetricsExporterTest, FirstScrapeIsTheExposersBytes) {
  Pair pair;
  const std::string mine =
      RawGet(pair.ours->bound_address(), "GET", "/metrics");
  const std::string theirs = RawGet(pair.their_address(), "GET", "/metrics");
  EXPECT_THAT(mine, StartsWith("HTTP/1.1 200 OK\r\n"));
  EXPECT_THAT(mine, HasSubstr("plumbline_test_figure{set=\"courier\""));
  EXPECT_THAT(mine, HasSubstr("exposer_scrapes_total 0"));
  EXPECT_EQ(mine, theirs);
}

TEST(MetricsExporterTest, GzipIsTheExposersBytes) {
  Pair pair;
  const std::string h = "Accept-Encoding: gzip, deflate\r\n";
  const std::string mine =
      RawGet(pair.ours->bound_address(), "GET", "/metrics", h);
  const std::string theirs = RawGet(pair.their_address(), "GET", "/metrics", h);
  EXPECT_EQ(mine, theirs);
  const size_t split = mine.find("\r\n\r\n");
  ASSERT_NE(split, std::string::npos);
  EXPECT_THAT(mine.substr(0, split), HasSubstr("Content-Encoding: gzip"));
  EXPECT_THAT(Gunzip(mine.substr(split + 4)),
              HasSubstr("plumbline_requests_total{code=\"OK\",method=\"Score\"}"
                        " 7"));
}

TEST(MetricsExporterTest, LaterScrapesCountLikeTheExposer) {
  Pair pair;
  RawGet(pair.ours->bound_address(), "GET", "/metrics");
  const std::string second =
      RawGet(pair.ours->bound_address(), "GET", "/metrics");
  EXPECT_THAT(second, HasSubstr("exposer_scrapes_total 1\n"));
  EXPECT_THAT(second, HasSubstr("exposer_request_latencies_count 1\n"));
}

class AuthTest : public ::testing::Test {
 protected:
  void SetUp() override {
    auto hash = HashSecret(kPassword);
    ASSERT_TRUE(hash.ok()) << hash.status();
    auth_.set_username("scraper");
    auth_.set_password_hash(*hash);
  }
  static std::string Basic(const std::string& user, const std::string& pass) {
    return absl::StrCat("Authorization: Basic ",
                        absl::Base64Escape(absl::StrCat(user, ":", pass)),
                        "\r\n");
  }
  static constexpr char kPassword[] = "correct horse";
  v1::MetricsAuthConfig auth_;
};

TEST_F(AuthTest, RefusalsAreTheExposersBytes) {
  Pair pair(auth_, kPassword);
  for (const std::string& headers :
       {std::string(), Basic("scraper", "wrong"), Basic("other", kPassword),
        std::string("Authorization: Basic !!!\r\n"),
        std::string("Authorization: Bearer x\r\n")}) {
    const std::string mine =
        RawGet(pair.ours->bound_address(), "GET", "/metrics", headers);
    EXPECT_THAT(mine, StartsWith("HTTP/1.1 401 Unauthorized\r\n")) << headers;
    EXPECT_EQ(mine, RawGet(pair.their_address(), "GET", "/metrics", headers))
        << headers;
  }
  const std::string ok = Basic("scraper", kPassword);
  EXPECT_EQ(RawGet(pair.ours->bound_address(), "GET", "/metrics", ok),
            RawGet(pair.their_address(), "GET", "/metrics", ok));
}

class FakePages : public HttpPages {
 public:
  HttpReply Get(const std::string& path, const std::string& query) override {
    HttpReply r;
    if (path == "/missing") {
      r.status = 404;
      r.body = "none";
      return r;
    }
    r.body = absl::StrCat("<p>", path, "?", query, "</p>");
    return r;
  }
};

TEST_F(AuthTest, PagesAskForTheSamePassword) {
  auto exporter = MetricsExporter::Start("127.0.0.1:0", auth_);
  ASSERT_TRUE(exporter.ok()) << exporter.status();
  FakePages pages;
  (*exporter)->AttachPages(&pages);
  const std::string addr = (*exporter)->bound_address();
  EXPECT_THAT(RawGet(addr, "GET", "/"),
              StartsWith("HTTP/1.1 401 Unauthorized\r\n"));
  EXPECT_THAT(RawGet(addr, "GET", "/sets/courier", Basic("scraper", "no")),
              StartsWith("HTTP/1.1 401 Unauthorized\r\n"));
  const std::string page =
      RawGet(addr, "GET", "/sets/courier?w=1", Basic("scraper", kPassword));
  EXPECT_THAT(page, StartsWith("HTTP/1.1 200 OK\r\n"));
  EXPECT_THAT(page, HasSubstr("<p>/sets/courier?w=1</p>"));
  (*exporter)->DetachPages();
}

TEST(MetricsExporterPagesTest, ServedBesideMetricsUntilDetached) {
  auto exporter = MetricsExporter::Start("127.0.0.1:0");
  ASSERT_TRUE(exporter.ok()) << exporter.status();
  const std::string addr = (*exporter)->bound_address();
  EXPECT_THAT(RawGet(addr, "GET", "/"), StartsWith("HTTP/1.1 404 "));
  FakePages pages;
  (*exporter)->AttachPages(&pages);
  const std::string root = RawGet(addr, "GET", "/");
  EXPECT_THAT(root, StartsWith("HTTP/1.1 200 OK\r\n"));
  EXPECT_THAT(root, HasSubstr("Content-Type: text/html; charset=utf-8\r\n"));
  // The browser may load nothing from anywhere else.
  EXPECT_THAT(root, HasSubstr("Content-Security-Policy: default-src 'none'"));
  EXPECT_THAT(root, HasSubstr("<p>/?</p>"));
  EXPECT_THAT(RawGet(addr, "GET", "/sets/a%20b"), HasSubstr("<p>/sets/a b?"));
  EXPECT_THAT(RawGet(addr, "GET", "/missing"), StartsWith("HTTP/1.1 404 "));
  EXPECT_THAT(RawGet(addr, "POST", "/"), StartsWith("HTTP/1.1 405 "));
  EXPECT_THAT(RawGet(addr, "GET", "/metrics"), StartsWith("HTTP/1.1 200 OK"));
  (*exporter)->DetachPages();
  EXPECT_THAT(RawGet(addr, "GET", "/"), StartsWith("HTTP/1.1 404 "));
}

// The body of a whole HTTP answer (after the blank line).
std::string Body(const std::string& answer) {
  const size_t end = answer.find("\r\n\r\n");
  return end == std::string::npos ? "" : answer.substr(end + 4);
}

TEST(MetricsExporterServingTest, StartingThenServingThenDraining) {
  auto exporter = MetricsExporter::Start("127.0.0.1:0");
  ASSERT_TRUE(exporter.ok()) << exporter.status();
  const std::string addr = (*exporter)->bound_address();
  std::string answer = RawGet(addr, "GET", "/serving");
  EXPECT_THAT(answer, StartsWith("HTTP/1.1 503 Service Unavailable\r\n"));
  EXPECT_EQ(Body(answer), "starting\n");
  (*exporter)->SetServing(ServingState::kServing);
  answer = RawGet(addr, "GET", "/serving");
  EXPECT_THAT(answer, StartsWith("HTTP/1.1 200 OK\r\n"));
  EXPECT_THAT(answer, HasSubstr("Content-Type: text/plain; charset=utf-8\r\n"));
  EXPECT_THAT(answer, HasSubstr("Cache-Control: no-store\r\n"));
  EXPECT_EQ(Body(answer), "serving\n");
  // HEAD: the same status and length, no body.
  answer = RawGet(addr, "HEAD", "/serving");
  EXPECT_THAT(answer, StartsWith("HTTP/1.1 200 OK\r\n"));
  EXPECT_THAT(answer, HasSubstr("Content-Length: 8\r\n"));
  EXPECT_EQ(Body(answer), "");
  (*exporter)->SetServing(ServingState::kDraining);
  answer = RawGet(addr, "GET", "/serving");
  EXPECT_THAT(answer, StartsWith("HTTP/1.1 503 Service Unavailable\r\n"));
  EXPECT_EQ(Body(answer), "draining\n");
}

TEST(MetricsExporterServingTest, OnlyGetAndHead) {
  auto exporter = MetricsExporter::Start("127.0.0.1:0");
  ASSERT_TRUE(exporter.ok()) << exporter.status();
  (*exporter)->SetServing(ServingState::kServing);
  const std::string addr = (*exporter)->bound_address();
  for (const char* method : {"POST", "PUT", "DELETE"}) {
    const std::string answer = RawGet(addr, method, "/serving");
    EXPECT_THAT(answer, StartsWith("HTTP/1.1 405 ")) << method;
    EXPECT_THAT(answer, HasSubstr("Allow: GET, HEAD\r\n")) << method;
  }
  // Below /serving are pages (none attached here), not the probe.
  EXPECT_THAT(RawGet(addr, "GET", "/serving/courier"),
              StartsWith("HTTP/1.1 404 "));
}

TEST_F(AuthTest, ServingAsksForNoPassword) {
  auto exporter = MetricsExporter::Start("127.0.0.1:0", auth_);
  ASSERT_TRUE(exporter.ok()) << exporter.status();
  (*exporter)->SetServing(ServingState::kServing);
  const std::string addr = (*exporter)->bound_address();
  EXPECT_THAT(RawGet(addr, "GET", "/serving"), StartsWith("HTTP/1.1 200 OK"));
  // A wrong password is not even looked at.
  EXPECT_THAT(RawGet(addr, "GET", "/serving", Basic("scraper", "no")),
              StartsWith("HTTP/1.1 200 OK"));
  // Everything else still asks.
  EXPECT_THAT(RawGet(addr, "GET", "/metrics"),
              StartsWith("HTTP/1.1 401 Unauthorized\r\n"));
  EXPECT_THAT(RawGet(addr, "GET", "/serving/courier"),
              StartsWith("HTTP/1.1 401 Unauthorized\r\n"));
}

TEST(MetricsExporterPagesTest, AddressInUseIsUnavailable) {
  auto first = MetricsExporter::Start("127.0.0.1:0");
  ASSERT_TRUE(first.ok()) << first.status();
  auto second = MetricsExporter::Start((*first)->bound_address());
  EXPECT_EQ(second.status().code(), absl::StatusCode::kUnavailable);
  EXPECT_THAT(second.status().message(), HasSubstr("cannot serve metrics on"));
}

}  // namespace
}  // namespace plumbline::daemon
