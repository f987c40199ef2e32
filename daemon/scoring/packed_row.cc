// File: daemon/scoring/packed_row.cc
#include "daemon/scoring/packed_row.h"

#include <cmath>
#include <cstring>

#include "absl/strings/str_cat.h"
#include "daemon/scoring/features_json.h"
#include "daemon/util/caller_text.h"
#include "daemon/util/json_text.h"

namespace plumbline::daemon {
namespace {

enum Tag : uint8_t {
  kNotSent = 0,
  kNull = 1,
  kInteger = 2,
  kDecimal1 = 3,  // .. kDecimal6 = 8
  kFloat = 9,
  kDouble = 10,
  kLevel = 11,
  kText = 12,
};
constexpr int kMaxDecimals = 6;
constexpr double kPow10[kMaxDecimals + 1] = {1, 10, 100, 1e3, 1e4, 1e5, 1e6};
// Whole numbers up to 2^53 are exact doubles.
constexpr double kMaxExact = 9007199254740992.0;

void PutVarint(uint64_t v, std::string* out) {
  while (v >= 0x80) {
    out->push_back(static_cast<char>((v & 0x7f) | 0x80));
    v >>= 7;
  }
  out->push_back(static_cast<char>(v));
}

uint64_t ZigZag(int64_t v) {
  return (static_cast<uint64_t>(v) << 1) ^ static_cast<uint64_t>(v >> 63);
}

int64_t UnZigZag(uint64_t v) {
  return static_cast<int64_t>(v >> 1) ^ -static_cast<int64_t>(v & 1);
}

// Appends `x`'s shortest exact form; returns its tag.
uint8_t PutNumber(double x, std::string* out) {
  if (std::isfinite(x) && std::abs(x) <= kMaxExact && !std::signbit(x - x)) {
    // The decimal forms: m / 10^k reads back as exactly x (both operands
    // are exact doubles and IEEE division rounds correctly, so decoding
    // computes the same double). -0 needs the double form.
    if (!(x == 0 && std::signbit(x))) {
      for (int k = 0; k <= kMaxDecimals; ++k) {
        const double scaled = x * kPow10[k];
        if (!(std::abs(scaled) <= kMaxExact)) break;
        const double m = std::nearbyint(scaled);
        if (m / kPow10[k] == x) {
          PutVarint(ZigZag(static_cast<int64_t>(m)), out);
          return static_cast<uint8_t>(k == 0 ? kInteger : kDecimal1 + k - 1);
        }
      }
    }
  }
  const float f = static_cast<float>(x);
  if (static_cast<double>(f) == x && !std::isnan(x)) {
    char bytes[4];
    std::memcpy(bytes, &f, 4);  // little-endian hosts only (x86-64, arm64)
    out->append(bytes, 4);
    return kFloat;
  }
  char bytes[8];
  std::memcpy(bytes, &x, 8);
  out->append(bytes, 8);
  return kDouble;
}

// Reads the packed bytes from a position; every read checks the bounds.
class Cursor {
 public:
  explicit Cursor(absl::string_view bytes) : bytes_(bytes) {}
  size_t pos() const { return pos_; }
  bool done() const { return pos_ == bytes_.size(); }

  absl::Status Varint(uint64_t* v) {
    uint64_t result = 0;
    for (int shift = 0; shift < 64; shift += 7) {
      if (pos_ >= bytes_.size()) return Truncated();
      const auto byte = static_cast<uint8_t>(bytes_[pos_++]);
      result |= static_cast<uint64_t>(byte & 0x7f) << shift;
      if ((byte & 0x80) == 0) {
        *v = result;
        return absl::OkStatus();
      }
    }
    return absl::InvalidArgumentError(absl::StrCat(
        "packed row: a varint longer than 10 bytes at byte ", pos_));
  }
  absl::Status Bytes(size_t n, absl::string_view* out) {
    if (bytes_.size() - pos_ < n) return Truncated();
    *out = bytes_.substr(pos_, n);
    pos_ += n;
    return absl::OkStatus();
  }

