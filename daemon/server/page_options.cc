// File: daemon/server/page_options.cc
#include "daemon/server/page_options.h"

#include <algorithm>
#include <cstdint>
#include <filesystem>

#include "absl/strings/str_cat.h"

namespace plumbline::daemon {
namespace {

// Ten years at most: no page needs more and absl::Seconds stays far from
// overflow.
absl::Duration Seconds(uint64_t s) {
  return absl::Seconds(
      static_cast<int64_t>(std::min<uint64_t>(s, uint64_t{10} * 366 * 86400)));
}

}  // namespace

absl::StatusOr<PageSettings> PageSettingsFrom(const DaemonOptions& options) {
  const v1::PagesConfig& c = options.pages;
  PageSettings s;
  s.enabled = !c.disabled();
  if (c.history_interval_seconds() > 0) {
    s.history_interval = Seconds(c.history_interval_seconds());
  }
  if (c.history_retention_seconds() > 0) {
    s.history_retention = Seconds(c.history_retention_seconds());
  }
  if (c.chart_span_seconds() > 0)
    s.chart_span = Seconds(c.chart_span_seconds());
  if (c.refresh_seconds() > 0) {
    s.refresh_seconds = static_cast<int>(c.refresh_seconds());
  }
  if (s.refresh_seconds > 86400) {
    return absl::InvalidArgumentError(absl::StrCat(
        "pages.refresh_seconds: ", s.refresh_seconds, " is more than a day"));
  }
  if (s.history_retention < s.history_interval) {
    return absl::InvalidArgumentError(
        "pages.history_retention_seconds: shorter than "
        "pages.history_interval_seconds: no row would be kept");
  }
  if (s.history_retention < s.chart_span) {
    return absl::InvalidArgumentError(
        "pages.history_retention_seconds: shorter than "
        "pages.chart_span_seconds: the charts would show less than they say");
  }
  s.dossier_dir = options.refit.dossier_dir();
  if (s.dossier_dir.empty()) {
    const std::filesystem::path ledger(options.ledger.path);
    const std::filesystem::path dir = ledger.parent_path();
    s.dossier_dir =
        (dir.empty() ? std::filesystem::path(".") : dir) / "dossiers";
  }
  return s;
}

}  // namespace plumbline::daemon
