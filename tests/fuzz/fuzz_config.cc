// File: tests/fuzz/fuzz_config.cc
//
// libFuzzer target: plumbd's config file (plumbline.v1.DaemonConfig as
// JSON) through everything plumbd does with it before it opens a file or a
// port: the JSON parser (unknown fields refused), the merge over the
// defaults, the startup checks, the health monitor's and refit worker's
// settings, the drift policy, access control (token ids, hashes, subjects)
// and the gRPC channel arguments.
//
// Checked property, besides "no crash, no sanitizer report": a config that
// passes every check yields positive limits (batch, reasons, message size).
#include <cstdint>
#include <string>

#include "daemon/access/access_control.h"
#include "daemon/refit/job.h"
#include "daemon/server/health_options.h"
#include "daemon/server/options.h"
#include "daemon/server/settings.h"
#include "google/protobuf/stubs/logging.h"

namespace {

void Check(bool condition) {
  if (!condition) __builtin_trap();
}

}  // namespace

// protobuf logs every string that is not UTF-8 it meets while parsing;
// thousands of lines a second would only slow the fuzzer down.
extern "C" int LLVMFuzzerInitialize(int* /*argc*/, char*** /*argv*/) {
  google::protobuf::SetLogHandler(nullptr);
  return 0;
}

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* bytes, size_t size) {
  const std::string text(reinterpret_cast<const char*>(bytes), size);
  absl::StatusOr<plumbline::v1::DaemonConfig> config =
      plumbline::daemon::ParseDaemonConfig(text, "fuzz.json");
  if (!config.ok()) return 0;
  const plumbline::daemon::DaemonOptions options =
      plumbline::daemon::OptionsFromConfig(*config);
  const bool checked = plumbline::daemon::CheckDaemonOptions(options).ok();
  const bool health = plumbline::daemon::HealthMonitorOptionsFrom(
                          options.windows, options.drift_policy)
                          .ok();
  const bool refit = plumbline::daemon::RefitSettingsFrom(options.refit).ok();
  const bool access = plumbline::daemon::AccessControl::Create(
                          options.security.access(), nullptr)
                          .ok();
  plumbline::daemon::ServerChannelArgs(options.grpc);
  if (checked && health && refit && access) {
    Check(options.max_batch_records > 0);
    Check(options.max_reasons > 0);
    Check(options.max_message_bytes >= plumbline::daemon::kMinMessageBytes);
  }
  return 0;
}
