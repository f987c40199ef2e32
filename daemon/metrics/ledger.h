// File: daemon/metrics/ledger.h
//
// The ledger's Prometheus metrics:
//
//   plumbline_ledger_queue_rows                   gauge, read at scrape time
//   plumbline_ledger_queue_capacity_rows          gauge, the configured limit
//   plumbline_ledger_commit_duration_seconds      histogram, per commit
//   plumbline_ledger_committed_rows_total         counter
//
//   ExportLedgerMetrics(ledger.get(), exporter.get());  // before the first
//   write
//
// Thread-safe. `ledger` must outlive `exporter` (the queue gauge reads it
// on the exporter's threads); the commit metrics stay valid after the
// exporter is destroyed, so the ledger may commit until it is closed.
#ifndef PLUMBLINE_DAEMON_METRICS_LEDGER_H_
#define PLUMBLINE_DAEMON_METRICS_LEDGER_H_

#include "daemon/ledger/ledger.h"
#include "daemon/metrics/exporter.h"

namespace plumbline::daemon {

// Installs the ledger's commit observer and adds the queue gauge.
// REQUIRES: called before the ledger's first write (the observer rule of
// Ledger::set_commit_observer).
void ExportLedgerMetrics(Ledger* ledger, MetricsExporter* exporter);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_METRICS_LEDGER_H_
