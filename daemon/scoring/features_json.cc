// File: daemon/scoring/features_json.cc
#include "daemon/scoring/features_json.h"

#include <cmath>

#include "absl/strings/str_cat.h"
#include "daemon/scoring/record_conversion.h"
#include "daemon/util/caller_text.h"
#include "daemon/util/json_text.h"
#include "google/protobuf/util/json_util.h"

namespace plumbline::daemon {

void AppendJsonValue(const scorer::RawValue& v, std::string* json) {
  switch (v.kind) {
    case scorer::RawValue::Kind::kNumber:
      AppendJsonNumber(v.number, json);
      return;
    case scorer::RawValue::Kind::kText:
      AppendJsonString(v.text, json);
      return;
    case scorer::RawValue::Kind::kMissing:
      json->append("null");
      return;
  }
}

std::string FeaturesJson(const scorer::ScoringPlan& plan,
                         absl::Span<const scorer::RawValue> values,
                         absl::Span<const uint8_t> sent) {
  std::string json;
  // Enough for names, quotes and numbers of up to 24 characters: one
  // allocation for most records.
  size_t reserve = 2;
  for (size_t f = 0; f < values.size(); ++f) {
    reserve += plan.feature_name(static_cast<int>(f)).size() + 28 +
               values[f].text.size();
  }
  json.reserve(reserve);
  json.push_back('{');
  bool first = true;
  for (size_t f = 0; f < values.size(); ++f) {
    if (sent[f] == 0) continue;
    if (!first) json.push_back(',');
    first = false;
    AppendJsonString(plan.feature_name(static_cast<int>(f)), &json);
    json.push_back(':');
    AppendJsonValue(values[f], &json);
  }
  json.push_back('}');
  return json;
}

absl::Status ParseFeaturesJson(const scorer::ScoringPlan& plan,
                               absl::string_view json,
                               google::protobuf::Struct* holder,
                               std::vector<scorer::RawValue>* values) {
  holder->Clear();
  google::protobuf::util::JsonParseOptions options;
  options.ignore_unknown_fields = false;
  const auto parsed = google::protobuf::util::JsonStringToMessage(
      google::protobuf::StringPiece(json.data(), json.size()), holder, options);
  if (!parsed.ok()) {
    return absl::InvalidArgumentError(
        absl::StrCat("stored features are not a JSON object: ",
                     parsed.message().as_string()));
  }
  if (absl::Status s = StructToRawValues(plan, *holder, values); !s.ok()) {
    return s;
  }
  for (int f = 0; f < plan.num_features(); ++f) {
    scorer::RawValue& v = (*values)[static_cast<size_t>(f)];
    if (v.kind == scorer::RawValue::Kind::kMissing) continue;
    const bool categorical =
        plan.feature_kind(f) == scorer::FeatureKind::kCategorical;
    if (!categorical && v.kind == scorer::RawValue::Kind::kText) {
      return absl::InvalidArgumentError(absl::StrCat(
          "feature '", plan.feature_name(f), "': expected a number, got text '",
          CallerText(v.text), "'"));
    }
    if (categorical && v.kind == scorer::RawValue::Kind::kNumber) {
      const auto& levels = plan.set().features(f).categorical().levels();
      const double x = v.number;
      if (!(x >= 0 && x < static_cast<double>(levels.size()) &&
            x == std::floor(x))) {
        return absl::InvalidArgumentError(
            absl::StrCat("feature '", plan.feature_name(f), "': the number ", x,
                         " is not a level index in [0, ", levels.size(), ")"));
      }
      v = scorer::RawValue::Text(levels[static_cast<int>(x)].value());
    }
  }
  return absl::OkStatus();
}

}  // namespace plumbline::daemon
