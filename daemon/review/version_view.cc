// File: daemon/review/version_view.cc
#include "daemon/review/version_view.h"

#include <algorithm>
#include <set>
#include <utility>

#include "absl/container/flat_hash_map.h"
#include "absl/status/status.h"
#include "absl/strings/ascii.h"
#include "absl/strings/numbers.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "absl/strings/str_join.h"
#include "absl/strings/str_split.h"
#include "absl/strings/strip.h"
#include "daemon/util/time.h"
#include "google/protobuf/util/json_util.h"
#include "monitor/stability.h"

namespace plumbline::daemon {
namespace {

v1::VersionState ToWire(VersionState state) {
  switch (state) {
    case VersionState::kActive:
      return v1::ACTIVE;
    case VersionState::kCandidate:
      return v1::CANDIDATE;
    case VersionState::kShadow:
      return v1::SHADOW;
    case VersionState::kRetired:
      return v1::RETIRED;
  }
  return v1::STATE_UNSPECIFIED;
}

std::string Num(double v) { return absl::StrFormat("%g", v); }

std::string BinLabel(const std::string& name, const v1::BinnedTransform& t,
                     int bin) {
  const int k = t.edges_size();
  if (k == 0) return name;
  if (bin == 0) return absl::StrFormat("%s<%g", name, t.edges(0));
  if (bin == k) return absl::StrFormat("%s>=%g", name, t.edges(k - 1));
  return absl::StrFormat("%s[%g,%g)", name, t.edges(bin - 1), t.edges(bin));
}

int BinOf(const v1::BinnedTransform& t, double v) {
  int bin = 0;
  for (double e : t.edges()) bin += e <= v ? 1 : 0;
  return bin;
}

// The first number after `key` in `text`.
std::optional<double> NumberAfter(absl::string_view text,
                                  absl::string_view key) {
  const size_t at = text.find(key);
  if (at == absl::string_view::npos) return std::nullopt;
  absl::string_view rest = text.substr(at + key.size());
  rest = absl::StripLeadingAsciiWhitespace(rest);
  size_t end = 0;
  while (end < rest.size() &&
         (absl::ascii_isdigit(rest[end]) || rest[end] == '.' ||
          rest[end] == '-' || rest[end] == '+' || rest[end] == 'e' ||
          rest[end] == 'E')) {
    ++end;
  }
  double v = 0;
  if (!absl::SimpleAtod(rest.substr(0, end), &v)) return std::nullopt;
  return v;
}

std::string MissingRule(const v1::MissingRule& m, bool categorical) {
  switch (m.kind()) {
    case v1::MissingRule::IMPUTE:
      return categorical ? absl::StrCat("impute level ", m.impute_level())
                         : absl::StrCat("impute ", Num(m.impute_number()));
    case v1::MissingRule::INDICATOR:
      return "indicator";
    default:
      return "reject";
  }
}

std::string TransformName(const v1::Feature& f) {
  switch (f.transform_case()) {
    case v1::Feature::kCategorical:
      return "categorical";
    case v1::Feature::kBinned:
      return "binned";
    default:
      return "numeric";
  }
}

std::string UnseenRule(v1::CategoricalTransform::UnseenRule rule) {
  switch (rule) {
    case v1::CategoricalTransform::UNSEEN_ZERO:
      return "an unseen level contributes 0";
    case v1::CategoricalTransform::UNSEEN_AS_MISSING:
      return "an unseen level counts as missing";
    default:
      return "an unseen level is refused";
  }
}

std::vector<double> Proportions(const v1::Distribution& d) {
  return {d.proportions().begin(), d.proportions().end()};
}

std::optional<double> NumericBaselinePsi(const v1::Distribution& from,
                                         const v1::Distribution& to) {
  if (from.proportions_size() == 0 || to.proportions_size() == 0 ||
      from.edges_size() != to.edges_size()) {
    return std::nullopt;
  }
  for (int i = 0; i < from.edges_size(); ++i) {
    if (from.edges(i) != to.edges(i)) return std::nullopt;
  }
  return BaselinePsi(Proportions(from), Proportions(to));
}

std::optional<double> LevelBaselinePsi(const v1::Distribution& from,
                                       const v1::Distribution& to) {
  if (from.level_proportions().empty() || to.level_proportions().empty()) {
    return std::nullopt;
  }
  std::set<std::string> levels;
  for (const auto& [level, p] : from.level_proportions()) levels.insert(level);
  for (const auto& [level, p] : to.level_proportions()) levels.insert(level);
  std::vector<double> e, a;
  for (const std::string& level : levels) {
    auto fe = from.level_proportions().find(level);
    auto ta = to.level_proportions().find(level);
    e.push_back(fe == from.level_proportions().end() ? 0.0 : fe->second);
    a.push_back(ta == to.level_proportions().end() ? 0.0 : ta->second);
  }
  return BaselinePsi(e, a);
}

v1::FeatureChange CompareFeatures(const v1::Feature& a, const v1::Feature& b) {
  v1::FeatureChange c;
  c.set_feature(a.name());
  auto note = [&c](std::string text) { c.add_changes(std::move(text)); };
  const std::string ta = TransformName(a), tb = TransformName(b);
  if (ta != tb) {
    note(absl::StrCat("transform ", ta, " -> ", tb));
  } else if (a.has_numeric()) {
    const v1::NumericTransform &x = a.numeric(), &y = b.numeric();
    if (x.center() != y.center()) {
      note(absl::StrCat("centre ", Num(x.center()), " -> ", Num(y.center())));
    }
    if (x.scale() != y.scale()) {
      note(absl::StrCat("scale ", Num(x.scale()), " -> ", Num(y.scale())));
    }
    if (x.has_clip_low() != y.has_clip_low() || x.clip_low() != y.clip_low() ||
        x.has_clip_high() != y.has_clip_high() ||
        x.clip_high() != y.clip_high()) {
      auto clip = [](const v1::NumericTransform& t) {
        return absl::StrCat(
            "[", t.has_clip_low() ? Num(t.clip_low()) : "-inf", ", ",
            t.has_clip_high() ? Num(t.clip_high()) : "inf", "]");
      };
      note(absl::StrCat("clip ", clip(x), " -> ", clip(y)));
    }
  } else if (a.has_categorical()) {
    std::set<std::string> la, lb;
    for (const auto& l : a.categorical().levels()) la.insert(l.value());
    for (const auto& l : b.categorical().levels()) lb.insert(l.value());
    std::vector<std::string> added, dropped;
    for (const std::string& l : lb) {
      if (!la.count(l)) added.push_back(l);
    }
    for (const std::string& l : la) {
      if (!lb.count(l)) dropped.push_back(l);
    }
    if (!added.empty()) {
      note(absl::StrCat("levels added: ", absl::StrJoin(added, ", ")));
    }
    if (!dropped.empty()) {
      note(absl::StrCat("levels dropped: ", absl::StrJoin(dropped, ", ")));
    }
    if (a.categorical().unseen() != b.categorical().unseen()) {
      note(absl::StrCat("unseen levels: ", UnseenRule(a.categorical().unseen()),
                        " -> ", UnseenRule(b.categorical().unseen())));
    }
    if (a.categorical().reference_level() !=
        b.categorical().reference_level()) {
      note(absl::StrCat("reference level ", a.categorical().reference_level(),
                        " -> ", b.categorical().reference_level()));
    }
  } else if (a.has_binned()) {
    std::vector<double> ea(a.binned().edges().begin(),
                           a.binned().edges().end());
    std::vector<double> eb(b.binned().edges().begin(),
                           b.binned().edges().end());
    if (ea != eb) {
      auto join = [](const std::vector<double>& e) {
        return absl::StrJoin(e, ", ", [](std::string* out, double v) {
          absl::StrAppend(out, Num(v));
        });
      };
      note(absl::StrCat("bin edges ", join(ea), " -> ", join(eb)));
    }
  }
  const std::string ma = MissingRule(a.missing(), a.has_categorical());
  const std::string mb = MissingRule(b.missing(), b.has_categorical());
  if (ma != mb) note(absl::StrCat("missing rule ", ma, " -> ", mb));
  *c.mutable_from_baseline() = a.baseline();
  *c.mutable_to_baseline() = b.baseline();
  std::optional<double> psi =
      a.has_categorical() && b.has_categorical()
          ? LevelBaselinePsi(a.baseline(), b.baseline())
          : NumericBaselinePsi(a.baseline(), b.baseline());
  if (psi) c.set_baseline_psi(*psi);
  if (a.baseline().missing_proportion() != b.baseline().missing_proportion()) {
    note(absl::StrFormat("missing share in the baseline %.4g -> %.4g",
                         a.baseline().missing_proportion(),
                         b.baseline().missing_proportion()));
  }
  c.set_status(c.changes_size() > 0 ? "changed" : "same");
  return c;
}

}  // namespace

v1::VersionInfo ToVersionInfo(const VersionRecord& r) {
  v1::VersionInfo info;
  info.set_set(r.set);
  info.set_version(r.version);
  info.set_state(ToWire(r.state));
  *info.mutable_created_at() = ToTimestamp(r.created_at);
  info.set_created_by(r.created_by);
  info.set_reason(r.reason);
  info.set_comparison(r.comparison);
  return info;
}

v1::AuditEntry ToAuditEntry(const AuditRecord& e) {
  v1::AuditEntry out;
  *out.mutable_at() = ToTimestamp(e.at);
  out.set_set(e.set);
  out.set_version(e.version);
  out.set_action(e.action);
  out.set_actor(e.actor);
  out.set_detail(e.detail);
  return out;
}

absl::StatusOr<v1::CoefficientSet> DocumentOf(const VersionRecord& record) {
  v1::CoefficientSet set;
  google::protobuf::util::JsonParseOptions options;
  options.ignore_unknown_fields = false;
  if (!google::protobuf::util::JsonStringToMessage(record.document, &set,
                                                   options)
           .ok()) {
    return absl::DataLossError(
        absl::StrCat("set ", record.set, " version ", record.version,
                     ": the stored document is not a coefficient set"));
  }
  return set;
}

std::map<std::string, double> StandardErrorsFromNotes(absl::string_view notes) {
  std::map<std::string, double> out;
  size_t at = notes.find("standard errors");
  if (at == absl::string_view::npos) return out;
  absl::string_view rest = notes.substr(at);
  const size_t colon = rest.find(": ");
  if (colon == absl::string_view::npos) return out;
  rest = rest.substr(colon + 2);
  // The list ends at the next "; " (statsmodels adds the log-likelihood).
  rest = rest.substr(0, rest.find("; "));
  for (absl::string_view item : absl::StrSplit(rest, ", ")) {
    const size_t space = item.rfind(' ');
    if (space == absl::string_view::npos) continue;
    double v = 0;
    if (absl::SimpleAtod(item.substr(space + 1), &v)) {
      out[std::string(item.substr(0, space))] = v;
    }
  }
  return out;
}

std::vector<v1::CoefficientLine> CoefficientLines(
    const v1::CoefficientSet& set) {
  const std::map<std::string, double> se =
      StandardErrorsFromNotes(set.provenance().notes());
  std::vector<v1::CoefficientLine> out;
  auto add = [&](const std::string& feature, const char* term,
                 std::string label, double estimate) -> v1::CoefficientLine& {
    v1::CoefficientLine& l = out.emplace_back();
    l.set_feature(feature);
    l.set_term(term);
    auto it = se.find(label);
    if (it != se.end()) l.set_standard_error(it->second);
    l.set_label(std::move(label));
    l.set_estimate(estimate);
    return l;
  };
  v1::CoefficientLine& intercept =
      add("", "intercept", "intercept", set.intercept());
  for (const char* alias : {"const", "Intercept"}) {
    if (!intercept.has_standard_error() && se.count(alias)) {
      intercept.set_standard_error(se.at(alias));
    }
  }
  for (const v1::Feature& f : set.features()) {
    const std::string& name = f.name();
    if (f.has_categorical()) {
      for (const auto& level : f.categorical().levels()) {
        v1::CoefficientLine& l =
            add(name, "level", absl::StrCat(name, "=", level.value()),
                level.coefficient());
        l.set_reference(level.value() == f.categorical().reference_level() &&
                        level.coefficient() == 0);
      }
    } else if (f.has_binned()) {
      const v1::BinnedTransform& t = f.binned();
      const int reference_bin =
          t.has_reference() ? BinOf(t, t.reference()) : -1;
      for (int b = 0; b < t.coefficients_size(); ++b) {
        v1::CoefficientLine& l =
            add(name, "bin", BinLabel(name, t, b), t.coefficients(b));
        l.set_reference(b == reference_bin && t.coefficients(b) == 0);
      }
    } else {
      v1::CoefficientLine& l =
          add(name, "numeric", name, f.numeric().coefficient());
      if (f.numeric().scale() > 0) {
        l.set_per_unit(f.numeric().coefficient() / f.numeric().scale());
      }
    }
    if (f.missing().kind() == v1::MissingRule::INDICATOR) {
      add(name, "missing", absl::StrCat(name, ":missing"),
          f.missing().indicator_coefficient());
    }
  }
  return out;
}

v1::FeatureTransform SummarizeFeature(const v1::Feature& f) {
  v1::FeatureTransform s;
  s.set_name(f.name());
  s.set_transform(TransformName(f));
  if (f.has_categorical()) {
    std::vector<std::string> levels;
    for (const auto& l : f.categorical().levels()) levels.push_back(l.value());
    s.set_detail(absl::StrCat("levels ", absl::StrJoin(levels, ", "), "; ",
                              UnseenRule(f.categorical().unseen())));
  } else if (f.has_binned()) {
    s.set_detail(absl::StrCat(
        "edges ",
        absl::StrJoin(f.binned().edges(), ", ", [](std::string* out, double v) {
          absl::StrAppend(out, Num(v));
        })));
  } else {
    const v1::NumericTransform& t = f.numeric();
    std::string detail =
        absl::StrCat("centre ", Num(t.center()), ", scale ", Num(t.scale()));
    if (t.has_clip_low() || t.has_clip_high()) {
      absl::StrAppend(&detail, ", clipped to [",
                      t.has_clip_low() ? Num(t.clip_low()) : "-inf", ", ",
                      t.has_clip_high() ? Num(t.clip_high()) : "inf", "]");
    }
    s.set_detail(detail);
  }
  s.set_missing_rule(MissingRule(f.missing(), f.has_categorical()));
  *s.mutable_baseline() = f.baseline();
  return s;
}

v1::FitSummary SummarizeFit(const v1::Provenance& p) {
  v1::FitSummary s;
  s.set_method(p.method());
  s.set_created_by(p.created_by());
  *s.mutable_created_at() = p.created_at();
  s.set_training_data(p.training_data());
  s.set_training_rows(p.training_rows());
  s.set_training_log_loss(p.training_log_loss());
  s.set_log_likelihood(p.training_log_likelihood());
  s.set_notes(p.notes());
  const absl::string_view notes = p.notes();
  if (auto v = NumberAfter(notes, "null log-likelihood")) {
    s.set_null_log_likelihood(*v);
  }
  if (auto v = NumberAfter(notes, "AIC")) s.set_aic(*v);
  if (auto v = NumberAfter(notes, "pseudo-R^2")) s.set_pseudo_r2(*v);
  if (auto v = NumberAfter(notes, "converged in")) {
    s.set_iterations(static_cast<int64_t>(*v));
  }
  return s;
}

absl::StatusOr<v1::VersionDetail> DescribeVersion(const VersionRecord& record) {
  absl::StatusOr<v1::CoefficientSet> set = DocumentOf(record);
  if (!set.ok()) return set.status();
  v1::VersionDetail d;
  *d.mutable_info() = ToVersionInfo(record);
  for (v1::CoefficientLine& l : CoefficientLines(*set)) {
    *d.add_coefficients() = std::move(l);
  }
  for (const v1::Feature& f : set->features()) {
    *d.add_features() = SummarizeFeature(f);
  }
  *d.mutable_fit() = SummarizeFit(set->provenance());
  d.set_description(set->description());
  *d.mutable_document() = *std::move(set);
  return d;
}

v1::VersionDiff DiffSets(const v1::VersionInfo& from_info,
                         const v1::CoefficientSet& from,
                         const v1::VersionInfo& to_info,
                         const v1::CoefficientSet& to) {
  v1::VersionDiff diff;
  *diff.mutable_from() = from_info;
  *diff.mutable_to() = to_info;
  const std::vector<v1::CoefficientLine> a = CoefficientLines(from);
  const std::vector<v1::CoefficientLine> b = CoefficientLines(to);
  absl::flat_hash_map<std::string, const v1::CoefficientLine*> by_label;
  for (const v1::CoefficientLine& l : a) by_label[l.label()] = &l;
  std::set<std::string> seen;
  for (const v1::CoefficientLine& l : b) {
    v1::CoefficientChange* c = diff.add_coefficients();
    c->set_feature(l.feature());
    c->set_term(l.term());
    c->set_label(l.label());
    c->set_to_estimate(l.estimate());
    if (l.has_standard_error()) c->set_to_standard_error(l.standard_error());
    auto it = by_label.find(l.label());
    if (it == by_label.end()) {
      c->set_status("added");
      continue;
    }
    seen.insert(l.label());
    const v1::CoefficientLine& old = *it->second;
    c->set_from_estimate(old.estimate());
    if (old.has_standard_error()) {
      c->set_from_standard_error(old.standard_error());
    }
    c->set_change(l.estimate() - old.estimate());
    if (old.has_standard_error() && old.standard_error() > 0) {
      c->set_change_in_standard_errors(c->change() / old.standard_error());
    }
    c->set_status(l.estimate() == old.estimate() ? "same" : "changed");
  }
  for (const v1::CoefficientLine& l : a) {
    if (seen.count(l.label())) continue;
    v1::CoefficientChange* c = diff.add_coefficients();
    c->set_feature(l.feature());
    c->set_term(l.term());
    c->set_label(l.label());
    c->set_status("dropped");
    c->set_from_estimate(l.estimate());
    if (l.has_standard_error()) c->set_from_standard_error(l.standard_error());
  }
  absl::flat_hash_map<std::string, const v1::Feature*> old_features;
  for (const v1::Feature& f : from.features()) old_features[f.name()] = &f;
  std::set<std::string> kept;
  for (const v1::Feature& f : to.features()) {
    auto it = old_features.find(f.name());
    if (it == old_features.end()) {
      v1::FeatureChange* c = diff.add_features();
      c->set_feature(f.name());
      c->set_status("added");
      *c->mutable_to_baseline() = f.baseline();
      continue;
    }
    kept.insert(f.name());
    *diff.add_features() = CompareFeatures(*it->second, f);
  }
  for (const v1::Feature& f : from.features()) {
    if (kept.count(f.name())) continue;
    v1::FeatureChange* c = diff.add_features();
    c->set_feature(f.name());
    c->set_status("dropped");
    *c->mutable_from_baseline() = f.baseline();
  }
  *diff.mutable_from_score_baseline() = from.score_baseline();
  *diff.mutable_to_score_baseline() = to.score_baseline();
  if (auto psi =
          NumericBaselinePsi(from.score_baseline(), to.score_baseline())) {
    diff.set_score_baseline_psi(*psi);
  }
  *diff.mutable_from_fit() = SummarizeFit(from.provenance());
  *diff.mutable_to_fit() = SummarizeFit(to.provenance());
  diff.set_comparison(to_info.comparison());
  return diff;
}

absl::StatusOr<v1::VersionDiff> DiffVersions(const VersionRecord& from,
                                             const VersionRecord& to) {
  absl::StatusOr<v1::CoefficientSet> a = DocumentOf(from);
  if (!a.ok()) return a.status();
  absl::StatusOr<v1::CoefficientSet> b = DocumentOf(to);
  if (!b.ok()) return b.status();
  return DiffSets(ToVersionInfo(from), *a, ToVersionInfo(to), *b);
}

absl::StatusOr<std::pair<VersionRecord, VersionRecord>> DiffPair(
    const std::vector<VersionRecord>& versions, absl::string_view set,
    absl::string_view from_version, absl::string_view to_version) {
  const VersionRecord* from = nullptr;
  const VersionRecord* to = nullptr;
  for (const VersionRecord& v : versions) {
    if (from == nullptr &&
        (from_version.empty() ? v.state == VersionState::kActive
                              : v.version == from_version)) {
      from = &v;
    }
    if (to == nullptr &&
        (to_version.empty() ? v.state == VersionState::kCandidate
                            : v.version == to_version)) {
      to = &v;
    }
  }
  if (from == nullptr) {
    return absl::NotFoundError(
        from_version.empty()
            ? absl::StrCat("set ", set, " has no active version to compare")
            : absl::StrCat("set ", set, " has no version ", from_version));
  }
  if (to == nullptr) {
    return absl::NotFoundError(
        to_version.empty()
            ? absl::StrCat("set ", set,
                           " has no candidate version; name one to compare")
            : absl::StrCat("set ", set, " has no version ", to_version));
  }
  if (from->version == to->version) {
    return absl::FailedPreconditionError(
        absl::StrCat("set ", set, ": both sides are version ", from->version));
  }
  return std::make_pair(*from, *to);
}

std::optional<double> BaselinePsi(const std::vector<double>& expected,
                                  const std::vector<double>& actual) {
  if (expected.empty() || expected.size() != actual.size()) return std::nullopt;
  return monitor::PsiFromProportions(expected, actual);
}

}  // namespace plumbline::daemon
