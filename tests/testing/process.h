// File: tests/testing/process.h
//
// Test-only helpers to run the real binaries: temp directories, a plumbd
// child process started on an ephemeral port (found through --ready_file)
// and killed when the test ends however it ends, and one-shot runs of
// plumbctl with captured output.
//
//   TempDir dir;
//   auto plumbd = PlumbdProcess::Start(dir.path(), {"--sets", sets_dir});
//   auto stub = NewScoringStub((*plumbd)->addr());
//
// Not thread-safe; one test thread drives each object.
#ifndef PLUMBLINE_TESTS_TESTING_PROCESS_H_
#define PLUMBLINE_TESTS_TESTING_PROCESS_H_

#include <sys/types.h>

#include <cstdint>
#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "grpc/health/v1/health.grpc.pb.h"
#include "plumbline/v1/outcomes.grpc.pb.h"
#include "plumbline/v1/scoring.grpc.pb.h"

namespace plumbline::daemon::testing {

// A fresh directory under $TMPDIR (or /tmp), removed with its contents by the
// destructor.
class TempDir {
 public:
  TempDir();
  ~TempDir();
  TempDir(const TempDir&) = delete;
  TempDir& operator=(const TempDir&) = delete;

  const std::string& path() const { return path_; }
  // path() + "/" + name.
  std::string File(absl::string_view name) const;

 private:
  std::string path_;
};

absl::Status WriteTextFile(const std::string& path, absl::string_view text);
std::string ReadTextFile(const std::string& path);  // "" if unreadable

struct SpawnOptions {
  std::string out_path;  // the child's stdout
  std::string err_path;  // its stderr; may equal out_path
  std::string cwd;       // empty: the test's
  bool append = false;   // append to the files instead of truncating them
};

// Starts `argv` (argv[0] a path; the environment is the test's) with stdin
// from /dev/null, the default disposition for every signal and none
// blocked. The child is killed (SIGKILL) when the thread that started it
// ends, so a test that crashes or is killed leaves no process behind.
absl::StatusOr<pid_t> Spawn(const std::vector<std::string>& argv,
                            const SpawnOptions& options);

// Calls `condition` every 20 ms until it returns true. Gives up after 30 s:
// a safety net so a broken daemon fails the test instead of hanging it, not
// a speed requirement.
bool PollUntil(const std::function<bool()>& condition);

struct ProcessResult {
  int exit_code = -1;  // -N if killed by signal N
  std::string out;
  std::string err;
};

// Runs `argv` to completion; stdout and stderr go through files in
// `scratch_dir`.
absl::StatusOr<ProcessResult> RunProcess(const std::vector<std::string>& argv,
                                         const std::string& scratch_dir);

class PlumbdProcess {
 public:
  // Starts PLUMBD_PATH with `args` plus --listen 127.0.0.1:0 and
  // --ready_file in `work_dir` (also its working directory and the home of
  // its log), and waits until it serves.
  static absl::StatusOr<std::unique_ptr<PlumbdProcess>> Start(
      const std::string& work_dir, const std::vector<std::string>& args);
  // The same with another plumbd binary (an installed one).
  static absl::StatusOr<std::unique_ptr<PlumbdProcess>> StartBinary(
      const std::string& binary, const std::string& work_dir,
      const std::vector<std::string>& args);

  // Kills the daemon (SIGKILL) if it is still running.
  ~PlumbdProcess();
  PlumbdProcess(const PlumbdProcess&) = delete;
  PlumbdProcess& operator=(const PlumbdProcess&) = delete;

  const std::string& addr() const { return addr_; }
  // The daemon's process id (for /proc/PID reads).
  pid_t pid() const { return pid_; }
  void Signal(int signal_number) const;
  // Waits for the daemon to exit: its exit status, or -N if killed by N.
  absl::StatusOr<int> WaitForExit();
  // Everything the daemon wrote to stderr (and stdout) so far.
  std::string Log() const;
  // Number of log lines containing `needle`.
  int CountLogLines(absl::string_view needle) const;
  // HOST:PORT of the metrics endpoint, from the "event=metrics_listening
  // addr=..." log line (key=value log format); "" before that line.
  std::string MetricsAddress() const;

 private:
  PlumbdProcess(pid_t pid, std::string log_path)
      : pid_(pid), log_path_(std::move(log_path)) {}

  pid_t pid_;
  bool exited_ = false;
  int exit_status_ = 0;
  std::string log_path_;
  std::string addr_;
};

// Resident memory of process `pid` in KiB (VmRSS of /proc/PID/status); -1
// when it cannot be read (the process is gone).
int64_t RssKib(pid_t pid);

// True when this test (and so the plumbd of its tree, PLUMBD_PATH) is built
// with AddressSanitizer, whose shadow memory and quarantine of freed blocks
// (256 MiB by default) make VmRSS grow with every allocation: memory bounds
// measured on the plain build do not hold there.
constexpr bool kBuiltWithAddressSanitizer =
#if defined(__has_feature)
#if __has_feature(address_sanitizer)
    true;
#else
    false;
#endif
#else
    false;
#endif

std::unique_ptr<v1::Scoring::Stub> NewScoringStub(const std::string& addr);
std::unique_ptr<v1::Outcomes::Stub> NewOutcomesStub(const std::string& addr);
std::unique_ptr<grpc::health::v1::Health::Stub> NewHealthStub(
    const std::string& addr);

}  // namespace plumbline::daemon::testing

#endif  // PLUMBLINE_TESTS_TESTING_PROCESS_H_
