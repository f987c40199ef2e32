// File: daemon/daemon_options.h
//
// The daemon's settings: a plain struct holding every default in one place,
// the loader of the JSON config file (plumbline.v1.DaemonConfig, unknown
// fields rejected) and the merge of the file over the defaults. plumbd's main
// applies its command-line flags on top of the result.
//
//   absl::StatusOr<DaemonOptions> options = LoadDaemonOptions("plumbd.json");
//
// Thread-safe: free functions without shared state.
#ifndef PLUMBLINE_DAEMON_DAEMON_OPTIONS_H_
#define PLUMBLINE_DAEMON_DAEMON_OPTIONS_H_

#include <cstdint>
#include <string>

#include "absl/status/statusor.h"
#include "plumbline/v1/config.pb.h"

namespace plumbline::daemon {

struct DaemonOptions {
  // gRPC listen address, HOST:PORT. Port 0 picks a free port.
  std::string listen = "127.0.0.1:7390";
  // Directory whose *.json files are the coefficient sets.
  std::string sets_dir = "./sets";
  // Prometheus exposition listen address, HOST:PORT.
  std::string metrics_listen = "127.0.0.1:7391";
  // SQLite ledger file.
  std::string ledger_path = "./var/ledger.db";
  // Largest number of records one ScoreBatch may carry.
  uint32_t max_batch_records = 10000;
  // Largest number of reason codes a caller may ask for per record.
  uint32_t max_reasons = 20;
  // Largest gRPC message the server accepts, in bytes.
  uint32_t max_message_bytes = 64u << 20;
};

// Merges `config` over the defaults: an empty string or a zero keeps the
// default.
DaemonOptions OptionsFromConfig(const v1::DaemonConfig& config);

// Reads the JSON config file at `path`. NOT_FOUND if it cannot be read;
// INVALID_ARGUMENT for malformed JSON or unknown fields. Messages start with
// the path.
absl::StatusOr<v1::DaemonConfig> ReadDaemonConfigFile(const std::string& path);

// ReadDaemonConfigFile + OptionsFromConfig.
absl::StatusOr<DaemonOptions> LoadDaemonOptions(const std::string& path);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_DAEMON_OPTIONS_H_
