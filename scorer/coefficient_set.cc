#include "scorer/coefficient_set.h"

#include <cmath>
#include <fstream>
#include <sstream>
#include <vector>

#include "absl/container/flat_hash_set.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"
#include "google/protobuf/message.h"
#include "google/protobuf/util/json_util.h"

namespace plumbline::scorer {
namespace {

// Collects the first error found, prefixed with the source and field path.
class Checker {
 public:
  explicit Checker(absl::string_view source) : source_(source) {}

  bool ok() const { return status_.ok(); }
  absl::Status status() const { return status_; }

  void Fail(absl::string_view path, absl::string_view what) {
    if (!status_.ok()) return;
    status_ = absl::InvalidArgumentError(
        absl::StrCat(source_, ": ", path, ": ", what));
  }
  void Finite(absl::string_view path, double v) {
    if (!std::isfinite(v))
      Fail(path, absl::StrCat("must be a finite number, got ", v));
  }
  void NotEmpty(absl::string_view path, absl::string_view v) {
    if (v.empty()) Fail(path, "must not be empty");
  }
  void Proportion(absl::string_view path, double v) {
    if (!(v >= 0 && v <= 1))
      Fail(path, absl::StrCat("must be in [0, 1], got ", v));
  }
  // Edges must be finite and strictly increasing.
  void Edges(absl::string_view path,
             const google::protobuf::RepeatedField<double>& edges) {
    for (int i = 0; i < edges.size(); ++i) {
      Finite(absl::StrCat(path, "[", i, "]"), edges[i]);
      if (i > 0 && !(edges[i] > edges[i - 1])) {
        Fail(absl::StrCat(path, "[", i, "]"),
             absl::StrFormat("edges must be strictly increasing, but %g "
                             "follows %g",
                             edges[i], edges[i - 1]));
      }
    }
  }

