// File: daemon/registry/compatibility.h
//
// Whether a new version of a set accepts every call the active version
// accepts today. Callers send named features (and, in dense batches,
// categorical levels as indices into the level list and, without
// `columns`, values in the set's feature order), so a change of version can
// make calls valid today fail tomorrow, or silently change what a dense
// value means. SchemaChanges lists each such difference in words, naming
// the feature:
//   - a feature the active version has is gone (callers sending it are
//     refused), or changes kind;
//   - a new feature is required (missing rule REJECT);
//   - a missing rule becomes REJECT where it was IMPUTE or INDICATOR;
//   - a categorical feature loses, reorders or renames levels (only new
//     levels after the old ones are safe: dense codes keep their meaning),
//     or its unseen rule becomes UNSEEN_REJECT;
//   - the feature list changes order or length (dense rows without
//     `columns` would fail or shift).
// Coefficients, centring, clipping, bins and baselines may change freely.
// The lifecycle refuses an activation, approval, shadow or load with such
// differences unless the person allows it (recorded in the audit).
//
//   std::vector<std::string> d = SchemaChanges(active.set(), candidate.set());
//   if (!d.empty()) ... absl::StrJoin(d, "; ") ...
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_REGISTRY_COMPATIBILITY_H_
#define PLUMBLINE_DAEMON_REGISTRY_COMPATIBILITY_H_

#include <string>
#include <vector>

#include "absl/status/status.h"
#include "absl/strings/string_view.h"
#include "plumbline/v1/coefficient_set.pb.h"

namespace plumbline::daemon {

// The differences from `from` (the serving version) to `to`, in feature
// order; empty when every call `from` accepts, `to` accepts with the same
// meaning.
std::vector<std::string> SchemaChanges(const v1::CoefficientSet& from,
                                       const v1::CoefficientSet& to);

// FAILED_PRECONDITION for `what` (e.g. "activate version 'r7' of set
// 'courier'") listing `changes` and saying how to allow them; OK when there
// are none.
absl::Status SchemaChangeRefused(absl::string_view what,
                                 const std::vector<std::string>& changes);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_REGISTRY_COMPATIBILITY_H_
