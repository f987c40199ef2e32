// File: daemon/ledger/entries.h
//
// The rules every ledger backend applies to the rows it is given, in one
// place so that the SQLite file and the PostgreSQL database decide alike:
// how the role column reads back, when two scores of one record id hold the
// same features (a retry) and what the refusal of a different record under
// a used id says, which outcomes can never be stored.
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_LEDGER_ENTRIES_H_
#define PLUMBLINE_DAEMON_LEDGER_ENTRIES_H_

#include <cstdint>

#include "absl/status/status.h"
#include "absl/strings/string_view.h"
#include "daemon/ledger/ledger.h"
#include "daemon/util/set_version.h"

namespace plumbline::daemon {

// The ScoreRole of the ledger's role column. The ledger writes only
// "active" and "shadow"; any other text reads as kShadow, so a row the
// ledger did not write can never count as the active version's.
ScoreRole RoleColumn(absl::string_view text);

// Whether two scores of one record id hold the same feature values: the
// same bytes under one layout, else the same JSON object (names in each
// version's order, so a version that reorders its features reads as other
// features: the record then needs a new id).
bool SameFeatures(const ScoreEntry& stored, const ScoreEntry& e);

// ALREADY_EXISTS for `e`, whose record id and set were recorded before as
// `stored` with other features: names the id, the stored version and time,
// and what to do.
absl::Status RecordConflict(const ScoreEntry& e, const ScoreEntry& stored);

// RESOURCE_EXHAUSTED when a write of `rows` rows cannot be queued behind
// `queued` rows in a queue of `capacity` (never, when over the capacity
// itself); OK when it fits.
absl::Status QueueAdmits(int64_t rows, int64_t queued, int64_t capacity);

// The reason a group that failed to commit is counted under
// (LedgerStats::write_failures): "disk_full", "unavailable", "corrupt",
// "other".
absl::string_view WriteFailureReason(const absl::Status& st);

// INVALID_ARGUMENT when a score of set `set_name` with `record_id` can
// never be stored: an empty id, or one with a NUL byte (which PostgreSQL
// text cannot hold, and which no export could show).
absl::Status CheckRecordId(absl::string_view record_id,
                           absl::string_view set_name);

// INVALID_ARGUMENT when `o` can never be stored (an id CheckRecordId
// refuses, label not 0/1).
absl::Status CheckOutcomeEntry(const OutcomeEntry& o);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_LEDGER_ENTRIES_H_
