// File: daemon/server/page_options.h
//
// The model-health page's settings from plumbd's DaemonOptions (config.proto
// PagesConfig, and refit.dossier_dir) with their defaults applied: the
// history interval and retention, the span of the history charts, the
// page's reload interval, and where refit dossiers go.
//
//   absl::StatusOr<PageSettings> s = PageSettingsFrom(options);
//
// Thread-safe: a pure function.
#ifndef PLUMBLINE_DAEMON_SERVER_PAGE_OPTIONS_H_
#define PLUMBLINE_DAEMON_SERVER_PAGE_OPTIONS_H_

#include <string>

#include "absl/status/statusor.h"
#include "absl/time/time.h"
#include "daemon/server/options.h"

namespace plumbline::daemon {

struct PageSettings {
  bool enabled = true;
  absl::Duration history_interval = absl::Minutes(5);
  absl::Duration history_retention = absl::Hours(14 * 24);
  absl::Duration chart_span = absl::Hours(72);
  int refresh_seconds = 30;
  // refit.dossier_dir, default "dossiers" beside the ledger file.
  std::string dossier_dir;
};

// INVALID_ARGUMENT naming the field for a retention shorter than the chart
// span or the interval, or a refresh above one day.
absl::StatusOr<PageSettings> PageSettingsFrom(const DaemonOptions& options);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SERVER_PAGE_OPTIONS_H_
