// File: daemon/health/ticker.h
//
// The monitor's own thread: calls a function every `period` (plumbd passes
// "sync the loaded versions, then evaluate"; the period is the drift
// policy's tick_seconds) until it is stopped. The first call comes one
// period after Start; plumbd evaluates once itself before serving.
//
//   HealthTicker ticker(policy.tick(), [&] {
//     monitor->SyncPlans(registry.All());
//     monitor->Evaluate();
//   });
//   ...
//   ticker.Stop();  // or let the destructor stop it
//
// Thread-safe: Stop may be called from any thread, more than once; it waits
// for a call in progress to finish.
#ifndef PLUMBLINE_DAEMON_HEALTH_TICKER_H_
#define PLUMBLINE_DAEMON_HEALTH_TICKER_H_

#include <functional>
#include <thread>

#include "absl/synchronization/mutex.h"
#include "absl/synchronization/notification.h"
#include "absl/time/time.h"

namespace plumbline::daemon {

class HealthTicker {
 public:
  // Starts the thread. REQUIRES: period > 0.
  HealthTicker(absl::Duration period, std::function<void()> tick);
  ~HealthTicker();
  HealthTicker(const HealthTicker&) = delete;
  HealthTicker& operator=(const HealthTicker&) = delete;

  void Stop();

 private:
  absl::Notification stop_;
  absl::Mutex join_mu_;
  std::thread thread_;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_HEALTH_TICKER_H_
