// File: daemon/scoring/set_registry.h
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
//   - a *.json entry that is not a readable regular file (a directory, a
//     broken symbolic link) is skipped with a log line naming it
//     (event=set_file_skipped) and counts as rejected;
//   - two files with the same set name: the file that already serves the
//     name keeps it, otherwise the first in file-name order; the other is
//     rejected and logged;
//   - a loaded set that no file provides any more is unloaded (logged).
//
// With a VersionResolver (plumbd's lifecycle, daemon/lifecycle.h), the files
// only propose: the resolver records new versions and says which version of
// each set is active and which are shadows; Refresh re-applies its decision
// after a change of state (activate, approve, rollback, shadow) without
// reading the directory again.
//
//   SetRegistry registry("./sets");
//   absl::StatusOr<ReloadReport> report = registry.Reload();
//   std::shared_ptr<const scorer::ScoringPlan> plan = registry.Find("courier");
//
// Thread-safe: lookups and reloads may run concurrently from any thread.
#ifndef PLUMBLINE_DAEMON_SCORING_SET_REGISTRY_H_
#define PLUMBLINE_DAEMON_SCORING_SET_REGISTRY_H_

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
using PlanMap = std::map<std::string, PlanPtr, std::less<>>;

// What serves under one set name: the active version, whose scores are
// returned, and shadow versions scored alongside it and never returned.
struct ServingSet {
  PlanPtr active;
  std::vector<PlanPtr> shadows;
};
using ServingMap = std::map<std::string, ServingSet, std::less<>>;

// Decides what serves from what the sets directory provides.
class VersionResolver {
 public:
  virtual ~VersionResolver() = default;
  // `from_files`: one plan per set name the directory provides now. Returns
  // every set that serves. An error leaves the registry unchanged.
  virtual absl::StatusOr<ServingMap> Resolve(const PlanMap& from_files) = 0;
};

// What one Reload changed. Names are sorted.
struct ReloadReport {
  // Sets loaded for the first time or replaced by a newly read file.
  std::vector<std::string> loaded;
  // Sets that no longer exist.
  std::vector<std::string> unloaded;
  // Files refused (parse/validation error or duplicate name) and *.json
  // entries that are not readable regular files (a directory, a broken
  // link), each logged (event=set_rejected / event=set_file_skipped).
  std::vector<std::string> rejected_files;
  // Sets that stay on their previous version because their file was refused.
  std::vector<std::string> kept;
};

class SetRegistry {
 public:
  // `resolver` may be null (the files decide alone); it must outlive the
  // registry.
  explicit SetRegistry(std::string sets_dir,
                       VersionResolver* resolver = nullptr);

  SetRegistry(const SetRegistry&) = delete;
  SetRegistry& operator=(const SetRegistry&) = delete;

  // Re-reads the directory and swaps in the result (see the rules above).
  // Fails without changing anything only if the directory cannot be listed.
  absl::StatusOr<ReloadReport> Reload();

  // Asks the resolver again with the files of the last Reload (after the
  // resolver's state changed) and swaps in its answer. Without a resolver
  // it changes nothing. The report's rejected_files and kept are empty.
  absl::StatusOr<ReloadReport> Refresh();

  // The active version of `name`, or nullptr.
  PlanPtr Find(absl::string_view name) const;

  // The shadow versions of `name` (usually none).
  std::vector<PlanPtr> Shadows(absl::string_view name) const;

  // The active version of `name` and its shadows, from one snapshot (active
  // is nullptr when the set is not loaded). The request path's one lookup.
  ServingSet FindServing(absl::string_view name) const;

  // Version `version` of `name` if it serves (active or shadow), else
  // nullptr.
  PlanPtr FindVersion(absl::string_view name, absl::string_view version) const;

  // All active versions, sorted by name.
  std::vector<PlanPtr> All() const;

  // Every version to monitor: per set name the active version, then its
  // shadows; sorted by name.
  std::vector<PlanPtr> AllMonitored() const;

  // Loaded set names, sorted.
  std::vector<std::string> Names() const;

  const std::string& sets_dir() const { return sets_dir_; }

 private:
  // Swaps in `serving`, filling report.loaded / unloaded and logging them.
  // REQUIRES: reload_mu_ held.
  void Swap(ServingMap serving, ReloadReport& report)
      ABSL_EXCLUSIVE_LOCKS_REQUIRED(reload_mu_);

  // Constant after construction.
  const std::string sets_dir_;
  VersionResolver* const resolver_;

  // Serializes reloads so two never interleave their reads and swaps.
  absl::Mutex reload_mu_;
  // What the directory provided at the last Reload.
  PlanMap last_files_ ABSL_GUARDED_BY(reload_mu_);

  // Guarded by mu_.
  mutable absl::Mutex mu_ ABSL_ACQUIRED_AFTER(reload_mu_);
  PlanMap plans_ ABSL_GUARDED_BY(mu_);
  // Only sets that have shadows.
  std::map<std::string, std::vector<PlanPtr>, std::less<>> shadows_
      ABSL_GUARDED_BY(mu_);
};

// Reads and compiles one set file; errors name the file.
absl::StatusOr<PlanPtr> LoadSetFile(const std::string& path);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SCORING_SET_REGISTRY_H_
