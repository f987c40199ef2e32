// File: daemon/ledger/entries.cc
#include "daemon/ledger/entries.h"

#include <charconv>
#include <cmath>

#include "absl/strings/str_cat.h"

namespace plumbline::daemon {

ScoreRole RoleColumn(absl::string_view text) {
  return ScoreRoleFromName(text).value_or(ScoreRole::kShadow);
}

void AppendJsonString(absl::string_view text, std::string* out) {
  static constexpr char kHex[] = "0123456789abcdef";
  out->push_back('"');
  size_t run = 0;  // start of the bytes not yet copied
  for (size_t i = 0; i < text.size(); ++i) {
    const auto c = static_cast<unsigned char>(text[i]);
    if (c >= 0x20 && c != '"' && c != '\\') continue;
    out->append(text.data() + run, i - run);
    run = i + 1;
    switch (c) {
      case '"':
        out->append("\\\"");
        break;
      case '\\':
        out->append("\\\\");
        break;
      case '\n':
        out->append("\\n");
        break;
      case '\r':
        out->append("\\r");
        break;
      case '\t':
        out->append("\\t");
        break;
      case '\b':
        out->append("\\b");
        break;
      case '\f':
        out->append("\\f");
        break;
      default:
        out->append("\\u00");
        out->push_back(kHex[c >> 4]);
        out->push_back(kHex[c & 0xf]);
        break;
    }
  }
  out->append(text.data() + run, text.size() - run);
  out->push_back('"');
}

void AppendJsonNumber(double x, std::string* out) {
  if (!std::isfinite(x)) {
    out->append("null");
    return;
  }
  char buffer[32];  // the shortest form of a double needs at most 24
  const std::to_chars_result r =
      std::to_chars(buffer, buffer + sizeof buffer, x);
  out->append(buffer, r.ptr);
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
    const scorer::RawValue& v = values[f];
    switch (v.kind) {
      case scorer::RawValue::Kind::kNumber:
        AppendJsonNumber(v.number, &json);
        break;
      case scorer::RawValue::Kind::kText:
        AppendJsonString(v.text, &json);
        break;
      case scorer::RawValue::Kind::kMissing:
        json.append("null");
        break;
    }
  }
  json.push_back('}');
  return json;
}

}  // namespace plumbline::daemon
