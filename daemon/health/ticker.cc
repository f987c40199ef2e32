// File: daemon/health/ticker.cc
#include "daemon/health/ticker.h"

#include <utility>

namespace plumbline::daemon {

HealthTicker::HealthTicker(absl::Duration period, std::function<void()> tick)
    : thread_([this, period, tick = std::move(tick)] {
        while (!stop_.WaitForNotificationWithTimeout(period)) tick();
      }) {}

HealthTicker::~HealthTicker() { Stop(); }

void HealthTicker::Stop() {
  absl::MutexLock lock(&join_mu_);
  if (!stop_.HasBeenNotified()) stop_.Notify();
  if (thread_.joinable()) thread_.join();
}

}  // namespace plumbline::daemon
