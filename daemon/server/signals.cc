// File: daemon/server/signals.cc
#include "daemon/server/signals.h"

#include <pthread.h>
#include <signal.h>

#include <cerrno>

namespace plumbline::daemon {
namespace {

sigset_t DaemonSignals() {
  sigset_t set;
  sigemptyset(&set);
  sigaddset(&set, SIGHUP);
  sigaddset(&set, SIGTERM);
  sigaddset(&set, SIGINT);
  return set;
}

}  // namespace

absl::Status BlockDaemonSignals() {
  const sigset_t set = DaemonSignals();
  const int err = pthread_sigmask(SIG_BLOCK, &set, nullptr);
  if (err != 0) return absl::ErrnoToStatus(err, "pthread_sigmask");
  return absl::OkStatus();
}

absl::StatusOr<int> WaitForDaemonSignal() {
  const sigset_t set = DaemonSignals();
  int signal_number = 0;
  const int err = sigwait(&set, &signal_number);
  if (err != 0) return absl::ErrnoToStatus(err, "sigwait");
  return signal_number;
}

}  // namespace plumbline::daemon
