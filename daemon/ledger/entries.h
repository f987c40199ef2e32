// File: daemon/ledger/entries.h
//
// How the ledger's role column reads back.
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_LEDGER_ENTRIES_H_
#define PLUMBLINE_DAEMON_LEDGER_ENTRIES_H_

#include "absl/strings/string_view.h"
#include "daemon/util/set_version.h"

namespace plumbline::daemon {

// The ScoreRole of the ledger's role column. The ledger writes only
// "active" and "shadow"; any other text reads as kShadow, so a row the
// ledger did not write can never count as the active version's.
ScoreRole RoleColumn(absl::string_view text);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_LEDGER_ENTRIES_H_
