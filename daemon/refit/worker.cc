// File: daemon/refit/worker.cc
#include "daemon/refit/worker.h"

#include <sys/resource.h>
#include <sys/syscall.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>
#include <utility>

#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_join.h"
#include "daemon/util/event_log.h"
#include "daemon/util/time.h"

namespace plumbline::daemon {
namespace {

// Nice value of the refit thread (the request path keeps 0).
constexpr int kRefitNice = 10;

}  // namespace

RefitWorker::RefitWorker(RefitRunner* runner, prometheus::Registry* metrics,
                         std::function<absl::Time()> now)
    : runner_(runner),
      now_(std::move(now)),
      started_(now_()),
      next_id_(runner->LastJobId() + 1) {
  if (metrics != nullptr) {
    jobs_metric_ = &prometheus::BuildCounter()
                        .Name("plumbline_refit_jobs_total")
                        .Help(
                            "Refit jobs finished, by set and result: "
                            "promoted, proposed (waiting for approval), "
                            "not_better (lost on the holdout) or failed.")
                        .Register(*metrics);
  }
  thread_ = std::thread([this] { Loop(); });
}

RefitWorker::~RefitWorker() {
  {
    absl::MutexLock lock(&mu_);
    stopping_ = true;
    for (const std::shared_ptr<Job>& job : queue_) {
      job->outcome.result = RefitOutcome::Result::kFailed;
      job->outcome.summary = "plumbd is shutting down; the job did not run";
      job->done = true;
    }
    queue_.clear();
  }
  thread_.join();
}

std::shared_ptr<RefitWorker::Job> RefitWorker::Enqueue(RefitTrigger trigger) {
  auto job = std::make_shared<Job>();
  job->id = next_id_++;
  pending_.insert(trigger.set);
  if (!trigger.evidence) {
    if (auto it = last_health_.find(trigger.set); it != last_health_.end()) {
      trigger.evidence = it->second;
    }
  }
  job->trigger = std::move(trigger);
  queue_.push_back(job);
  LogEvent(LogLevel::kInfo, "refit_queued",
           {{"set", job->trigger.set},
            {"job", absl::StrCat(job->id)},
            {"trigger", std::string(RefitTriggerName(job->trigger.kind))}});
  return job;
}

int RefitWorker::OnEvaluated(const std::vector<v1::SetHealth>& health,
                             const std::vector<SetVersion>& active_versions) {
  const RefitSettings& settings = runner_->settings();
  const absl::Time now = now_();
  absl::MutexLock lock(&mu_);
  for (const v1::SetHealth& h : health) {
    for (const SetVersion& a : active_versions) {
      if (a.set == h.set() && a.version == h.version()) {
        last_health_[h.set()] = h;
      }
    }
  }
  if (settings.mode == v1::RefitPolicy::OFF) return 0;
  if (stopping_) return 0;
  int queued = 0;
  for (const v1::SetHealth& h : health) {
    // Only the active version's state starts a refit, not a shadow's.
    const SetVersion key{h.set(), h.version()};
    bool active = false;
    for (const SetVersion& a : active_versions) active = active || a == key;
    if (!active) continue;
    // The onset: the change began after the last evaluation that found the
    // version steady and by the first that found it out of `steady` (at
    // least one tick later, when some of the new world's records are
    // already scored); the onset is the earlier end, so that the window
    // holds every record scored since the world was last seen steady.
    // min_new_labelled counts from the first evaluation that finds it
    // drifting after the set's last job ended.
    const absl::Time evaluated =
        h.has_evaluated_at()
            ? FromTimestamp(h.evaluated_at(), "evaluated_at").value_or(now)
            : now;
    if (h.state() == v1::STEADY) {
      drift_marks_.erase(key);
      last_steady_[key] = evaluated;
    } else {
      auto [mark, fresh_mark] = drift_marks_.try_emplace(key);
      if (fresh_mark) {
        auto steady = last_steady_.find(key);
        mark->second.onset =
            steady != last_steady_.end() ? steady->second : evaluated;
      }
      if (h.state() == v1::DRIFTING && settings.min_new_labelled > 0 &&
          !mark->second.labelled.has_value()) {
        mark->second.labelled = h.labelled_since_start();
        LogEvent(
            LogLevel::kInfo, "refit_waits_for_labels",
            {{"set", h.set()},
             {"version", h.version()},
             {"new_labelled_needed", absl::StrCat(settings.min_new_labelled)}});
      }
    }
    if (pending_.contains(h.set())) continue;
    if (h.state() != v1::DRIFTING &&
        settings.schedule == absl::ZeroDuration()) {
      continue;
    }
    if (runner_->HasWaitingCandidate(h.set())) continue;
    if (settings.schedule > absl::ZeroDuration()) {
      auto [it, inserted] = last_scheduled_.try_emplace(h.set(), started_);
      if (now - it->second >= settings.schedule) {
        it->second = now;
        Enqueue({h.set(), RefitTriggerKind::kSchedule, "",
                 absl::StrCat("scheduled every ",
                              absl::FormatDuration(settings.schedule)),
                 std::nullopt});
        ++queued;
        continue;
      }
    }
    if (h.state() != v1::DRIFTING) continue;
    if (auto it = last_ended_.find(h.set());
        it != last_ended_.end() && now - it->second < settings.cooldown) {
      continue;
    }
    int64_t fresh = 0;  // outcomes since the mark (min_new_labelled > 0)
    if (settings.min_new_labelled > 0) {
      fresh = h.labelled_since_start() -
              drift_marks_[key].labelled.value_or(h.labelled_since_start());
      if (fresh < settings.min_new_labelled) continue;
    }
    std::vector<std::string> reasons;
    for (const v1::DriftReason& r : h.reasons()) {
      if (r.state() == v1::DRIFTING) reasons.push_back(r.text());
    }
    if (settings.min_new_labelled > 0) {
      reasons.push_back(
          absl::StrCat(fresh, " new outcomes since the drift was seen"));
    }
    Enqueue({h.set(), RefitTriggerKind::kDrift, "",
             absl::StrCat("drifting: ", absl::StrJoin(reasons, "; ")),
             std::nullopt, drift_marks_[key].onset});
    ++queued;
  }
  return queued;
}

RefitOutcome RefitWorker::RunNow(RefitTrigger trigger) {
  absl::MutexLock lock(&mu_);
  if (stopping_) {
    return {RefitOutcome::Result::kFailed, std::nullopt,
            "plumbd is shutting down", 0, ""};
  }
  std::shared_ptr<Job> job = Enqueue(std::move(trigger));
  mu_.Await(absl::Condition(
      +[](Job* j) { return j->done; }, job.get()));
  return job->outcome;
}

int64_t RefitWorker::finished() const {
  absl::MutexLock lock(&mu_);
  return finished_;
}

void RefitWorker::Loop() {
  // Refits yield the CPU to the request path: on Linux the nice value is per
  // thread, so only this thread runs at the lower priority. Failure (e.g. a
  // sandbox that forbids it) only costs that preference.
  if (setpriority(PRIO_PROCESS, static_cast<id_t>(syscall(SYS_gettid)),
                  kRefitNice) != 0) {
    LogEvent(LogLevel::kWarning, "refit_priority_unchanged",
             {{"error", std::strerror(errno)}});
  }
  for (;;) {
    std::shared_ptr<Job> job;
    {
      absl::MutexLock lock(&mu_);
      mu_.Await(absl::Condition(
          +[](RefitWorker* w) {
            w->mu_.AssertHeld();  // Await calls it with mu_ held
            return w->stopping_ || !w->queue_.empty();
          },
          this));
      if (stopping_) return;
      job = queue_.front();
      queue_.pop_front();
    }
    RefitOutcome outcome = runner_->Run(job->trigger, job->id);
    if (jobs_metric_ != nullptr) {
      jobs_metric_
          ->Add({{"set", job->trigger.set},
                 {"result", std::string(RefitResultName(outcome.result))}})
          .Increment();
    }
    absl::MutexLock lock(&mu_);
    pending_.erase(job->trigger.set);
    last_ended_[job->trigger.set] = now_();
    // A new drift-started job counts its labels from after this one; the
    // onset stays (the change began when it began).
    for (auto& [key, mark] : drift_marks_) {
      if (key.set == job->trigger.set) mark.labelled.reset();
    }
    ++finished_;
    job->outcome = std::move(outcome);
    job->done = true;
  }
}

}  // namespace plumbline::daemon
