// File: daemon/server/signals.h
//
// plumbd's signal handling without async handlers: SIGHUP, SIGTERM and SIGINT
// are blocked in every thread (call BlockDaemonSignals at the top of main,
// before any thread starts, so the threads gRPC creates inherit the mask) and
// one dedicated thread takes them with sigwait.
//
// Thread-safe: BlockDaemonSignals must run before other threads exist;
// WaitForDaemonSignal is meant for one thread.
#ifndef PLUMBLINE_DAEMON_SERVER_SIGNALS_H_
#define PLUMBLINE_DAEMON_SERVER_SIGNALS_H_

#include "absl/status/status.h"
#include "absl/status/statusor.h"

namespace plumbline::daemon {

// Blocks SIGHUP, SIGTERM and SIGINT in the calling thread (and so in every
// thread created after it).
absl::Status BlockDaemonSignals();

// Waits for one of the blocked signals and returns its number.
// REQUIRES: BlockDaemonSignals() was called.
absl::StatusOr<int> WaitForDaemonSignal();

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SERVER_SIGNALS_H_
