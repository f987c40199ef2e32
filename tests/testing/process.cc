// File: tests/testing/process.cc
#include "tests/testing/process.h"

#include <fcntl.h>
#include <grpcpp/create_channel.h>
#include <grpcpp/security/credentials.h>
#include <signal.h>
#include <stdlib.h>
#include <sys/prctl.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cerrno>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <thread>

#include "absl/strings/match.h"
#include "absl/strings/numbers.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_split.h"
#include "absl/strings/strip.h"
#include "absl/time/clock.h"
#include "absl/time/time.h"

namespace plumbline::daemon::testing {
namespace {

// Decodes a waitpid status into an exit code or -signal.
int DecodeStatus(int status) {
  if (WIFEXITED(status)) return WEXITSTATUS(status);
  if (WIFSIGNALED(status)) return -WTERMSIG(status);
  return -1000;
}

}  // namespace

absl::StatusOr<pid_t> Spawn(const std::vector<std::string>& argv,
                            const SpawnOptions& options) {
  std::vector<char*> args;
  for (const std::string& arg : argv)
    args.push_back(const_cast<char*>(arg.c_str()));
  args.push_back(nullptr);
  // Everything the child needs is made before fork: between fork and exec
  // it makes only async-signal-safe calls (the test process has gRPC
  // threads, whose locks a forked child may find held).
  const int flags = O_WRONLY | O_CREAT | (options.append ? O_APPEND : O_TRUNC);
  const char* out = options.out_path.c_str();
  const char* err = options.err_path.c_str();
  const bool same = options.out_path == options.err_path;
  const char* cwd = options.cwd.empty() ? nullptr : options.cwd.c_str();
  struct sigaction dfl {};
  dfl.sa_handler = SIG_DFL;
  sigemptyset(&dfl.sa_mask);
  sigset_t none;
  sigemptyset(&none);
  const pid_t parent = getpid();
  const pid_t pid = fork();
  if (pid < 0)
    return absl::ErrnoToStatus(errno, absl::StrCat("cannot start ", argv[0]));
  if (pid == 0) {
    // SIGKILL when the parent dies (a crashed test, or one ctest killed at
    // its timeout), so no plumbd or server outlives its test. The kernel
    // sends it when the forking *thread* ends: tests start children that
    // must outlive a call from their main thread.
    if (prctl(PR_SET_PDEATHSIG, SIGKILL) != 0 || getppid() != parent)
      _exit(126);
    const int in_fd = open("/dev/null", O_RDONLY);
    const int out_fd = open(out, flags, 0644);
    const int err_fd = same ? out_fd : open(err, flags, 0644);
    if (in_fd < 0 || out_fd < 0 || err_fd < 0 || dup2(in_fd, 0) < 0 ||
        dup2(out_fd, 1) < 0 || dup2(err_fd, 2) < 0) {
      _exit(126);
    }
    if (cwd != nullptr && chdir(cwd) != 0) _exit(126);
    // The default disposition and no blocked signals, whatever the test
    // process set (plumbd waits for SIGTERM and SIGHUP itself).
    for (int sig : {SIGHUP, SIGTERM, SIGINT, SIGPIPE})
      sigaction(sig, &dfl, nullptr);
    sigprocmask(SIG_SETMASK, &none, nullptr);
    execv(args[0], args.data());
    _exit(127);
  }
  return pid;
}

TempDir::TempDir() {
  const char* base = std::getenv("TMPDIR");
  std::string pattern =
      absl::StrCat(base != nullptr && *base != '\0' ? base : "/tmp",
                   "/plumbline-daemon-test-XXXXXX");
  if (mkdtemp(pattern.data()) == nullptr) std::abort();
  path_ = pattern;
}

TempDir::~TempDir() {
  std::error_code ec;
  std::filesystem::remove_all(path_, ec);
}

std::string TempDir::File(absl::string_view name) const {
  return absl::StrCat(path_, "/", name);
}

absl::Status WriteTextFile(const std::string& path, absl::string_view text) {
  std::ofstream out(path, std::ios::binary | std::ios::trunc);
  out.write(text.data(), static_cast<std::streamsize>(text.size()));
  out.close();
  if (!out) return absl::InternalError(absl::StrCat("cannot write ", path));
  return absl::OkStatus();
}

std::string ReadTextFile(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  std::ostringstream buffer;
  buffer << in.rdbuf();
  return buffer.str();
}

bool PollUntil(const std::function<bool()>& condition) {
  const absl::Time give_up = absl::Now() + absl::Seconds(30);
  while (!condition()) {
    if (absl::Now() > give_up) return false;
    absl::SleepFor(absl::Milliseconds(20));
  }
  return true;
}

absl::StatusOr<ProcessResult> RunProcess(const std::vector<std::string>& argv,
                                         const std::string& scratch_dir) {
  static int counter = 0;
  ++counter;
  const std::string out_path =
      absl::StrCat(scratch_dir, "/run", counter, ".out");
  const std::string err_path =
      absl::StrCat(scratch_dir, "/run", counter, ".err");
  absl::StatusOr<pid_t> pid =
      Spawn(argv, {out_path, err_path, /*cwd=*/"", /*append=*/false});
  if (!pid.ok()) return pid.status();
  int status = 0;
  while (waitpid(*pid, &status, 0) < 0) {
    if (errno != EINTR) return absl::ErrnoToStatus(errno, "waitpid");
  }
  ProcessResult result;
  result.exit_code = DecodeStatus(status);
  result.out = ReadTextFile(out_path);
  result.err = ReadTextFile(err_path);
  return result;
}

absl::StatusOr<std::unique_ptr<PlumbdProcess>> PlumbdProcess::Start(
    const std::string& work_dir, const std::vector<std::string>& args) {
  return StartBinary(PLUMBD_PATH, work_dir, args);
}

absl::StatusOr<std::unique_ptr<PlumbdProcess>> PlumbdProcess::StartBinary(
    const std::string& binary, const std::string& work_dir,
    const std::vector<std::string>& args) {
  const std::string ready_file = absl::StrCat(work_dir, "/plumbd.ready");
  const std::string log_path = absl::StrCat(work_dir, "/plumbd.log");
  std::filesystem::remove(ready_file);
  std::vector<std::string> argv = {binary, "--listen", "127.0.0.1:0",
                                   "--ready_file", ready_file};
  argv.insert(argv.end(), args.begin(), args.end());
  absl::StatusOr<pid_t> pid =
      Spawn(argv, {log_path, log_path, work_dir, /*append=*/false});
  if (!pid.ok()) return pid.status();
  std::unique_ptr<PlumbdProcess> process(new PlumbdProcess(*pid, log_path));

  bool died = false;
  const bool ready = PollUntil([&] {
    int status = 0;
    if (waitpid(process->pid_, &status, WNOHANG) == process->pid_) {
      process->exited_ = true;
      process->exit_status_ = DecodeStatus(status);
      died = true;
      return true;
    }
    return std::filesystem::exists(ready_file);
  });
  if (died || !ready) {
    return absl::InternalError(absl::StrCat("plumbd did not become ready",
                                            died ? " (it exited)" : "",
                                            "; its log:\n", process->Log()));
  }
  process->addr_ =
      std::string(absl::StripAsciiWhitespace(ReadTextFile(ready_file)));
  return process;
}

PlumbdProcess::~PlumbdProcess() {
  if (exited_) return;
  kill(pid_, SIGKILL);
  int status = 0;
  waitpid(pid_, &status, 0);
}

void PlumbdProcess::Signal(int signal_number) const {
  if (!exited_) kill(pid_, signal_number);
}

absl::StatusOr<int> PlumbdProcess::WaitForExit() {
  if (exited_) return exit_status_;
  const bool done = PollUntil([&] {
    int status = 0;
    if (waitpid(pid_, &status, WNOHANG) != pid_) return false;
    exited_ = true;
    exit_status_ = DecodeStatus(status);
    return true;
  });
  if (!done) return absl::DeadlineExceededError("plumbd did not exit");
  return exit_status_;
}

std::string PlumbdProcess::Log() const { return ReadTextFile(log_path_); }

std::string PlumbdProcess::MetricsAddress() const {
  for (absl::string_view line : absl::StrSplit(Log(), '\n')) {
    if (!absl::StrContains(line, "event=metrics_listening")) continue;
    const size_t at = line.find("addr=");
    if (at == absl::string_view::npos) continue;
    absl::string_view addr = line.substr(at + 5);
    return std::string(addr.substr(0, addr.find(' ')));
  }
  return "";
}

int PlumbdProcess::CountLogLines(absl::string_view needle) const {
  int count = 0;
  for (absl::string_view line : absl::StrSplit(Log(), '\n')) {
    if (absl::StrContains(line, needle)) ++count;
  }
  return count;
}

int64_t RssKib(pid_t pid) {
  std::ifstream in(absl::StrCat("/proc/", pid, "/status"));
  std::string line;
  while (std::getline(in, line)) {
    if (!absl::StartsWith(line, "VmRSS:")) continue;
    std::vector<absl::string_view> parts =
        absl::StrSplit(line, ' ', absl::SkipEmpty());
    int64_t kib = 0;
    if (parts.size() >= 2 && absl::SimpleAtoi(parts[1], &kib)) return kib;
  }
  return -1;
}

std::unique_ptr<v1::Scoring::Stub> NewScoringStub(const std::string& addr) {
  return v1::Scoring::NewStub(
      grpc::CreateChannel(addr, grpc::InsecureChannelCredentials()));
}

std::unique_ptr<v1::Outcomes::Stub> NewOutcomesStub(const std::string& addr) {
  return v1::Outcomes::NewStub(
      grpc::CreateChannel(addr, grpc::InsecureChannelCredentials()));
}

std::unique_ptr<grpc::health::v1::Health::Stub> NewHealthStub(
    const std::string& addr) {
  return grpc::health::v1::Health::NewStub(
      grpc::CreateChannel(addr, grpc::InsecureChannelCredentials()));
}

}  // namespace plumbline::daemon::testing
