// File: tests/ops/prometheus_server.cc
#include "tests/ops/prometheus_server.h"

#include <arpa/inet.h>
#include <fcntl.h>
#include <netinet/in.h>
#include <signal.h>
#include <sys/prctl.h>
#include <sys/socket.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cerrno>
#include <vector>

#include "absl/strings/str_cat.h"
#include "absl/time/clock.h"
#include "absl/time/time.h"
#include "tests/testing/http.h"
#include "tests/testing/process.h"

namespace plumbline::ops::testing {
namespace {

using daemon::testing::PollUntil;
using daemon::testing::Spawn;

// Attempts at a free port: another process may take the port between
// PickFreeLoopbackPort and the server's bind.
constexpr int kStartAttempts = 3;

}  // namespace

absl::StatusOr<int> PickFreeLoopbackPort() {
  const int fd = socket(AF_INET, SOCK_STREAM, 0);
  if (fd < 0) return absl::ErrnoToStatus(errno, "socket");
  sockaddr_in addr{};
  addr.sin_family = AF_INET;
  addr.sin_addr.s_addr = htonl(INADDR_LOOPBACK);
  addr.sin_port = 0;
  socklen_t len = sizeof(addr);
  if (bind(fd, reinterpret_cast<sockaddr*>(&addr), sizeof(addr)) != 0 ||
      getsockname(fd, reinterpret_cast<sockaddr*>(&addr), &len) != 0) {
    const int err = errno;
    close(fd);
    return absl::ErrnoToStatus(err, "bind 127.0.0.1:0");
  }
  close(fd);
  return static_cast<int>(ntohs(addr.sin_port));
}

absl::StatusOr<std::unique_ptr<PrometheusServer>> PrometheusServer::Start(
    const std::string& binary, const std::string& config_file,
    const std::string& work_dir) {
  const std::string log_path = absl::StrCat(work_dir, "/prometheus.log");
  std::string failures;
  for (int attempt = 0; attempt < kStartAttempts; ++attempt) {
    absl::StatusOr<int> port = PickFreeLoopbackPort();
    if (!port.ok()) return port.status();
    const std::string addr = absl::StrCat("127.0.0.1:", *port);
    absl::StatusOr<pid_t> pid =
        Spawn({binary, absl::StrCat("--config.file=", config_file),
               absl::StrCat("--storage.tsdb.path=", work_dir, "/data"),
               absl::StrCat("--web.listen-address=", addr)},
              {log_path, log_path, /*cwd=*/"", /*append=*/true});
    if (!pid.ok()) return pid.status();
    std::unique_ptr<PrometheusServer> server(
        new PrometheusServer(*pid, addr, log_path));
    const bool ready = PollUntil([&] {
      return server->Exited() ||
             daemon::testing::HttpGet(addr, "/-/ready").ok();
    });
    if (ready && !server->Exited()) return server;
    absl::StrAppend(&failures, "attempt ", attempt + 1, " on ", addr,
                    server->exited_ ? ": exited" : ": never ready", "\n");
    if (!server->exited_) break;  // not a port clash; retrying will not help
  }
  return absl::InternalError(
      absl::StrCat("prometheus did not become ready:\n", failures, "its log:\n",
                   daemon::testing::ReadTextFile(log_path)));
}

bool PrometheusServer::Exited() {
  if (exited_) return true;
  int status = 0;
  if (waitpid(pid_, &status, WNOHANG) == pid_) exited_ = true;
  return exited_;
}

PrometheusServer::~PrometheusServer() {
  if (Exited()) return;
  kill(pid_, SIGTERM);
  // A safety net for a server that ignores SIGTERM, not a speed check.
  const absl::Time give_up = absl::Now() + absl::Seconds(10);
  while (!Exited() && absl::Now() < give_up) {
    absl::SleepFor(absl::Milliseconds(20));
  }
  if (Exited()) return;
  kill(pid_, SIGKILL);
  int status = 0;
  waitpid(pid_, &status, 0);
}

std::string PrometheusServer::Log() const {
  return daemon::testing::ReadTextFile(log_path_);
}

}  // namespace plumbline::ops::testing
