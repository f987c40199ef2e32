// File: daemon/util/set_version.cc
#include "daemon/util/set_version.h"

namespace plumbline::daemon {

absl::string_view ScoreRoleName(ScoreRole role) {
  return role == ScoreRole::kShadow ? "shadow" : "active";
}

std::optional<ScoreRole> ScoreRoleFromName(absl::string_view name) {
  if (name == "active") return ScoreRole::kActive;
  if (name == "shadow") return ScoreRole::kShadow;
  return std::nullopt;
}

}  // namespace plumbline::daemon
