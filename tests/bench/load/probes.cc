// File: tests/bench/load/probes.cc
#include "tests/bench/load/probes.h"

#include <fcntl.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <cmath>
#include <cstring>
#include <optional>
#include <vector>

#include "absl/strings/numbers.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_split.h"
#include "absl/strings/string_view.h"
#include "absl/time/clock.h"
#include "tests/testing/http.h"
#include "tests/testing/process.h"

namespace plumbline::bench {
namespace {

double At(const std::vector<double>& sorted, double q) {
  const size_t i = static_cast<size_t>(
      std::ceil(q * static_cast<double>(sorted.size())) - 1);
  return sorted[std::min(i, sorted.size() - 1)];
}

}  // namespace

absl::StatusOr<double> ProcessCpuSeconds(pid_t pid) {
  const std::string path = absl::StrCat("/proc/", pid, "/stat");
  const std::string stat = daemon::testing::ReadTextFile(path);
  // The command name (field 2) is in parentheses and may hold spaces; the
  // fields after its closing parenthesis start with field 3 (state).
  const size_t close = stat.rfind(')');
  if (close == std::string::npos) {
    return absl::NotFoundError(absl::StrCat("cannot read ", path));
  }
  std::vector<absl::string_view> fields = absl::StrSplit(
      absl::string_view(stat).substr(close + 1), ' ', absl::SkipEmpty());
  // utime and stime are fields 14 and 15, i.e. 11 and 12 after field 3.
  uint64_t utime = 0;
  uint64_t stime = 0;
  if (fields.size() < 13 || !absl::SimpleAtoi(fields[11], &utime) ||
      !absl::SimpleAtoi(fields[12], &stime)) {
    return absl::DataLossError(absl::StrCat("unexpected ", path));
  }
  return static_cast<double>(utime + stime) /
         static_cast<double>(sysconf(_SC_CLK_TCK));
}

absl::StatusOr<LedgerCounters> ScrapeLedgerCounters(
    const std::string& metrics_addr) {
  absl::StatusOr<std::string> body =
      daemon::testing::HttpGet(metrics_addr, "/metrics");
  if (!body.ok()) return body.status();
  const std::vector<daemon::testing::Sample> samples =
      daemon::testing::ParseExposition(*body);
  const std::optional<double> commits = daemon::testing::FindSample(
      samples, "plumbline_ledger_commit_duration_seconds_count", {});
  const std::optional<double> rows = daemon::testing::FindSample(
      samples, "plumbline_ledger_committed_rows_total", {});
  if (!commits || !rows) {
    return absl::NotFoundError(
        absl::StrCat("no plumbline_ledger_commit_duration_seconds_count or "
                     "plumbline_ledger_committed_rows_total on http://",
                     metrics_addr, "/metrics"));
  }
  return LedgerCounters{*commits, *rows};
}

absl::StatusOr<SyncTimes> ProbeFdatasync(const std::string& dir,
                                         int iterations) {
  const std::string path = absl::StrCat(dir, "/fdatasync_probe.tmp");
  const int fd = open(path.c_str(), O_WRONLY | O_CREAT | O_TRUNC, 0600);
  if (fd < 0) {
    return absl::UnavailableError(
        absl::StrCat("cannot create ", path, ": ", std::strerror(errno)));
  }
  const std::string page(4096, 'p');
  std::vector<double> us;
  absl::Status status;
  for (int i = 0; i < iterations && status.ok(); ++i) {
    const absl::Time start = absl::Now();
    if (write(fd, page.data(), page.size()) !=
        static_cast<ssize_t>(page.size())) {
      status = absl::UnavailableError(
          absl::StrCat("write to ", path, ": ", std::strerror(errno)));
    } else if (fdatasync(fd) != 0) {
      status = absl::UnavailableError(
          absl::StrCat("fdatasync of ", path, ": ", std::strerror(errno)));
    }
    us.push_back(absl::ToDoubleMicroseconds(absl::Now() - start));
  }
  close(fd);
  unlink(path.c_str());
  if (!status.ok()) return status;
  if (us.empty()) return absl::InvalidArgumentError("no iterations");
  std::sort(us.begin(), us.end());
  return SyncTimes{iterations, At(us, 0.5), At(us, 0.99), us.back()};
}

}  // namespace plumbline::bench