 private:
  std::string source_;
  absl::Status status_;
};

// Proportions sum to 1 within this tolerance (they are usually printed with
// limited precision by whatever wrote the baseline).
constexpr double kProportionSumTolerance = 1e-6;

void CheckDistribution(Checker& c, const std::string& path,
                       const v1::Distribution& d) {
  const bool numeric = d.edges_size() > 0 || d.proportions_size() > 0;
  const bool categorical = !d.level_proportions().empty();
  if (numeric && categorical) {
    c.Fail(path, "has both edges/proportions and level_proportions; use one");
  }
  if (numeric) {
    c.Edges(path + ".edges", d.edges());
    if (d.proportions_size() != d.edges_size() + 1) {
      c.Fail(path + ".proportions",
             absl::StrFormat("needs %d values (edges + 1), got %d",
                             d.edges_size() + 1, d.proportions_size()));
    }
    double sum = 0;
    for (int i = 0; i < d.proportions_size(); ++i) {
      c.Proportion(absl::StrCat(path, ".proportions[", i, "]"),
                   d.proportions(i));
      sum += d.proportions(i);
    }
    if (c.ok() && std::abs(sum - 1) > kProportionSumTolerance) {
      c.Fail(path + ".proportions",
             absl::StrCat("must sum to 1, sum to ", sum));
    }
  }
  if (categorical) {
    double sum = 0;
    for (const auto& [level, p] : d.level_proportions()) {
      c.Proportion(absl::StrCat(path, ".level_proportions[\"", level, "\"]"),
                   p);
      sum += p;
    }
    if (c.ok() && std::abs(sum - 1) > kProportionSumTolerance) {
      c.Fail(path + ".level_proportions",
             absl::StrCat("must sum to 1, sum to ", sum));
    }
  }
  if (d.has_min()) c.Finite(path + ".min", d.min());
  if (d.has_max()) c.Finite(path + ".max", d.max());
  if (d.has_min() && d.has_max() && !(d.min() <= d.max())) {
    c.Fail(path + ".max",
           absl::StrFormat("must be >= min (%g), got %g", d.min(), d.max()));
  }
  c.Proportion(path + ".missing_proportion", d.missing_proportion());
  if (d.count() < 0) c.Fail(path + ".count", "must not be negative");
}

// The offset of the first control character (0x00-0x1f, 0x7f) in `text`,
// or -1.
int FirstControl(absl::string_view text) {
  for (size_t i = 0; i < text.size(); ++i) {
    const auto c = static_cast<unsigned char>(text[i]);
    if (c < 0x20 || c == 0x7f) return static_cast<int>(i);
  }
  return -1;
}

// Fails `path` if `text` holds a control character: names and versions are
// printed in logs, metrics labels and the audit.
void Printable(Checker& c, absl::string_view path, absl::string_view text) {
  if (const int at = FirstControl(text); at >= 0) {
    c.Fail(path, absl::StrFormat("\"%s\" holds the control character 0x%02x "
                                 "at byte %d; it must be printable",
                                 ShownText(text),
                                 static_cast<unsigned char>(text[at]), at));
  }
}

bool ValidSetName(absl::string_view name) {
  if (name.empty()) return false;
  for (char ch : name) {
    const bool ok = (ch >= 'a' && ch <= 'z') || (ch >= 'A' && ch <= 'Z') ||
                    (ch >= '0' && ch <= '9') || ch == '_' || ch == '-' ||
                    ch == '.';
    if (!ok) return false;
  }
  return true;
}

void CheckFeature(Checker& c, const std::string& path, const v1::Feature& f) {
  const v1::MissingRule& m = f.missing();
  switch (f.transform_case()) {
    case v1::Feature::kNumeric: {
      const auto& t = f.numeric();
      const std::string p = path + ".numeric";
      c.Finite(p + ".center", t.center());
      c.Finite(p + ".scale", t.scale());
      if (!(t.scale() > 0)) {
        c.Fail(p + ".scale", absl::StrCat("must be > 0, got ", t.scale()));
      }
      c.Finite(p + ".coefficient", t.coefficient());
      if (t.has_clip_low()) c.Finite(p + ".clip_low", t.clip_low());
      if (t.has_clip_high()) c.Finite(p + ".clip_high", t.clip_high());
      if (t.has_clip_low() && t.has_clip_high() &&
          !(t.clip_low() <= t.clip_high())) {
        c.Fail(p + ".clip_high",
               absl::StrFormat("must be >= clip_low (%g), got %g", t.clip_low(),
                               t.clip_high()));
      }
      if (t.has_reference()) c.Finite(p + ".reference", t.reference());
      break;
    }
    case v1::Feature::kCategorical: {
      const auto& t = f.categorical();
      const std::string p = path + ".categorical";
      if (t.levels().empty())
        c.Fail(p + ".levels", "must list at least one level");
      absl::flat_hash_set<std::string> seen;
      for (int i = 0; i < t.levels_size(); ++i) {
        const std::string lp = absl::StrCat(p, ".levels[", i, "]");
        c.NotEmpty(lp + ".value", t.levels(i).value());
        if (!seen.insert(t.levels(i).value()).second) {
          c.Fail(lp + ".value", absl::StrCat("level \"", t.levels(i).value(),
                                             "\" is listed twice"));
        }
        c.Finite(lp + ".coefficient", t.levels(i).coefficient());
      }
      if (!t.reference_level().empty() && !seen.contains(t.reference_level())) {
        c.Fail(p + ".reference_level",
               absl::StrCat("\"", t.reference_level(),
                            "\" is not one of the levels"));
      }
      if (m.kind() == v1::MissingRule::IMPUTE &&
          !seen.contains(m.impute_level())) {
        c.Fail(path + ".missing.impute_level",
               absl::StrCat("\"", m.impute_level(),
                            "\" is not one of the levels of this feature"));
      }
      break;
    }
    case v1::Feature::kBinned: {
      const auto& t = f.binned();
      const std::string p = path + ".binned";
      if (t.edges().empty())
        c.Fail(p + ".edges", "must list at least one edge");
      c.Edges(p + ".edges", t.edges());
      if (t.coefficients_size() != t.edges_size() + 1) {
        c.Fail(
            p + ".coefficients",
            absl::StrFormat("needs %d values (one per bin: edges + 1), got %d",
                            t.edges_size() + 1, t.coefficients_size()));
      }
      for (int i = 0; i < t.coefficients_size(); ++i) {
        c.Finite(absl::StrCat(p, ".coefficients[", i, "]"), t.coefficients(i));
      }
      if (t.has_reference()) c.Finite(p + ".reference", t.reference());
      break;
    }
    case v1::Feature::TRANSFORM_NOT_SET:
      c.Fail(path, "needs one transform: numeric, categorical or binned");
      return;
  }
  if (m.kind() == v1::MissingRule::IMPUTE &&
      f.transform_case() != v1::Feature::kCategorical) {
    c.Finite(path + ".missing.impute_number", m.impute_number());
  }
  if (m.kind() == v1::MissingRule::INDICATOR) {
    c.Finite(path + ".missing.indicator_coefficient",
             m.indicator_coefficient());
  }
  if (f.has_baseline()) CheckDistribution(c, path + ".baseline", f.baseline());
}

}  // namespace

std::string ShownText(absl::string_view text) {
  constexpr size_t kShownBytes = 64;
  std::string out;
  const absl::string_view shown = text.substr(0, kShownBytes);
  for (const char ch : shown) {
    const auto c = static_cast<unsigned char>(ch);
    if (c < 0x20 || c >= 0x7f || ch == '\\') {
      absl::StrAppendFormat(&out, "\\x%02x", c);
    } else {
      out.push_back(ch);
    }
  }
  if (shown.size() < text.size()) {
    absl::StrAppend(&out, "...(", text.size(), " bytes)");
  }
  return out;
}

absl::Status ValidateCoefficientSet(const v1::CoefficientSet& set,
                                    absl::string_view source) {
  Checker c(source);
  if (!ValidSetName(set.name())) {
    c.Fail("name", absl::StrCat("must be non-empty letters, digits, '_', '-' "
                                "or '.', got \"",
                                ShownText(set.name()), "\""));
  }
  c.NotEmpty("version", set.version());
  Printable(c, "version", set.version());
  if (set.version().size() > kMaxVersionBytes) {
    c.Fail("version",
           absl::StrCat("\"", ShownText(set.version()), "\" is longer than ",
                        kMaxVersionBytes, " bytes"));
  }
  c.Finite("intercept", set.intercept());
  absl::flat_hash_set<std::string> names;
  for (int i = 0; i < set.features_size() && c.ok(); ++i) {
    const std::string path = absl::StrCat("features[", i, "]");
    const v1::Feature& f = set.features(i);
    c.NotEmpty(path + ".name", f.name());
    Printable(c, path + ".name", f.name());
    if (f.name() == "record_id") {
      c.Fail(path + ".name", "\"record_id\" is reserved for the record's id");
    }
    if (!names.insert(f.name()).second) {
      c.Fail(path + ".name", absl::StrCat("feature \"", ShownText(f.name()),
                                          "\" is defined twice"));
    }
    CheckFeature(c, path, f);
  }
  if (set.has_score_baseline()) {
    CheckDistribution(c, "score_baseline", set.score_baseline());
  }
  return c.status();
}

namespace {

// Sets every -0.0 in `message` (nested messages and map entries included) to
// +0.0. protobuf's JSON printer writes -0.0 as "-0", which its parser reads
// as +0.0, so a set holding a negative zero did not read back equal to
// itself: the lifecycle, which compares a file's set with the ledger's copy
// by meaning, then warned at every start that the file had changed (found by
// tests/fuzz/fuzz_coefficient_set). Both zeros score the same.
void PositiveZeros(google::protobuf::Message& message) {
  using google::protobuf::FieldDescriptor;
  const google::protobuf::Reflection* r = message.GetReflection();
  std::vector<const FieldDescriptor*> fields;
  r->ListFields(message, &fields);
  for (const FieldDescriptor* f : fields) {
    if (f->cpp_type() == FieldDescriptor::CPPTYPE_DOUBLE) {
      if (f->is_repeated()) {
        for (int i = 0; i < r->FieldSize(message, f); ++i) {
          if (r->GetRepeatedDouble(message, f, i) == 0.0) {
            r->SetRepeatedDouble(&message, f, i, 0.0);
          }
        }
      } else if (r->GetDouble(message, f) == 0.0) {
        r->SetDouble(&message, f, 0.0);
      }
    } else if (f->cpp_type() == FieldDescriptor::CPPTYPE_MESSAGE) {
      if (f->is_repeated()) {
        for (int i = 0; i < r->FieldSize(message, f); ++i) {
          PositiveZeros(*r->MutableRepeatedMessage(&message, f, i));
        }
      } else {
        PositiveZeros(*r->MutableMessage(&message, f));
      }
    }
  }
}

}  // namespace

absl::StatusOr<v1::CoefficientSet> ParseCoefficientSet(
    absl::string_view json, absl::string_view source) {
  v1::CoefficientSet set;
  google::protobuf::util::JsonParseOptions options;
  options.ignore_unknown_fields = false;
  const auto st = google::protobuf::util::JsonStringToMessage(
      google::protobuf::StringPiece(json.data(), json.size()), &set, options);
  if (!st.ok()) {
    return absl::InvalidArgumentError(absl::StrCat(
        source, ": not a valid coefficient set: ", st.message().as_string()));
  }
  PositiveZeros(set);
  if (absl::Status v = ValidateCoefficientSet(set, source); !v.ok()) return v;
  return set;
}

absl::StatusOr<v1::CoefficientSet> ReadCoefficientSetFile(
    const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) {
    return absl::NotFoundError(absl::StrCat(path, ": cannot open the file"));
  }
  std::ostringstream text;
  text << in.rdbuf();
  if (in.bad()) {
    return absl::DataLossError(absl::StrCat(path, ": read failed"));
  }
  return ParseCoefficientSet(text.str(), path);
}

absl::StatusOr<std::string> CoefficientSetToJson(
    const v1::CoefficientSet& set) {
  std::string out;
  google::protobuf::util::JsonPrintOptions options;
  options.add_whitespace = true;
  options.preserve_proto_field_names = true;
  const auto st =
      google::protobuf::util::MessageToJsonString(set, &out, options);
  if (!st.ok()) {
    return absl::InternalError(
        absl::StrCat("cannot write coefficient set \"", set.name(),
                     "\" as JSON: ", st.message().as_string()));
  }
  return out;
}

}  // namespace plumbline::scorer
