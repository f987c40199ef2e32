// File: daemon/util/set_version.h
//
// The identity of what scored a record: a coefficient set's name and
// version (SetVersion), and the role the version scored in (ScoreRole).
// Every map keyed by a version uses SetVersion (hashable, ordered), never a
// string built from the two; strings appear only at the edges (SQL
// columns, log fields, metric labels) through Label() and the Name
// functions.
//
//   absl::flat_hash_map<SetVersion, Windows> windows;
//   windows[SetVersion{"courier", "2026-11-01"}] = ...;
//   LogEvent(..., {{"version", key.Label()}});   // "courier@2026-11-01"
//
// Thread-safe: plain values.
#ifndef PLUMBLINE_DAEMON_UTIL_SET_VERSION_H_
#define PLUMBLINE_DAEMON_UTIL_SET_VERSION_H_

#include <compare>
#include <optional>
#include <string>
#include <utility>

#include "absl/strings/str_cat.h"
#include "absl/strings/string_view.h"

namespace plumbline::daemon {

struct SetVersion {
  std::string set;
  std::string version;

  // "set@version", for people (logs, messages).
  std::string Label() const { return absl::StrCat(set, "@", version); }

  friend bool operator==(const SetVersion&, const SetVersion&) = default;
  friend std::strong_ordering operator<=>(const SetVersion&,
                                          const SetVersion&) = default;
  template <typename H>
  friend H AbslHashValue(H h, const SetVersion& key) {
    return H::combine(std::move(h), key.set, key.version);
  }
};

// The role in which a version scored a record: the active version's score
// is the one returned; a shadow's is recorded and monitored, never returned.
enum class ScoreRole { kActive, kShadow };

// "active" | "shadow": the ledger's role column and the metrics' label.
absl::string_view ScoreRoleName(ScoreRole role);
// The inverse of ScoreRoleName; nullopt for any other text.
std::optional<ScoreRole> ScoreRoleFromName(absl::string_view name);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_UTIL_SET_VERSION_H_
