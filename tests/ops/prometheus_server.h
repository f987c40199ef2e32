// File: tests/ops/prometheus_server.h
//
// Test-only: runs Debian's `prometheus` server as a child process on a free
// loopback port with its storage in a test's temp directory, waits until it
// reports ready, and stops it when the object goes away, however the test
// ends (SIGTERM, then SIGKILL if it does not exit; if the test process
// itself dies, the kernel kills the server: PR_SET_PDEATHSIG).
//
//   auto server = PrometheusServer::Start("/usr/bin/prometheus", config, dir);
//   absl::StatusOr<std::string> alerts =
//       HttpGet((*server)->addr(), "/api/v1/alerts");
//
// Not thread-safe; one test thread drives each object.
#ifndef PLUMBLINE_TESTS_OPS_PROMETHEUS_SERVER_H_
#define PLUMBLINE_TESTS_OPS_PROMETHEUS_SERVER_H_

#include <sys/types.h>

#include <memory>
#include <string>

#include "absl/status/statusor.h"

namespace plumbline::ops::testing {

class PrometheusServer {
 public:
  // Starts `binary` with --config.file=`config_file`, storage under
  // `work_dir`/data and --web.listen-address on a free 127.0.0.1 port; its
  // output goes to `work_dir`/prometheus.log. Returns once /-/ready answers
  // 200, or an error carrying the log if it exits or never gets ready.
  // REQUIRES: `work_dir` exists and outlives the server.
  static absl::StatusOr<std::unique_ptr<PrometheusServer>> Start(
      const std::string& binary, const std::string& config_file,
      const std::string& work_dir);

  // Stops the server (see the file comment).
  ~PrometheusServer();
  PrometheusServer(const PrometheusServer&) = delete;
  PrometheusServer& operator=(const PrometheusServer&) = delete;

  // 127.0.0.1:PORT of its web API.
  const std::string& addr() const { return addr_; }
  // Everything the server logged so far.
  std::string Log() const;

 private:
  PrometheusServer(pid_t pid, std::string addr, std::string log_path)
      : pid_(pid), addr_(std::move(addr)), log_path_(std::move(log_path)) {}

  // Whether the child has exited (reaped); non-blocking.
  bool Exited();

  pid_t pid_;
  bool exited_ = false;
  std::string addr_;
  std::string log_path_;
};

// A TCP port on 127.0.0.1 that was free a moment ago (bound to port 0, read
// back, closed). Another process may take it before the caller binds it.
absl::StatusOr<int> PickFreeLoopbackPort();

}  // namespace plumbline::ops::testing

#endif  // PLUMBLINE_TESTS_OPS_PROMETHEUS_SERVER_H_
