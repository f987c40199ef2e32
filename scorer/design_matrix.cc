#include "scorer/design_matrix.h"

#include <algorithm>
#include <cmath>
#include <map>
#include <utility>

#include "absl/status/status.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_format.h"

namespace plumbline::scorer {
namespace {

// Baselines cut numeric values at their deciles.
constexpr int kBaselineBins = 10;

// Bin of x under the BinnedTransform convention: the number of edges <= x.
int BinOf(const std::vector<double>& edges, double x) {
  return static_cast<int>(std::upper_bound(edges.begin(), edges.end(), x) -
                          edges.begin());
}

// Edges at the quantiles k / bins of sorted values, none repeated and none
// equal to the minimum, so that every bin holds at least one value.
std::vector<double> QuantileEdges(const std::vector<double>& sorted, int bins) {
  std::vector<double> edges;
  const size_t n = sorted.size();
  for (int k = 1; k < bins && n > 0; ++k) {
    const double e =
        sorted[static_cast<size_t>(k) * n / static_cast<size_t>(bins)];
    if (e > sorted.front() && (edges.empty() || e > edges.back())) {
      edges.push_back(e);
    }
  }
  return edges;
}

// The values of one feature over the training records.
struct FeatureValues {
  std::vector<double> numbers;           // numeric and binned features
  std::vector<absl::string_view> texts;  // categorical features
  int64_t missing = 0;
};

absl::Status ValueError(const FeatureSpec& spec, size_t record,
                        absl::string_view what) {
  return absl::InvalidArgumentError(
      absl::StrCat("records[", record, "]: feature '", spec.name, "': ", what));
}

absl::StatusOr<FeatureValues> Collect(
    const FeatureSpec& spec, size_t f,
    absl::Span<const std::vector<RawValue>> records) {
  FeatureValues out;
  const bool categorical = spec.kind == FeatureKind::kCategorical;
  for (size_t i = 0; i < records.size(); ++i) {
    const RawValue& v = records[i][f];
    switch (v.kind) {
      case RawValue::Kind::kMissing:
        ++out.missing;
        break;
      case RawValue::Kind::kNumber:
        if (categorical) {
          return ValueError(spec, i,
                            "expected a level name (a string), got a number");
        }
        if (!std::isfinite(v.number)) {
          return ValueError(
              spec, i,
              absl::StrCat("value ", v.number, " is not a finite number"));
        }
        out.numbers.push_back(v.number);
        break;
      case RawValue::Kind::kText:
        if (!categorical) {
          return ValueError(spec, i,
                            absl::StrCat("expected a number, got the string \"",
                                         v.text, "\""));
        }
        out.texts.push_back(v.text);
        break;
    }
  }
  return out;
}

absl::Status Unusable(const FeatureSpec& spec, absl::string_view why) {
  return absl::FailedPreconditionError(
      absl::StrCat("feature '", spec.name, "' cannot be fitted: ", why));
}

// One feature of the skeleton set plus its design columns (feature and
// encoded indices filled in by the caller).
struct LearnedFeature {
  v1::Feature feature;
  std::vector<DesignColumn> columns;
  std::vector<std::string> names;
};

absl::Status LearnNumeric(const FeatureSpec& spec, const FeatureValues& values,
                          LearnedFeature& out) {
  const std::vector<double>& x = values.numbers;
  const double n = static_cast<double>(x.size());
  double mean = 0;
  for (double v : x) mean += v;
  mean /= n;
  double sum_sq = 0;
  for (double v : x) sum_sq += (v - mean) * (v - mean);
  const double sd = std::sqrt(sum_sq / n);
  const auto [lo, hi] = std::minmax_element(x.begin(), x.end());
  if (*lo == *hi) {
    return Unusable(spec, absl::StrCat("every training value is ", *lo));
  }
  v1::NumericTransform* t = out.feature.mutable_numeric();
  t->set_center(spec.standardize ? mean : 0.0);
  t->set_scale(spec.standardize ? sd : 1.0);
  out.feature.mutable_missing()->set_impute_number(mean);
  out.columns.push_back({.slot = DesignColumn::Slot::kNumeric});
  out.names.push_back(spec.name);
  return absl::OkStatus();
}

absl::Status LearnCategorical(const FeatureSpec& spec,
                              const FeatureValues& values,
                              LearnedFeature& out) {
  std::map<std::string, int64_t> counts;  // byte order
  for (absl::string_view v : values.texts) {
    if (v.empty()) {
      return Unusable(spec,
                      "a value is the empty string; send a level name, "
                      "or null when the value is missing");
    }
    ++counts[std::string(v)];
  }
  if (counts.size() < 2) {
    return Unusable(spec, absl::StrCat("every training value is the level \"",
                                       counts.begin()->first, "\""));
  }
  std::string reference;
  int64_t best = -1;
  for (const auto& [level, count] : counts) {
    if (count > best) {
      best = count;
      reference = level;
    }
  }
  v1::CategoricalTransform* t = out.feature.mutable_categorical();
  t->set_unseen(spec.unseen);
  t->set_reference_level(reference);
  out.feature.mutable_missing()->set_impute_level(reference);
  v1::Distribution* baseline = out.feature.mutable_baseline();
  const double total = static_cast<double>(values.texts.size());
  // Known levels first, in their order; then the others in byte order.
  std::vector<std::pair<std::string, int64_t>> ordered;
  for (const std::string& level : spec.known_levels) {
    if (auto it = counts.find(level); it != counts.end()) {
      ordered.emplace_back(it->first, it->second);
      counts.erase(it);
    }
  }
  for (const auto& [level, count] : counts) ordered.emplace_back(level, count);
  int index = 0;
  for (const auto& [level, count] : ordered) {
    t->add_levels()->set_value(level);
    (*baseline->mutable_level_proportions())[level] =
        static_cast<double>(count) / total;
    if (level != reference) {
      out.columns.push_back(
          {.slot = DesignColumn::Slot::kLevel, .index = index});
      out.names.push_back(absl::StrCat(spec.name, "=", level));
    }
    ++index;
  }
  return absl::OkStatus();
}

absl::Status LearnBinned(const FeatureSpec& spec, const FeatureValues& values,
                         LearnedFeature& out) {
  std::vector<double> sorted = values.numbers;
  std::sort(sorted.begin(), sorted.end());
  std::vector<double> edges = spec.edges;
  if (edges.empty()) edges = QuantileEdges(sorted, std::max(spec.bins, 2));
  for (size_t i = 0; i < edges.size(); ++i) {
    if (!std::isfinite(edges[i]) || (i > 0 && !(edges[i] > edges[i - 1]))) {
      return absl::InvalidArgumentError(
          absl::StrCat("feature '", spec.name,
                       "': bin edges must be finite and strictly "
                       "increasing"));
    }
  }
  if (edges.empty()) {
    return Unusable(spec,
                    absl::StrCat("every training value is ", sorted.front()));
  }
  std::vector<int64_t> counts(edges.size() + 1, 0);
  for (double v : sorted) ++counts[static_cast<size_t>(BinOf(edges, v))];
  auto bin_name = [&](size_t b) {
    if (b == 0) return absl::StrFormat("%s<%g", spec.name, edges[0]);
    if (b == edges.size())
      return absl::StrFormat("%s>=%g", spec.name, edges.back());
    return absl::StrFormat("%s[%g,%g)", spec.name, edges[b - 1], edges[b]);
  };
  size_t reference = 0;
  for (size_t b = 0; b < counts.size(); ++b) {
    if (counts[b] == 0) {
      return Unusable(spec, absl::StrCat("bin ", bin_name(b),
                                         " holds no training value; use fewer "
                                         "bins or other edges"));
    }
    if (counts[b] > counts[reference]) reference = b;
  }
  v1::BinnedTransform* t = out.feature.mutable_binned();
  for (double e : edges) t->add_edges(e);
  t->mutable_coefficients()->Resize(static_cast<int>(counts.size()), 0.0);
  // Reason codes measure against the smallest training value of the
  // reference bin.
  t->set_reference(reference == 0 ? sorted.front() : edges[reference - 1]);
  double mean = 0;
  for (double v : sorted) mean += v;
  out.feature.mutable_missing()->set_impute_number(
      mean / static_cast<double>(sorted.size()));
  for (size_t b = 0; b < counts.size(); ++b) {
    if (b == reference) continue;
    out.columns.push_back(
        {.slot = DesignColumn::Slot::kBin, .index = static_cast<int>(b)});
    out.names.push_back(bin_name(b));
  }
  return absl::OkStatus();
}

}  // namespace

v1::Distribution QuantileDistribution(std::vector<double> values, int bins,
                                      int64_t missing) {
  v1::Distribution d;
  const int64_t present = static_cast<int64_t>(values.size());
  d.set_count(present + missing);
  if (present + missing > 0) {
    d.set_missing_proportion(static_cast<double>(missing) /
                             static_cast<double>(present + missing));
  }
  if (values.empty()) return d;
  std::sort(values.begin(), values.end());
  const std::vector<double> edges = QuantileEdges(values, bins);
  std::vector<int64_t> counts(edges.size() + 1, 0);
  for (double v : values) ++counts[static_cast<size_t>(BinOf(edges, v))];
  for (double e : edges) d.add_edges(e);
  for (int64_t c : counts) {
    d.add_proportions(static_cast<double>(c) / static_cast<double>(present));
  }
  d.set_min(values.front());
  d.set_max(values.back());
  return d;
}

absl::StatusOr<DesignLayout> DesignLayout::Learn(
    absl::Span<const FeatureSpec> specs,
    absl::Span<const std::vector<RawValue>> records) {
  if (records.empty()) {
    return absl::InvalidArgumentError(
        "no training records to learn the design from");
  }
  for (size_t i = 0; i < records.size(); ++i) {
    if (records[i].size() != specs.size()) {
      return absl::InvalidArgumentError(
          absl::StrFormat("records[%d] has %d values for %d features", i,
                          records[i].size(), specs.size()));
    }
  }
  v1::CoefficientSet skeleton;
  skeleton.set_name("unfitted");
  skeleton.set_version("unfitted");
  DesignLayout layout;
  int encoded = 0;
  for (size_t f = 0; f < specs.size(); ++f) {
    const FeatureSpec& spec = specs[f];
    absl::StatusOr<FeatureValues> values = Collect(spec, f, records);
    if (!values.ok()) return values.status();
    if (values->numbers.empty() && values->texts.empty()) {
      return Unusable(spec, absl::StrCat("no value in any of the ",
                                         records.size(), " training records"));
    }
    LearnedFeature learned;
    learned.feature.set_name(spec.name);
    v1::MissingRule::Kind missing = spec.missing;
    if (missing == v1::MissingRule::INDICATOR && values->missing == 0) {
      missing = v1::MissingRule::IMPUTE;
    }
    learned.feature.mutable_missing()->set_kind(missing);
    absl::Status st;
    switch (spec.kind) {
      case FeatureKind::kNumeric:
        st = LearnNumeric(spec, *values, learned);
        break;
      case FeatureKind::kCategorical:
        st = LearnCategorical(spec, *values, learned);
        break;
      case FeatureKind::kBinned:
        st = LearnBinned(spec, *values, learned);
        break;
    }
    if (!st.ok()) return st;
    if (spec.kind == FeatureKind::kCategorical) {
      learned.feature.mutable_baseline()->set_count(
          static_cast<int64_t>(records.size()));
      learned.feature.mutable_baseline()->set_missing_proportion(
          static_cast<double>(values->missing) /
          static_cast<double>(records.size()));
    } else {
      *learned.feature.mutable_baseline() =
          QuantileDistribution(values->numbers, kBaselineBins, values->missing);
    }
    // Encoded layout of ScoringPlan (scoring_plan.h): the transform's
    // columns, then the indicator.
    const int width =
        spec.kind == FeatureKind::kNumeric
            ? 1
            : (spec.kind == FeatureKind::kCategorical
                   ? learned.feature.categorical().levels_size()
                   : learned.feature.binned().coefficients_size());
    for (DesignColumn& c : learned.columns) {
      c.feature = static_cast<int>(f);
      c.encoded =
          encoded + (c.slot == DesignColumn::Slot::kNumeric ? 0 : c.index);
    }
    encoded += width;
    if (missing == v1::MissingRule::INDICATOR) {
      learned.columns.push_back({.feature = static_cast<int>(f),
                                 .slot = DesignColumn::Slot::kIndicator,
                                 .encoded = encoded++});
      learned.names.push_back(absl::StrCat(spec.name, ":missing"));
    }
    *skeleton.add_features() = std::move(learned.feature);
    layout.columns_.insert(layout.columns_.end(), learned.columns.begin(),
                           learned.columns.end());
    layout.names_.insert(layout.names_.end(), learned.names.begin(),
                         learned.names.end());
  }
  absl::StatusOr<std::shared_ptr<const ScoringPlan>> plan =
      ScoringPlan::Compile(std::move(skeleton), "learned design");
  if (!plan.ok()) return plan.status();
  if ((*plan)->encoded_width() != encoded) {
    return absl::InternalError(
        "design layout disagrees with the scoring plan's");
  }
  layout.plan_ = *std::move(plan);
  return layout;
}

absl::StatusOr<RowMatrix> DesignLayout::Encode(
    absl::Span<const std::vector<RawValue>> records) const {
  RowMatrix x(static_cast<Eigen::Index>(records.size()), num_columns());
  Eigen::RowVectorXd row(plan_->encoded_width());
  for (size_t i = 0; i < records.size(); ++i) {
    if (absl::Status st = plan_->Encode(records[i], row); !st.ok()) {
      return absl::Status(st.code(),
                          absl::StrCat("records[", i, "]: ", st.message()));
    }
    for (int j = 0; j < num_columns(); ++j) {
      x(static_cast<Eigen::Index>(i), j) =
          row[columns_[static_cast<size_t>(j)].encoded];
    }
  }
  return x;
}

}  // namespace plumbline::scorer
