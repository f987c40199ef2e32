// File: daemon/registry/version_store.cc
#include "daemon/registry/version_store.h"

namespace plumbline::daemon {

absl::string_view VersionStateName(VersionState state) {
  switch (state) {
    case VersionState::kActive:
      return "active";
    case VersionState::kCandidate:
      return "candidate";
    case VersionState::kShadow:
      return "shadow";
    case VersionState::kRetired:
      return "retired";
  }
  return "retired";
}

std::optional<VersionState> ParseVersionState(absl::string_view name) {
  if (name == "active") return VersionState::kActive;
  if (name == "candidate") return VersionState::kCandidate;
  if (name == "shadow") return VersionState::kShadow;
  if (name == "retired") return VersionState::kRetired;
  return std::nullopt;
}

}  // namespace plumbline::daemon