 private:
  absl::Status Truncated() const {
    return absl::InvalidArgumentError(absl::StrCat(
        "packed row: truncated at byte ", pos_, " of ", bytes_.size()));
  }
  absl::string_view bytes_;
  size_t pos_ = 0;
};

}  // namespace

v1::RowLayout LayoutOf(const scorer::ScoringPlan& plan) {
  v1::RowLayout layout;
  for (const v1::Feature& f : plan.set().features()) {
    v1::RowLayout::Column* c = layout.add_columns();
    c->set_name(f.name());
    if (f.has_categorical()) {
      c->set_categorical(true);
      for (const auto& level : f.categorical().levels()) {
        c->add_levels(level.value());
      }
    }
  }
  return layout;
}

void PackFeatures(const scorer::ScoringPlan& plan,
                  absl::Span<const scorer::RawValue> values,
                  absl::Span<const uint8_t> sent, std::string* out) {
  const size_t n = values.size();
  out->clear();
  out->reserve(1 + (n + 1) / 2 + 3 * n);
  out->push_back(kPackedRowMarker);
  const size_t tags_at = out->size();
  out->append((n + 1) / 2, '\0');
  for (size_t f = 0; f < n; ++f) {
    uint8_t tag = kNotSent;
    if (sent[f] != 0) {
      const scorer::RawValue& v = values[f];
      switch (v.kind) {
        case scorer::RawValue::Kind::kMissing:
          tag = kNull;
          break;
        case scorer::RawValue::Kind::kNumber:
          tag = PutNumber(v.number, out);
          break;
        case scorer::RawValue::Kind::kText: {
          const int feature = static_cast<int>(f);
          const int level =
              plan.feature_kind(feature) == scorer::FeatureKind::kCategorical
                  ? plan.LevelIndex(feature, v.text)
                  : -1;
          if (level >= 0) {
            PutVarint(static_cast<uint64_t>(level), out);
            tag = kLevel;
          } else {
            PutVarint(v.text.size(), out);
            out->append(v.text.data(), v.text.size());
            tag = kText;
          }
          break;
        }
      }
    }
    (*out)[tags_at + f / 2] |= static_cast<char>(tag << (4 * (f % 2)));
  }
}

absl::Status UnpackFeatures(const v1::RowLayout& layout,
                            absl::string_view packed,
                            std::vector<PackedValue>* values) {
  const size_t n = static_cast<size_t>(layout.columns_size());
  values->assign(n, PackedValue{});
  if (!IsPackedRow(packed)) {
    return absl::InvalidArgumentError("packed row: no packed-row marker");
  }
  Cursor cursor(packed);
  absl::string_view skip;
  if (absl::Status s = cursor.Bytes(1, &skip); !s.ok()) return s;
  absl::string_view tags;
  if (absl::Status s = cursor.Bytes((n + 1) / 2, &tags); !s.ok()) return s;
  for (size_t f = 0; f < n; ++f) {
    const uint8_t tag =
        (static_cast<uint8_t>(tags[f / 2]) >> (4 * (f % 2))) & 0x0f;
    PackedValue& out = (*values)[f];
    out.sent = tag != kNotSent;
    const size_t at = cursor.pos();
    switch (tag) {
      case kNotSent:
      case kNull:
        break;
      case kFloat: {
        absl::string_view b;
        if (absl::Status s = cursor.Bytes(4, &b); !s.ok()) return s;
        float x;
        std::memcpy(&x, b.data(), 4);
        out.value = scorer::RawValue::Number(static_cast<double>(x));
        break;
      }
      case kDouble: {
        absl::string_view b;
        if (absl::Status s = cursor.Bytes(8, &b); !s.ok()) return s;
        double x;
        std::memcpy(&x, b.data(), 8);
        out.value = scorer::RawValue::Number(x);
        break;
      }
      case kLevel: {
        uint64_t index;
        if (absl::Status s = cursor.Varint(&index); !s.ok()) return s;
        const v1::RowLayout::Column& c = layout.columns(static_cast<int>(f));
        if (index >= static_cast<uint64_t>(c.levels_size())) {
          return absl::InvalidArgumentError(
              absl::StrCat("packed row: level index ", index, " at byte ", at,
                           " is past the ", c.levels_size(),
                           " levels of feature '", CallerText(c.name()), "'"));
        }
        out.value = scorer::RawValue::Text(c.levels(static_cast<int>(index)));
        break;
      }
      case kText: {
        uint64_t length;
        if (absl::Status s = cursor.Varint(&length); !s.ok()) return s;
        absl::string_view text;
        if (length > packed.size()) {
          return absl::InvalidArgumentError(
              absl::StrCat("packed row: text of ", length, " bytes at byte ",
                           at, " is longer than the row"));
        }
        if (absl::Status s = cursor.Bytes(length, &text); !s.ok()) return s;
        out.value = scorer::RawValue::Text(text);
        break;
      }
      default: {
        if (tag < kInteger || tag > kDecimal1 + kMaxDecimals - 1) {
          return absl::InvalidArgumentError(
              absl::StrCat("packed row: unknown tag ", tag, " for column ", f));
        }
        uint64_t z;
        if (absl::Status s = cursor.Varint(&z); !s.ok()) return s;
        const int k = tag == kInteger ? 0 : tag - kDecimal1 + 1;
        out.value = scorer::RawValue::Number(static_cast<double>(UnZigZag(z)) /
                                             kPow10[k]);
        break;
      }
    }
    if (tag == kNull) out.value = scorer::RawValue::Missing();
  }
  if (!cursor.done()) {
    return absl::InvalidArgumentError(
        absl::StrCat("packed row: ", packed.size() - cursor.pos(),
                     " bytes past its last value"));
  }
  return absl::OkStatus();
}

absl::StatusOr<std::string> StoredFeaturesJson(const v1::RowLayout* layout,
                                               absl::string_view stored) {
  if (!IsPackedRow(stored)) return std::string(stored);
  if (layout == nullptr) {
    return absl::InvalidArgumentError(
        "a packed row without the layout it was written under");
  }
  std::vector<PackedValue> values;
  if (absl::Status s = UnpackFeatures(*layout, stored, &values); !s.ok()) {
    return s;
  }
  // The same text as FeaturesJson (entries_json.h) for the same values.
  std::string json = "{";
  bool first = true;
  for (size_t f = 0; f < values.size(); ++f) {
    if (!values[f].sent) continue;
    if (!first) json.push_back(',');
    first = false;
    AppendJsonString(layout->columns(static_cast<int>(f)).name(), &json);
    json.push_back(':');
    AppendJsonValue(values[f].value, &json);
  }
  json.push_back('}');
  return json;
}

absl::StatusOr<const std::vector<int>*> StoredFeatureReader::Mapping(
    const scorer::ScoringPlan& target, const v1::RowLayout& layout) {
  if (mapped_plan_ != &target) {
    mappings_.clear();
    mapped_plan_ = &target;
  }
  auto it = mappings_.find(&layout);
  if (it != mappings_.end()) return &it->second;
  std::vector<int> mapping;
  mapping.reserve(static_cast<size_t>(layout.columns_size()));
  for (const v1::RowLayout::Column& c : layout.columns()) {
    const int f = target.FeatureIndex(c.name());
    if (f < 0) {
      return absl::InvalidArgumentError(
          absl::StrCat("stored feature '", CallerText(c.name()),
                       "' is not a feature of version ", target.version()));
    }
    mapping.push_back(f);
  }
  return &mappings_.emplace(&layout, std::move(mapping)).first->second;
}

absl::Status StoredFeatureReader::Read(const scorer::ScoringPlan& target,
                                       const v1::RowLayout* layout,
                                       absl::string_view stored,
                                       std::vector<scorer::RawValue>* row) {
  if (!IsPackedRow(stored)) {
    return ParseFeaturesJson(target, stored, &holder_, row);
  }
  if (layout == nullptr) {
    return absl::InvalidArgumentError(
        "a packed row without the layout it was written under");
  }
  absl::StatusOr<const std::vector<int>*> mapping = Mapping(target, *layout);
  if (!mapping.ok()) return mapping.status();
  if (absl::Status s = UnpackFeatures(*layout, stored, &values_); !s.ok()) {
    return s;
  }
  row->assign(static_cast<size_t>(target.num_features()),
              scorer::RawValue::Missing());
  for (size_t c = 0; c < values_.size(); ++c) {
    if (!values_[c].sent) continue;
    const int f = (**mapping)[c];
    scorer::RawValue v = values_[c].value;
    // A level of the writing version the target does not know stays text
    // (the target's unseen rule applies); a number sent for a categorical
    // feature (the dense code) was stored as that number and reads back as
    // the target's level only through the JSON path, so it is refused here
    // as ParseFeaturesJson refuses a non-index.
    if (v.kind == scorer::RawValue::Kind::kText &&
        target.feature_kind(f) != scorer::FeatureKind::kCategorical) {
      return absl::InvalidArgumentError(
          absl::StrCat("feature '", target.feature_name(f),
                       "': expected a number, got text"));
    }
    (*row)[static_cast<size_t>(f)] = v;
  }
  return absl::OkStatus();
}

}  // namespace plumbline::daemon
