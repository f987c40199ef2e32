// File: daemon/scoring/set_registry.cc
#include "daemon/scoring/set_registry.h"

#include <algorithm>
#include <filesystem>
#include <set>
#include <system_error>
#include <utility>

#include "absl/status/status.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_join.h"
#include "daemon/util/event_log.h"
#include "scorer/coefficient_set.h"

namespace plumbline::daemon {
namespace {

// A *.json entry of the sets directory that cannot be a set file.
struct SkippedEntry {
  std::string file;
  std::string reason;
};

struct SetFiles {
  std::vector<std::string> files;  // sorted paths of the *.json files
  std::vector<SkippedEntry> skipped;
};

// Why `entry` (named *.json) is not a regular file plumbd can read; empty
// when it is one.
std::string WhyNotASetFile(const std::filesystem::directory_entry& entry) {
  std::error_code ec;
  const std::filesystem::file_status status = entry.status(ec);
  if (ec) {
    std::error_code link_ec;
    if (entry.is_symlink(link_ec)) {
      return absl::StrCat("a symbolic link whose target cannot be reached: ",
                          ec.message());
    }
    return absl::StrCat("cannot read its type: ", ec.message());
  }
  switch (status.type()) {
    case std::filesystem::file_type::regular:
      return "";
    case std::filesystem::file_type::directory:
      return "a directory, not a file";
    case std::filesystem::file_type::not_found:
      return "a symbolic link to nothing (broken link)";
    default:
      return "not a regular file (a socket, pipe or device)";
  }
}

// The *.json entries of `dir`: regular files to load, and the others with
// the reason each is skipped.
absl::StatusOr<SetFiles> ListSetFiles(const std::string& dir) {
  std::error_code ec;
  std::filesystem::directory_iterator it(dir, ec);
  if (ec) {
    return absl::NotFoundError(
        absl::StrCat("sets directory ", dir, ": cannot list: ", ec.message()));
  }
  SetFiles out;
  for (; it != std::filesystem::directory_iterator(); it.increment(ec)) {
    const std::filesystem::directory_entry& entry = *it;
    const std::filesystem::path& path = entry.path();
    if (path.extension() != ".json") continue;
    const std::string file =
        (std::filesystem::path(dir) / path.filename()).string();
    std::string why = WhyNotASetFile(entry);
    if (why.empty()) {
      out.files.push_back(file);
    } else {
      out.skipped.push_back({file, std::move(why)});
    }
  }
  if (ec) {
    return absl::UnavailableError(absl::StrCat(
        "sets directory ", dir, ": listing failed part way: ", ec.message()));
  }
  std::sort(out.files.begin(), out.files.end());
  std::sort(out.skipped.begin(), out.skipped.end(),
            [](const SkippedEntry& a, const SkippedEntry& b) {
              return a.file < b.file;
            });
  return out;
}

}  // namespace

absl::StatusOr<PlanPtr> LoadSetFile(const std::string& path) {
  absl::StatusOr<v1::CoefficientSet> set = scorer::ReadCoefficientSetFile(path);
  if (!set.ok()) return set.status();
  return scorer::ScoringPlan::Compile(*std::move(set), path);
}

SetRegistry::SetRegistry(std::string sets_dir, VersionResolver* resolver)
    : sets_dir_(std::move(sets_dir)), resolver_(resolver) {}

absl::StatusOr<ReloadReport> SetRegistry::Reload() {
  absl::MutexLock reload_lock(&reload_mu_);
  absl::StatusOr<SetFiles> listed = ListSetFiles(sets_dir_);
  if (!listed.ok()) {
    LogEvent(LogLevel::kError, "reload_failed",
             {{"dir", sets_dir_}, {"error", listed.status().message()}});
    return listed.status();
  }
  const std::vector<std::string>* files = &listed->files;
  // What the files provided last time: the file that already serves a name
  // keeps it against a duplicate, and a refused file's set keeps its plan.
  const PlanMap& current = last_files_;

  ReloadReport report;
  PlanMap next;
  std::set<std::string> failed_files;
  for (const SkippedEntry& skipped : listed->skipped) {
    LogEvent(LogLevel::kError, "set_file_skipped",
             {{"file", skipped.file}, {"error", skipped.reason}});
    report.rejected_files.push_back(skipped.file);
    failed_files.insert(skipped.file);  // a set it served keeps its plan
  }
  for (const std::string& file : *files) {
    absl::StatusOr<PlanPtr> plan = LoadSetFile(file);
    if (!plan.ok()) {
      LogEvent(LogLevel::kError, "set_rejected",
               {{"file", file}, {"error", plan.status().message()}});
      failed_files.insert(file);
      report.rejected_files.push_back(file);
      continue;
    }
    const std::string& name = (*plan)->name();
    auto [slot, inserted] = next.emplace(name, *plan);
    if (inserted) continue;
    // Duplicate name: the file that already serves the name keeps it.
    auto incumbent = current.find(name);
    const bool this_file_serves =
        incumbent != current.end() && incumbent->second->source() == file;
    std::string rejected = file;
    std::string kept = slot->second->source();
    if (this_file_serves) {
      std::swap(rejected, kept);
      slot->second = *plan;
    }
    LogEvent(LogLevel::kError, "set_rejected",
             {{"file", rejected},
              {"set", name},
              {"error", absl::StrCat("set name '", name,
                                     "' is already provided by ", kept)}});
    report.rejected_files.push_back(rejected);
  }
  // A set whose file was refused keeps its previous version.
  for (const auto& [name, plan] : current) {
    if (next.contains(name) || !failed_files.contains(plan->source())) continue;
    next.emplace(name, plan);
    report.kept.push_back(name);
    LogEvent(LogLevel::kWarning, "set_kept",
             {{"set", name},
              {"version", plan->version()},
              {"file", plan->source()}});
  }
  ServingMap serving;
  if (resolver_ != nullptr) {
    absl::StatusOr<ServingMap> resolved = resolver_->Resolve(next);
    if (!resolved.ok()) {
      LogEvent(LogLevel::kError, "reload_failed",
               {{"dir", sets_dir_}, {"error", resolved.status().message()}});
      return resolved.status();
    }
    serving = *std::move(resolved);
  } else {
    for (const auto& [name, plan] : next) serving[name].active = plan;
  }
  last_files_ = std::move(next);
  Swap(std::move(serving), report);
  return report;
}

absl::StatusOr<ReloadReport> SetRegistry::Refresh() {
  absl::MutexLock reload_lock(&reload_mu_);
  ReloadReport report;
  if (resolver_ == nullptr) return report;
  absl::StatusOr<ServingMap> resolved = resolver_->Resolve(last_files_);
  if (!resolved.ok()) return resolved.status();
  Swap(*std::move(resolved), report);
  return report;
}

void SetRegistry::Swap(ServingMap serving, ReloadReport& report) {
  PlanMap next;
  std::map<std::string, std::vector<PlanPtr>, std::less<>> next_shadows;
  for (auto& [name, set] : serving) {
    next.emplace(name, set.active);
    if (!set.shadows.empty())
      next_shadows.emplace(name, std::move(set.shadows));
  }
  // Only reloads and refreshes write plans_, serialized by reload_mu_.
  const PlanMap current = [&] {
    absl::MutexLock lock(&mu_);
    return plans_;
  }();
  for (const auto& [name, plan] : next) {
    auto old = current.find(name);
    if (old != current.end() && old->second == plan) continue;
    report.loaded.push_back(name);
    if (old == current.end()) {
      LogEvent(LogLevel::kInfo, "set_loaded",
               {{"set", name},
                {"version", plan->version()},
                {"file", plan->source()}});
    } else {
      LogEvent(LogLevel::kInfo, "set_loaded",
               {{"set", name},
                {"version", plan->version()},
                {"previous_version", old->second->version()},
                {"file", plan->source()}});
    }
  }
  for (const auto& [name, plan] : current) {
    if (next.contains(name)) continue;
    report.unloaded.push_back(name);
    LogEvent(LogLevel::kInfo, "set_unloaded",
             {{"set", name},
              {"version", plan->version()},
              {"file", plan->source()},
              {"reason", resolver_ == nullptr
                             ? "no file in the sets directory provides it"
                             : "no active version"}});
  }
  {
    absl::MutexLock lock(&mu_);
    plans_.swap(next);
    shadows_.swap(next_shadows);
  }
  // `next` now holds the old plans; they are freed here unless a request in
  // flight still holds its snapshot.
}

PlanPtr SetRegistry::Find(absl::string_view name) const {
  absl::MutexLock lock(&mu_);
  auto it = plans_.find(name);
  return it == plans_.end() ? nullptr : it->second;
}

std::vector<PlanPtr> SetRegistry::Shadows(absl::string_view name) const {
  absl::MutexLock lock(&mu_);
  if (shadows_.empty()) return {};
  auto it = shadows_.find(name);
  return it == shadows_.end() ? std::vector<PlanPtr>() : it->second;
}

ServingSet SetRegistry::FindServing(absl::string_view name) const {
  absl::MutexLock lock(&mu_);
  ServingSet serving;
  if (auto it = plans_.find(name); it != plans_.end()) {
    serving.active = it->second;
  }
  if (!shadows_.empty()) {
    if (auto it = shadows_.find(name); it != shadows_.end()) {
      serving.shadows = it->second;
    }
  }
  return serving;
}

PlanPtr SetRegistry::FindVersion(absl::string_view name,
                                 absl::string_view version) const {
  ServingSet serving = FindServing(name);
  if (serving.active != nullptr && serving.active->version() == version) {
    return serving.active;
  }
  for (PlanPtr& shadow : serving.shadows) {
    if (shadow->version() == version) return std::move(shadow);
  }
  return nullptr;
}

std::vector<PlanPtr> SetRegistry::AllMonitored() const {
  absl::MutexLock lock(&mu_);
  std::vector<PlanPtr> all;
  for (const auto& [name, plan] : plans_) {
    all.push_back(plan);
    if (auto it = shadows_.find(name); it != shadows_.end()) {
      all.insert(all.end(), it->second.begin(), it->second.end());
    }
  }
  return all;
}

std::vector<PlanPtr> SetRegistry::All() const {
  absl::MutexLock lock(&mu_);
  std::vector<PlanPtr> all;
  all.reserve(plans_.size());
  for (const auto& [name, plan] : plans_) all.push_back(plan);
  return all;
}

std::vector<std::string> SetRegistry::Names() const {
  absl::MutexLock lock(&mu_);
  std::vector<std::string> names;
  names.reserve(plans_.size());
  for (const auto& [name, plan] : plans_) names.push_back(name);
  return names;
}

}  // namespace plumbline::daemon
