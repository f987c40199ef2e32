// File: daemon/scoring/packed_row.h
//
// A scored record's feature values as the ledger stores them since schema
// version 7: packed bytes in the order of the version that scored them,
// with that version's RowLayout (plumbline.v1.RowLayout: names, levels)
// stored once per (set, version, role) in score_sets.layout. Rows written
// before schema 7 hold a JSON object instead (entries.h FeaturesJson);
// ReadStoredFeatures reads both.
//
// The packed form, for the record's F features:
//   byte 0           0x01 (a JSON object starts with '{' = 0x7b)
//   ceil(F / 2)      one 4-bit tag per feature, feature 0 in the low nibble
//   payloads         in feature order, for the tags that have one
// Tags:
//   0  not sent            1  sent as missing (null)
//   2  integer: zigzag varint (a whole number, |x| <= 2^53, not -0)
//   3..8  decimal with k = tag - 2 digits after the point: zigzag varint m,
//         x == double(m) / 10^k exactly (4.2 is m = 42, k = 1)
//   9  float: 4 bytes, x == double(float(x))
//   10 double: 8 bytes, little-endian IEEE 754
//   11 level: varint index into the layout's levels of that feature
//   12 text: varint length + bytes (a level the version does not know)
// Every number reads back bit for bit (each tag is chosen only when the
// decoding formula gives the same double); values that callers send as
// short decimals take one to three bytes. A row of 30 numeric features of
// up to six significant digits is 16 + 30 * (1..4) bytes; 30 arbitrary
// doubles are 286 bytes, still under the JSON text's ~750.
//
// Hand-written rather than protobuf: a message per row would repeat a field
// tag per value and could not use the decimal form, and the packing runs on
// the request path for every record (tests/bench/ledger_bench Pack/*).
//
//   std::string bytes;
//   PackFeatures(plan, values, sent, &bytes);             // writer
//   StoredFeatureReader reader;                           // one per reader
//   absl::Status s = reader.Read(target_plan, layout, bytes, &row);
//
// Thread-safety: the free functions are pure; a StoredFeatureReader is used
// by one thread at a time.
#ifndef PLUMBLINE_DAEMON_SCORING_PACKED_ROW_H_
#define PLUMBLINE_DAEMON_SCORING_PACKED_ROW_H_

#include <cstdint>
#include <memory>
#include <string>
#include <vector>

#include "absl/container/flat_hash_map.h"
#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "absl/types/span.h"
#include "google/protobuf/struct.pb.h"
#include "plumbline/v1/ledger.pb.h"
#include "scorer/scoring_plan.h"

namespace plumbline::daemon {

// The first byte of a packed row.
inline constexpr char kPackedRowMarker = 0x01;

// The layout of `plan`'s rows: its features in order, with the levels of the
// categorical ones.
v1::RowLayout LayoutOf(const scorer::ScoringPlan& plan);

// Appends the packed row of one record to `out` (cleared first).
// REQUIRES: values.size() == sent.size() == plan.num_features().
void PackFeatures(const scorer::ScoringPlan& plan,
                  absl::Span<const scorer::RawValue> values,
                  absl::Span<const uint8_t> sent, std::string* out);

// True when `stored` is a packed row (else the JSON of schema < 7).
inline bool IsPackedRow(absl::string_view stored) {
  return !stored.empty() && stored[0] == kPackedRowMarker;
}

// One decoded value of a packed row.
struct PackedValue {
  bool sent = false;
  scorer::RawValue value;  // text views into the row or the layout
};

// Decodes `packed` under `layout` into one PackedValue per column.
// INVALID_ARGUMENT (naming the byte offset) when the row is truncated, has
// trailing bytes, a tag that does not exist or a level index past the
// column's levels.
absl::Status UnpackFeatures(const v1::RowLayout& layout,
                            absl::string_view packed,
                            std::vector<PackedValue>* values);

// The JSON object of a stored row (packed under `layout`, or the JSON of
// schema < 7 returned as it is): the same text entries.h FeaturesJson
// writes for the same values, names in the layout's order.
absl::StatusOr<std::string> StoredFeaturesJson(const v1::RowLayout* layout,
                                               absl::string_view stored);

// Reads stored rows into a target plan's order. Caches, per layout, which
// target feature each column is. Not thread-safe.
class StoredFeatureReader {
 public:
  // Fills `row` with target.num_features() values (features the row does
  // not have, and features sent as null, are missing). A packed row needs
  // the layout it was written under (`layout`, from the ledger); a JSON row
  // is parsed by name (features_json.h). Text values view into `stored`,
  // `layout` or this reader's buffer, valid until the next Read.
  // INVALID_ARGUMENT when the row does not decode, a column is not a
  // feature of `target`, or a packed row comes without its layout.
  absl::Status Read(const scorer::ScoringPlan& target,
                    const v1::RowLayout* layout, absl::string_view stored,
                    std::vector<scorer::RawValue>* row);

 private:
  // Target feature of each of `layout`'s columns, or an error.
  absl::StatusOr<const std::vector<int>*> Mapping(
      const scorer::ScoringPlan& target, const v1::RowLayout& layout);

  google::protobuf::Struct holder_;
  std::vector<PackedValue> values_;
  const scorer::ScoringPlan* mapped_plan_ = nullptr;
  absl::flat_hash_map<const v1::RowLayout*, std::vector<int>> mappings_;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SCORING_PACKED_ROW_H_
