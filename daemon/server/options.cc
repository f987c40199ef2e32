// File: daemon/server/options.cc
#include "daemon/server/options.h"

#include <cstdint>
#include <limits>
#include <string>

#include "absl/status/status.h"
#include "absl/strings/str_cat.h"
#include "daemon/security/transport_security.h"
#include "daemon/util/files.h"
#include "google/protobuf/util/json_util.h"

namespace plumbline::daemon {
namespace {

// Seconds from the config as a Duration; values beyond int64 are infinite.
absl::Duration ConfigSeconds(uint64_t seconds) {
  if (seconds > static_cast<uint64_t>(std::numeric_limits<int64_t>::max())) {
    return absl::InfiniteDuration();
  }
  return absl::Seconds(static_cast<int64_t>(seconds));
}

void MergeLedger(const v1::LedgerConfig& config, LedgerOptions& ledger) {
  // An enum number this build does not know gets the safe acknowledgement.
  ledger.ack = config.ack() == v1::LedgerConfig::ACK_QUEUED
                   ? LedgerOptions::Ack::kQueued
                   : LedgerOptions::Ack::kCommitted;
  if (config.queue_capacity_rows() != 0) {
    ledger.queue_capacity_rows = config.queue_capacity_rows();
  }
  if (config.max_group_rows() != 0) {
    ledger.max_group_rows = config.max_group_rows();
  }
  ledger.durable_commits = !config.relaxed_commits();
  if (config.retention_seconds() != 0) {
    ledger.retention_age = ConfigSeconds(config.retention_seconds());
  }
  if (config.retention_rows() != 0) {
    ledger.retention_rows =
        config.retention_rows() >
                static_cast<uint64_t>(std::numeric_limits<int64_t>::max())
            ? 0  // more rows than SQLite can hold: keep all
            : static_cast<int64_t>(config.retention_rows());
  }
}

void MergeWindows(const v1::WindowConfig& config, WindowOptions& windows) {
  if (config.labelled_count() != 0) {
    windows.labelled_count = config.labelled_count();
  }
  if (config.scored_count() != 0) windows.scored_count = config.scored_count();
  if (config.time_seconds() != 0) {
    windows.time = ConfigSeconds(config.time_seconds());
  }
  if (config.buckets() != 0) windows.buckets = config.buckets();
}

void MergeDriftPolicy(const v1::DriftPolicy& config,
                      DriftPolicyOptions& policy) {
  policy.thresholds.assign(config.thresholds().begin(),
                           config.thresholds().end());
  if (config.min_labelled() != 0) policy.min_labelled = config.min_labelled();
  if (config.min_scored() != 0) policy.min_scored = config.min_scored();
  if (config.tick_seconds() != 0) {
    policy.tick = ConfigSeconds(config.tick_seconds());
  }
  // Out-of-range values are kept as written; health_options checks them and
  // names the field.
  if (config.alpha() != 0) policy.alpha = config.alpha();
  if (config.release_evaluations() != 0) {
    policy.release_evaluations = config.release_evaluations();
  }
  if (config.release_ratio() != 0)
    policy.release_ratio = config.release_ratio();
  const v1::CusumPolicy& c = config.cusum();
  if (c.upper_odds_ratio() != 0) {
    policy.cusum_upper_odds_ratio = c.upper_odds_ratio();
  }
  if (c.lower_odds_ratio() != 0) {
    policy.cusum_lower_odds_ratio = c.lower_odds_ratio();
  }
  if (c.has_slope_alternative()) {
    policy.cusum_slope_alternative = c.slope_alternative();
  }
  if (c.in_control_arl_records() != 0) {
    policy.cusum_in_control_arl = c.in_control_arl_records();
  }
  policy.cusum_disabled = c.disabled();
  if (config.record_store_max_records() != 0) {
    policy.record_store_max_records = config.record_store_max_records();
  }
  if (config.outcome_horizon_seconds() != 0) {
    policy.outcome_horizon = ConfigSeconds(config.outcome_horizon_seconds());
  }
  if (config.max_immature_records() != 0) {
    policy.max_immature_records = config.max_immature_records();
  }
}

LogOptions LogOptionsFrom(const v1::LogConfig& config) {
  LogOptions log;
  switch (config.level()) {
    case v1::LogConfig::WARNING:
      log.min_level = LogLevel::kWarning;
      break;
    case v1::LogConfig::ERROR:
      log.min_level = LogLevel::kError;
      break;
    default:
      log.min_level = LogLevel::kInfo;
  }
  log.format = config.format() == v1::LogConfig::JSON_LINES
                   ? LogFormat::kJsonLines
                   : LogFormat::kKeyValue;
  log.record_values = config.log_record_values();
  return log;
}

}  // namespace

DaemonOptions OptionsFromConfig(const v1::DaemonConfig& config) {
  DaemonOptions options;
  if (!config.listen().empty()) options.listen = config.listen();
  if (!config.sets_dir().empty()) options.sets_dir = config.sets_dir();
  if (!config.metrics_listen().empty()) {
    options.metrics_listen = config.metrics_listen();
  }
  if (!config.ledger_path().empty()) options.ledger.path = config.ledger_path();
  if (config.max_batch_records() != 0) {
    options.max_batch_records = config.max_batch_records();
  }
  if (config.max_reasons() != 0) options.max_reasons = config.max_reasons();
  if (config.shadow_failure_limit() != 0) {
    options.shadow_failure_limit = config.shadow_failure_limit();
  }
  if (config.max_message_bytes() != 0) {
    options.max_message_bytes = config.max_message_bytes();
  }
  MergeLedger(config.ledger(), options.ledger);
  MergeWindows(config.windows(), options.windows);
  MergeDriftPolicy(config.drift_policy(), options.drift_policy);
  options.refit = config.refit();
  options.pages = config.pages();
  options.security = config.security();
  options.grpc = config.grpc();
  options.log = LogOptionsFrom(config.log());
  return options;
}

absl::StatusOr<v1::DaemonConfig> ParseDaemonConfig(absl::string_view text,
                                                   absl::string_view source) {
  v1::DaemonConfig config;
  google::protobuf::util::JsonParseOptions parse_options;
  parse_options.ignore_unknown_fields = false;
  const auto status = google::protobuf::util::JsonStringToMessage(
      google::protobuf::StringPiece(text.data(), text.size()), &config,
      parse_options);
  if (!status.ok()) {
    return absl::InvalidArgumentError(absl::StrCat(
        source, ": not a valid plumbd config: ", status.message().as_string()));
  }
  return config;
}

absl::StatusOr<v1::DaemonConfig> ReadDaemonConfigFile(const std::string& path) {
  absl::StatusOr<std::string> text = ReadFileToString(path);
  if (!text.ok()) return text.status();
  return ParseDaemonConfig(*text, path);
}

// The longest drain a config may ask for (security.proto drain_seconds).
constexpr uint64_t kMaxDrainSeconds = 300;

absl::Status CheckDaemonOptions(const DaemonOptions& options) {
  if (options.max_message_bytes < kMinMessageBytes) {
    return absl::InvalidArgumentError(absl::StrCat(
        "max_message_bytes: ", options.max_message_bytes,
        " is below the floor of ", kMinMessageBytes,
        " bytes; requests and replies over the limit are refused, so most "
        "calls would fail (0 keeps the default of ",
        DaemonOptions().max_message_bytes, ")"));
  }
  if (options.grpc.drain_seconds() > kMaxDrainSeconds) {
    return absl::InvalidArgumentError(absl::StrCat(
        "grpc.drain_seconds: ", options.grpc.drain_seconds(),
        " is over the limit of ", kMaxDrainSeconds,
        " seconds; a stopping replica would keep serving that long after "
        "saying NOT_SERVING (a few seconds is enough for a balancer)"));
  }
  const v1::SecurityConfig& security = options.security;
  if (security.access().subjects_size() > 0 &&
      security.tls().client_ca_file().empty()) {
    return absl::InvalidArgumentError(absl::StrCat(
        "security.access.subjects: ", security.access().subjects_size(),
        " certificate subject(s) are given a role, but mutual TLS is off "
        "(security.tls.client_ca_file is empty), so no caller can present a "
        "certificate and every call relying on one would be refused; set "
        "security.tls with client_ca_file, or remove the subjects"));
  }
  if (!IsLoopbackListen(options.metrics_listen) &&
      security.metrics_auth().username().empty() &&
      !security.allow_unauthenticated_metrics_non_loopback()) {
    return absl::InvalidArgumentError(absl::StrCat(
        "metrics_listen: refusing to serve metrics without a password on ",
        options.metrics_listen,
        ", which is not a loopback address: set security.metrics_auth "
        "(plumbctl token new --role metrics prints one), or set "
        "security.allow_unauthenticated_metrics_non_loopback to true if the "
        "network is protected otherwise"));
  }
  return absl::OkStatus();
}

absl::StatusOr<DaemonOptions> LoadDaemonOptions(const std::string& path) {
  absl::StatusOr<v1::DaemonConfig> config = ReadDaemonConfigFile(path);
  if (!config.ok()) return config.status();
  return OptionsFromConfig(*config);
}

}  // namespace plumbline::daemon
