// File: daemon/set_registry.h
//
// The set registry: every coefficient set the daemon serves, by name, loaded
// from the *.json files of one directory. Lookups hand out
// std::shared_ptr<const ScoringPlan> snapshots, so a request in flight keeps
// scoring on the version it started with while a reload swaps in another.
//
// Reload rules (plumbd calls Reload at startup and on SIGHUP):
//   - every *.json file of the directory is read and compiled;
//   - a file that fails to parse or validate is rejected (logged with the
//     file and the error) and the version it loaded before keeps serving;
//   - two files with the same set name: the file that already serves the
//     name keeps it, otherwise the first in file-name order; the other is
//     rejected and logged;
//   - a loaded set that no file provides any more is unloaded (logged).
//
//   SetRegistry registry("./sets");
//   absl::StatusOr<ReloadReport> report = registry.Reload();
//   std::shared_ptr<const scorer::ScoringPlan> plan = registry.Find("courier");
//
// Thread-safe: lookups and reloads may run concurrently from any thread.
#ifndef PLUMBLINE_DAEMON_SET_REGISTRY_H_
#define PLUMBLINE_DAEMON_SET_REGISTRY_H_

#include <map>
#include <memory>
#include <string>
#include <vector>

#include "absl/base/thread_annotations.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "absl/synchronization/mutex.h"
#include "scorer/scoring_plan.h"

namespace plumbline::daemon {

using PlanPtr = std::shared_ptr<const scorer::ScoringPlan>;

// What one Reload changed. Names are sorted.
struct ReloadReport {
  // Sets loaded for the first time or replaced by a newly read file.
  std::vector<std::string> loaded;
  // Sets that no longer exist.
  std::vector<std::string> unloaded;
  // Files refused (parse/validation error or duplicate name).
  std::vector<std::string> rejected_files;
  // Sets that stay on their previous version because their file was refused.
  std::vector<std::string> kept;
};

class SetRegistry {
 public:
  explicit SetRegistry(std::string sets_dir);

  SetRegistry(const SetRegistry&) = delete;
  SetRegistry& operator=(const SetRegistry&) = delete;

  // Re-reads the directory and swaps in the result (see the rules above).
  // Fails without changing anything only if the directory cannot be listed.
  absl::StatusOr<ReloadReport> Reload();

  // The current version of `name`, or nullptr.
  PlanPtr Find(absl::string_view name) const;

  // All loaded sets, sorted by name.
  std::vector<PlanPtr> All() const;

  // Loaded set names, sorted.
  std::vector<std::string> Names() const;

  const std::string& sets_dir() const { return sets_dir_; }

 private:
  // Constant after construction.
  const std::string sets_dir_;

  // Serializes reloads so two never interleave their reads and swaps.
  absl::Mutex reload_mu_;

  // Guarded by mu_.
  mutable absl::Mutex mu_ ABSL_ACQUIRED_AFTER(reload_mu_);
  std::map<std::string, PlanPtr, std::less<>> plans_ ABSL_GUARDED_BY(mu_);
};

// Reads and compiles one set file; errors name the file.
absl::StatusOr<PlanPtr> LoadSetFile(const std::string& path);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SET_REGISTRY_H_
