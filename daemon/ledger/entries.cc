// File: daemon/ledger/entries.cc
#include "daemon/ledger/entries.h"

#include <string>

#include "absl/status/statusor.h"
#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "absl/time/time.h"
#include "daemon/scoring/packed_row.h"
#include "google/protobuf/util/message_differencer.h"

namespace plumbline::daemon {

ScoreRole RoleColumn(absl::string_view text) {
  return ScoreRoleFromName(text).value_or(ScoreRole::kShadow);
}

bool SameFeatures(const ScoreEntry& stored, const ScoreEntry& e) {
  const bool same_layout = stored.layout == e.layout ||
                           (stored.layout != nullptr && e.layout != nullptr &&
                            google::protobuf::util::MessageDifferencer::Equals(
                                *stored.layout, *e.layout));
  if (same_layout && stored.features == e.features) return true;
  absl::StatusOr<std::string> a =
      StoredFeaturesJson(stored.layout.get(), stored.features);
  absl::StatusOr<std::string> b =
      StoredFeaturesJson(e.layout.get(), e.features);
  return a.ok() && b.ok() && *a == *b;
}

absl::Status RecordConflict(const ScoreEntry& e, const ScoreEntry& stored) {
  return absl::AlreadyExistsError(absl::StrCat(
      "record id '", e.record_id, "' was already scored by set '", e.set_name,
      "' (version ", stored.set_version, ", ",
      absl::FormatTime("%Y-%m-%dT%H:%M:%E6SZ", stored.scored_at,
                       absl::UTCTimeZone()),
      ") with other features; a record id names one record of a set: give "
      "a new record a new id (a retry with the same features returns the "
      "stored score)"));
}

absl::Status QueueAdmits(int64_t rows, int64_t queued, int64_t capacity) {
  if (rows > capacity) {
    // Would never fit, however long the caller waits.
    return absl::ResourceExhaustedError(
        absl::StrCat("a ledger write of ", rows,
                     " rows is over the queue capacity of ", capacity,
                     " rows (ledger.queue_capacity_rows); send smaller batches "
                     "or raise the capacity"));
  }
  if (queued + rows > capacity) {
    return absl::ResourceExhaustedError(absl::StrCat(
        "ledger write queue is full (", queued, " rows waiting, capacity ",
        capacity, "); retry with backoff"));
  }
  return absl::OkStatus();
}

absl::string_view WriteFailureReason(const absl::Status& st) {
  switch (st.code()) {
    case absl::StatusCode::kResourceExhausted:
      return "disk_full";
    case absl::StatusCode::kUnavailable:
      return "unavailable";
    case absl::StatusCode::kDataLoss:
      return "corrupt";
    default:
      return "other";
  }
}

absl::Status CheckRecordId(absl::string_view record_id,
                           absl::string_view set_name) {
  if (record_id.empty()) {
    return absl::InvalidArgumentError(
        absl::StrCat("set '", set_name,
                     "': a score without a record id cannot be recorded"));
  }
  if (absl::StrContains(record_id, '\0')) {
    return absl::InvalidArgumentError(absl::StrCat(
        "set '", set_name, "': a record id must not contain a NUL byte"));
  }
  return absl::OkStatus();
}

absl::Status CheckOutcomeEntry(const OutcomeEntry& o) {
  if (o.record_id.empty()) {
    return absl::InvalidArgumentError("record_id must not be empty");
  }
  if (absl::StrContains(o.record_id, '\0')) {
    return absl::InvalidArgumentError("record_id must not contain a NUL byte");
  }
  if (o.label != 0 && o.label != 1) {
    return absl::InvalidArgumentError(absl::StrCat(
        "record '", o.record_id, "': label must be 0 or 1, got ", o.label));
  }
  return absl::OkStatus();
}

}  // namespace plumbline::daemon
