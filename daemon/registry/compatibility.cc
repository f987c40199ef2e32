// File: daemon/registry/compatibility.cc
#include "daemon/registry/compatibility.h"

#include <algorithm>

#include "absl/container/flat_hash_map.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_join.h"

namespace plumbline::daemon {
namespace {

absl::string_view KindName(const v1::Feature& f) {
  switch (f.transform_case()) {
    case v1::Feature::kNumeric:
      return "numeric";
    case v1::Feature::kCategorical:
      return "categorical";
    case v1::Feature::kBinned:
      return "binned";
    default:
      return "without a transform";
  }
}

bool Rejects(const v1::Feature& f) {
  return f.missing().kind() == v1::MissingRule::REJECT;
}

// The levels' difference for one categorical feature, or "".
std::string LevelChanges(const v1::Feature& from, const v1::Feature& to) {
  const auto& a = from.categorical().levels();
  const auto& b = to.categorical().levels();
  std::vector<std::string> out;
  absl::flat_hash_map<std::string, int> at;
  for (int i = 0; i < b.size(); ++i) at.emplace(b[i].value(), i);
  std::vector<std::string> gone, moved;
  for (int i = 0; i < a.size(); ++i) {
    auto it = at.find(a[i].value());
    if (it == at.end()) {
      gone.push_back(absl::StrCat("'", a[i].value(), "'"));
    } else if (it->second != i) {
      moved.push_back(absl::StrCat("'", a[i].value(), "' (code ", i, " -> ",
                                   it->second, ")"));
    }
  }
  if (!gone.empty()) {
    out.push_back(absl::StrCat(
        "loses level", gone.size() == 1 ? " " : "s ", absl::StrJoin(gone, ", "),
        to.categorical().unseen() == v1::CategoricalTransform::UNSEEN_REJECT
            ? " (callers sending it would be refused)"
            : " (it would be scored as unseen)"));
  }
  if (!moved.empty()) {
    out.push_back(absl::StrCat("moves level", moved.size() == 1 ? " " : "s ",
                               absl::StrJoin(moved, ", "),
                               " (dense codes would change meaning)"));
  }
  if (from.categorical().unseen() != v1::CategoricalTransform::UNSEEN_REJECT &&
      to.categorical().unseen() == v1::CategoricalTransform::UNSEEN_REJECT) {
    out.push_back(
        "refuses unseen levels it accepted (unseen rule becomes "
        "UNSEEN_REJECT)");
  }
  return absl::StrJoin(out, ", ");
}

}  // namespace

std::vector<std::string> SchemaChanges(const v1::CoefficientSet& from,
                                       const v1::CoefficientSet& to) {
  std::vector<std::string> changes;
  absl::flat_hash_map<std::string, const v1::Feature*> to_by_name;
  for (const v1::Feature& f : to.features()) to_by_name.emplace(f.name(), &f);
  absl::flat_hash_map<std::string, const v1::Feature*> from_by_name;
  for (const v1::Feature& f : from.features()) {
    from_by_name.emplace(f.name(), &f);
  }
  for (const v1::Feature& f : from.features()) {
    auto it = to_by_name.find(f.name());
    if (it == to_by_name.end()) {
      changes.push_back(absl::StrCat("feature '", f.name(),
                                     "' is gone (callers sending it would be "
                                     "refused)"));
      continue;
    }
    const v1::Feature& g = *it->second;
    if (f.transform_case() != g.transform_case()) {
      changes.push_back(absl::StrCat("feature '", f.name(), "' changes from ",
                                     KindName(f), " to ", KindName(g)));
      continue;
    }
    if (!Rejects(f) && Rejects(g)) {
      changes.push_back(absl::StrCat(
          "feature '", f.name(),
          "' becomes required (missing rule REJECT; callers leaving it out "
          "would be refused)"));
    }
    if (f.has_categorical()) {
      if (std::string levels = LevelChanges(f, g); !levels.empty()) {
        changes.push_back(absl::StrCat("feature '", f.name(), "' ", levels));
      }
    }
  }
  for (const v1::Feature& g : to.features()) {
    if (!from_by_name.contains(g.name()) && Rejects(g)) {
      changes.push_back(absl::StrCat(
          "new feature '", g.name(),
          "' is required (missing rule REJECT; callers do not send it yet)"));
    }
  }
  // Dense rows without `columns` follow the feature list.
  bool same_order = from.features_size() == to.features_size();
  for (int i = 0; same_order && i < from.features_size(); ++i) {
    same_order = from.features(i).name() == to.features(i).name();
  }
  if (!same_order) {
    changes.push_back(absl::StrCat(
        "the feature list changes (", from.features_size(), " -> ",
        to.features_size(),
        " features or another order): dense batches without `columns` "
        "would fail or send values to other features"));
  }
  return changes;
}

absl::Status SchemaChangeRefused(absl::string_view what,
                                 const std::vector<std::string>& changes) {
  if (changes.empty()) return absl::OkStatus();
  return absl::FailedPreconditionError(absl::StrCat(
      "cannot ", what,
      ": calls valid for the active version would fail or "
      "change meaning: ",
      absl::StrJoin(changes, "; "),
      ". Once every caller is ready, allow it explicitly (plumbctl "
      "--allow_schema_change; recorded in the audit)"));
}

}  // namespace plumbline::daemon
