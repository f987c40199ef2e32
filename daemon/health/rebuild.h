// File: daemon/health/rebuild.h
//
// Refills a set version's windows from the ledger when plumbd starts, so a
// restart does not empty them: the count windows get the newest N labelled
// and scored rows of the version, fed oldest first as they would have
// arrived live; the time windows get every row inside their span (at most
// the newest 1,000,000 of each kind), in whatever order, since a time
// window puts each record in its own bucket. Stored features are parsed
// back against the version's plan (daemon/features_json.h); a row that does
// not parse is skipped (a count window then holds fewer than N) and counted
// in the health_rebuilt log line. HealthMonitor::Rebuild calls it for every
// monitored version before the server starts.
//
// With an outcome horizon, labelled rows whose score is not yet mature are
// skipped by the count pass and become waiting records in the time pass
// (they enter the windows and the charts when they mature); the count window
// then starts with fewer than N records. The CUSUM charts start at 0 and
// take the count window's records, oldest first. The outcome coverage gets
// every scored and labelled row of its span (by score time).
//
// The ledger selects rows by set name only; rows of the set's other versions
// are read past, not rebuilt.
//
// Thread-safe as far as its arguments are (HealthWindows is; the ledger
// reads on its own connection).
#ifndef PLUMBLINE_DAEMON_HEALTH_REBUILD_H_
#define PLUMBLINE_DAEMON_HEALTH_REBUILD_H_

#include "absl/status/status.h"
#include "absl/time/time.h"
#include "daemon/health/windows.h"
#include "daemon/ledger/ledger.h"

namespace plumbline::daemon {

// Adds the ledger's rows of windows.plan()'s version to `windows`, with
// `now` as the monitor's present; with `upto`, only the rows up to those
// marks (a rebuild while the ledger takes writes). The ledger's read errors
// are returned.
absl::Status RebuildWindows(Ledger& ledger, HealthWindows& windows,
                            absl::Time now, const LedgerMarks* upto = nullptr);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_HEALTH_REBUILD_H_
