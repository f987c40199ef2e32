// File: daemon/daemon_options.cc
#include "daemon/daemon_options.h"

#include <string>

#include "absl/status/status.h"
#include "absl/strings/str_cat.h"
#include "daemon/file_util.h"
#include "google/protobuf/util/json_util.h"

namespace plumbline::daemon {

DaemonOptions OptionsFromConfig(const v1::DaemonConfig& config) {
  DaemonOptions options;
  if (!config.listen().empty()) options.listen = config.listen();
  if (!config.sets_dir().empty()) options.sets_dir = config.sets_dir();
  if (!config.metrics_listen().empty()) {
    options.metrics_listen = config.metrics_listen();
  }
  if (!config.ledger_path().empty()) options.ledger_path = config.ledger_path();
  if (config.max_batch_records() != 0) {
    options.max_batch_records = config.max_batch_records();
  }
  if (config.max_reasons() != 0) options.max_reasons = config.max_reasons();
  if (config.max_message_bytes() != 0) {
    options.max_message_bytes = config.max_message_bytes();
  }
  return options;
}

absl::StatusOr<v1::DaemonConfig> ReadDaemonConfigFile(const std::string& path) {
  absl::StatusOr<std::string> text = ReadFileToString(path);
  if (!text.ok()) return text.status();
  v1::DaemonConfig config;
  google::protobuf::util::JsonParseOptions parse_options;
  parse_options.ignore_unknown_fields = false;
  const auto status =
      google::protobuf::util::JsonStringToMessage(*text, &config, parse_options);
  if (!status.ok()) {
    return absl::InvalidArgumentError(absl::StrCat(
        path, ": not a valid plumbd config: ", status.message().as_string()));
  }
  return config;
}

absl::StatusOr<DaemonOptions> LoadDaemonOptions(const std::string& path) {
  absl::StatusOr<v1::DaemonConfig> config = ReadDaemonConfigFile(path);
  if (!config.ok()) return config.status();
  return OptionsFromConfig(*config);
}

}  // namespace plumbline::daemon
