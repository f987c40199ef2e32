// File: daemon/scoring/record_conversion.cc
#include "daemon/scoring/record_conversion.h"

#include <algorithm>
#include <string>
#include <utility>

#include "absl/strings/str_cat.h"
#include "absl/strings/str_join.h"
#include "daemon/util/caller_text.h"

namespace plumbline::daemon {
namespace {

absl::string_view KindPhrase(google::protobuf::Value::KindCase kind) {
  switch (kind) {
    case google::protobuf::Value::kBoolValue:
      return "a boolean";
    case google::protobuf::Value::kListValue:
      return "a list";
    case google::protobuf::Value::kStructValue:
      return "an object";
    default:
      return "no value";
  }
}

}  // namespace

absl::StatusOr<scorer::RawValue> ValueToRawValue(
    const google::protobuf::Value& value, absl::string_view feature) {
  switch (value.kind_case()) {
    case google::protobuf::Value::kNumberValue:
      return scorer::RawValue::Number(value.number_value());
    case google::protobuf::Value::kStringValue:
      return scorer::RawValue::Text(value.string_value());
    case google::protobuf::Value::kNullValue:
    case google::protobuf::Value::KIND_NOT_SET:
      return scorer::RawValue::Missing();
    default:
      return absl::InvalidArgumentError(
          absl::StrCat("feature '", CallerText(feature),
                       "': expected a number or a string, got ",
                       KindPhrase(value.kind_case())));
  }
}

absl::Status StructToRawValues(const scorer::ScoringPlan& plan,
                               const google::protobuf::Struct& features,
                               std::vector<scorer::RawValue>* row) {
  row->assign(static_cast<size_t>(plan.num_features()),
              scorer::RawValue::Missing());
  // Struct fields are a map without a defined order; visit names sorted so
  // the first error reported is the same on every call.
  std::vector<std::pair<absl::string_view, const google::protobuf::Value*>>
      fields;
  fields.reserve(features.fields().size());
  for (const auto& [name, value] : features.fields()) {
    fields.emplace_back(name, &value);
  }
  std::sort(fields.begin(), fields.end());
  for (const auto& [name, value] : fields) {
    const int index = plan.FeatureIndex(name);
    if (index < 0) {
      std::vector<std::string> known;
      for (int f = 0; f < plan.num_features(); ++f) {
        known.push_back(plan.feature_name(f));
      }
      return absl::InvalidArgumentError(absl::StrCat(
          "feature '", CallerText(name), "' is not a feature of set '",
          plan.name(), "' (version ", plan.version(),
          "); its features are: ", absl::StrJoin(known, ", ")));
    }
    absl::StatusOr<scorer::RawValue> raw = ValueToRawValue(*value, name);
    if (!raw.ok()) return raw.status();
    (*row)[static_cast<size_t>(index)] = *raw;
  }
  return absl::OkStatus();
}

}  // namespace plumbline::daemon
