// File: daemon/ledger/entries.cc
#include "daemon/ledger/entries.h"

namespace plumbline::daemon {

ScoreRole RoleColumn(absl::string_view text) {
  return ScoreRoleFromName(text).value_or(ScoreRole::kShadow);
}

}  // namespace plumbline::daemon
