// File: daemon/server/options.h
//
// The daemon's settings: a plain struct holding every default in one place,
// the loader of the JSON config file (plumbline.v1.DaemonConfig, unknown
// fields rejected) and the merge of the file over the defaults. plumbd's main
// applies its command-line flags on top of the result.
//
//   absl::StatusOr<DaemonOptions> options = LoadDaemonOptions("plumbd.json");
//
// The ledger settings map config.proto's LedgerConfig onto the Ledger's own
// LedgerOptions (daemon/ledger.h); windows and drift policy are carried as
// plain structs for the health monitor.
//
// Thread-safe: free functions without shared state.
#ifndef PLUMBLINE_DAEMON_SERVER_OPTIONS_H_
#define PLUMBLINE_DAEMON_SERVER_OPTIONS_H_

#include <cstdint>
#include <string>
#include <vector>

#include "absl/status/status.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "absl/time/time.h"
#include "daemon/ledger/ledger.h"
#include "daemon/util/event_log.h"
#include "plumbline/v1/config.pb.h"
#include "plumbline/v1/security.pb.h"

namespace plumbline::daemon {

// The monitor's windows (config.proto WindowConfig).
struct WindowOptions {
  // Count window over the most recent labelled records.
  uint32_t labelled_count = 5000;
  // Count window over the most recent scored records (stability figures).
  uint32_t scored_count = 10000;
  // Time window over both.
  absl::Duration time = absl::Seconds(86400);
  // Buckets per window: records leave a window one bucket at a time.
  uint32_t buckets = 20;
};

// The drift policy (config.proto DriftPolicy).
struct DriftPolicyOptions {
  // As written in the config; empty means the monitor's documented defaults.
  std::vector<v1::MetricThreshold> thresholds;
  // Labelled records a window needs before an outcome-based figure judges.
  uint32_t min_labelled = 500;
  // Scored records a window needs before a stability figure judges.
  uint32_t min_scored = 500;
  // Time between evaluations.
  absl::Duration tick = absl::Seconds(15);
  // Level of the PSI significance tests of one set version at one
  // evaluation, shared out over its tests (Bonferroni).
  double alpha = 0.01;
  // Evaluations in a row a release condition must hold to leave a state.
  uint32_t release_evaluations = 3;
  // Default release threshold as a share of the entry threshold.
  double release_ratio = 0.8;
  // CUSUM charts: upper and lower odds ratios, slope alternative (0: no
  // slope chart), in-control ARL in labelled records, off switch.
  double cusum_upper_odds_ratio = 1.5;
  double cusum_lower_odds_ratio = 1.0 / 1.5;
  double cusum_slope_alternative = 0.75;
  double cusum_in_control_arl = 100000;
  bool cusum_disabled = false;
  // Labelled records the exact outcome figures keep per time window.
  uint64_t record_store_max_records = 1'000'000;
  // Outcome horizon of sets whose file names none (0: none).
  absl::Duration outcome_horizon = absl::ZeroDuration();
  // Labelled records waiting to mature, per set version.
  uint64_t max_immature_records = 1'000'000;
};

struct DaemonOptions {
  // gRPC listen address, HOST:PORT. Port 0 picks a free port.
  std::string listen = "127.0.0.1:7390";
  // Directory whose *.json files are the coefficient sets.
  std::string sets_dir = "./sets";
  // Prometheus exposition listen address, HOST:PORT.
  std::string metrics_listen = "127.0.0.1:7391";
  // Largest number of records one ScoreBatch (or ReportOutcomes) may carry.
  uint32_t max_batch_records = 10000;
  // Largest number of reason codes a caller may ask for per record.
  uint32_t max_reasons = 20;
  // Largest gRPC message the server accepts, in bytes.
  uint32_t max_message_bytes = 64u << 20;
  // Consecutive calls a shadow version may fail before it is retired.
  uint32_t shadow_failure_limit = 100;
  // The SQLite ledger: ledger.path is the file (DaemonConfig.ledger_path,
  // default ./var/ledger.db); the rest comes from DaemonConfig.ledger.
  LedgerOptions ledger;
  // The monitor's windows and drift policy.
  WindowOptions windows;
  DriftPolicyOptions drift_policy;
  // Refit jobs (config.proto RefitPolicy) as written; zeros mean the
  // documented defaults (daemon/refit_options.h applies them).
  v1::RefitPolicy refit;
  // TLS, access control and metrics basic auth (config.proto security) as
  // written; daemon/transport_security.h, daemon/access_control.h and
  // daemon/metrics_exporter.h check them and apply the defaults.
  v1::SecurityConfig security;
  // Standard gRPC server settings (config.proto grpc): reflection,
  // keepalive; zeros keep gRPC's defaults (daemon/server_settings.h).
  v1::GrpcServerConfig grpc;
  // The event log (config.proto log): level, format, record values.
  LogOptions log;
  // The model-health page and its history (config.proto pages) as written;
  // zeros mean the documented defaults (daemon/server/page_options.h).
  v1::PagesConfig pages;
};

// Merges `config` over the defaults: an empty string or a zero keeps the
// default. LedgerConfig: durable_commits = !relaxed_commits; retention 0
// keeps everything.
DaemonOptions OptionsFromConfig(const v1::DaemonConfig& config);

// Parses config JSON text; `source` (a path) starts every message.
// INVALID_ARGUMENT for malformed JSON or unknown fields.
absl::StatusOr<v1::DaemonConfig> ParseDaemonConfig(absl::string_view text,
                                                   absl::string_view source);

// Reads the JSON config file at `path`. NOT_FOUND if it cannot be read;
// INVALID_ARGUMENT for malformed JSON or unknown fields. Messages start with
// the path.
absl::StatusOr<v1::DaemonConfig> ReadDaemonConfigFile(const std::string& path);

// ReadDaemonConfigFile + OptionsFromConfig.
absl::StatusOr<DaemonOptions> LoadDaemonOptions(const std::string& path);

// The smallest max_message_bytes accepted. Replies are capped by the same
// limit, and a ListSets or GetSetHealth reply of a set with many features
// runs to tens of KiB; below this every call risks RESOURCE_EXHAUSTED
// (Plumbline's choice, no source).
inline constexpr uint32_t kMinMessageBytes = 64u << 10;

// Settings that would start a daemon which cannot work as configured,
// refused with INVALID_ARGUMENT naming the field:
//  - max_message_bytes below kMinMessageBytes;
//  - security.access.subjects without mutual TLS
//    (security.tls.client_ca_file): no caller could present a certificate;
//  - a metrics_listen address other than loopback without
//    security.metrics_auth, unless
//    security.allow_unauthenticated_metrics_non_loopback is true.
absl::Status CheckDaemonOptions(const DaemonOptions& options);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SERVER_OPTIONS_H_
