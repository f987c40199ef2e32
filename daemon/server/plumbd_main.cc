// File: daemon/server/plumbd_main.cc
//
// plumbd: serves the coefficient sets of a directory over gRPC, keeps every
// score and outcome in its SQLite ledger and watches each set's health
// (windows of recent records, drift policy, Prometheus metrics).
//
//   plumbd [--config FILE] [--sets DIR] [--listen HOST:PORT]
//          [--ledger FILE] [--metrics_listen HOST:PORT] [--ready_file FILE]
//   plumbd --version | --help
//
// With no flags it loads ./sets, keeps its ledger in ./var/ledger.db,
// listens on 127.0.0.1:7390 and serves metrics on 127.0.0.1:7391. Startup:
// sets, ledger, the monitor's windows rebuilt from the ledger, the metrics
// endpoint (logged as event=metrics_listening addr=HOST:PORT), the gRPC
// server, then the ready file and event=listening. The monitor evaluates
// every drift_policy.tick_seconds on its own thread. SIGHUP reloads the
// sets (a new version starts its own windows); SIGTERM or SIGINT shut down
// gracefully (exit 0): calls in flight finish, the ledger commits what is
// queued.
#include <signal.h>

#include <cstdio>
#include <memory>
#include <string>
#include <thread>
#include <vector>

#include "absl/flags/flag.h"
#include "absl/strings/str_cat.h"
#include "absl/synchronization/mutex.h"
#include "absl/time/time.h"
#include "daemon/server/plumbd.h"
#include "daemon/server/signals.h"
#include "daemon/util/event_log.h"
#include "daemon/util/flags.h"
#include "daemon/util/version.h"

ABSL_FLAG(std::string, config, "",
          "JSON config file (plumbline.v1.DaemonConfig); flags override it");
ABSL_FLAG(std::string, sets, "",
          "directory of coefficient-set *.json files (default ./sets)");
ABSL_FLAG(std::string, listen, "",
          "gRPC listen address HOST:PORT (default 127.0.0.1:7390; port 0 "
          "picks a free port)");
ABSL_FLAG(std::string, ledger, "",
          "SQLite ledger file (default ./var/ledger.db; its directory is "
          "created if missing), or postgresql://USER@HOST[:PORT]/DB: a "
          "database several replicas share (the password from PGPASSFILE "
          "or ~/.pgpass, never in the URI)");
ABSL_FLAG(std::string, metrics_listen, "",
          "Prometheus metrics listen address HOST:PORT (default "
          "127.0.0.1:7391; port 0 picks a free port, and so does a gRPC "
          "--listen on port 0 when no metrics address is configured)");
ABSL_FLAG(std::string, ready_file, "",
          "once serving, write the bound HOST:PORT to this file");

namespace plumbline::daemon {
namespace {

// How long calls in flight may run after SIGTERM/SIGINT. Connections of idle
// clients that do not react to the server's GOAWAY are closed at this
// deadline too, so shutdown can take this long with such clients connected.
constexpr absl::Duration kShutdownGrace = absl::Seconds(5);

int Fail(absl::string_view event, const absl::Status& status) {
  LogEvent(LogLevel::kError, event, {{"error", status.message()}});
  return 1;
}

int Run() {
  absl::StatusOr<DaemonOptions> options = LoadPlumbdOptions(
      {.config_file = absl::GetFlag(FLAGS_config),
       .sets_dir = absl::GetFlag(FLAGS_sets),
       .listen = absl::GetFlag(FLAGS_listen),
       .ledger_path = absl::GetFlag(FLAGS_ledger),
       .metrics_listen = absl::GetFlag(FLAGS_metrics_listen)});
  if (!options.ok()) return Fail("config_failed", options.status());
  absl::StatusOr<std::unique_ptr<Plumbd>> plumbd =
      Plumbd::Start(*std::move(options), absl::GetFlag(FLAGS_ready_file));
  if (!plumbd.ok()) return Fail("startup_failed", plumbd.status());
  Plumbd* daemon = plumbd->get();

  std::thread signal_thread([daemon] {
    while (true) {
      absl::StatusOr<int> signal_number = WaitForDaemonSignal();
      if (!signal_number.ok()) {
        // Only a programming error gets here; without signals the daemon
        // keeps serving until it is killed.
        LogEvent(LogLevel::kError, "signal_wait_failed",
                 {{"error", signal_number.status().message()}});
        return;
      }
      if (*signal_number == SIGHUP) {
        LogEvent(LogLevel::kInfo, "reload_requested", {{"signal", "SIGHUP"}});
        daemon->Reload();
        continue;
      }
      LogEvent(LogLevel::kInfo, "shutting_down",
               {{"signal", *signal_number == SIGTERM ? "SIGTERM" : "SIGINT"}});
      daemon->Shutdown(kShutdownGrace);
      return;
    }
  });
  daemon->Wait();
  signal_thread.join();
  plumbd->reset();  // every part, in reverse order of construction
  LogEvent(LogLevel::kInfo, "stopped");
  return 0;
}

}  // namespace
}  // namespace plumbline::daemon

int main(int argc, char** argv) {
  // Abseil's mutex deadlock detection (on in Debian's build of Abseil) is a
  // debugging aid that costs every lock a lookup in a global graph; the
  // request path takes several locks per record.
  absl::SetMutexDeadlockDetectionMode(absl::OnDeadlockCycle::kIgnore);
  // Before anything can start a thread: every thread inherits the mask.
  if (absl::Status s = plumbline::daemon::BlockDaemonSignals(); !s.ok()) {
    std::fprintf(stderr, "plumbd: %s\n", std::string(s.message()).c_str());
    return 1;
  }
  constexpr char kUsage[] =
      "usage: plumbd [--config FILE] [--sets DIR] [--listen HOST:PORT]\n"
      "              [--ledger FILE|postgresql://...] "
      "[--metrics_listen HOST:PORT] "
      "[--ready_file FILE]\n"
      "       plumbd --version | --help\n"
      "Serves the coefficient sets of a directory over gRPC, records every "
      "score and\noutcome in a ledger (an SQLite file, or PostgreSQL shared "
      "by replicas) and\nexports model-health metrics (defaults: ./sets, "
      "127.0.0.1:7390, ./var/ledger.db, metrics "
      "on 127.0.0.1:7391).\n"
      "Flags override the config file; - and _ are the same in flag names.\n"
      "SIGHUP reloads the sets; SIGTERM or SIGINT stop gracefully.\n";
  if (plumbline::daemon::WantsHelp(argc, argv)) {
    std::fputs(kUsage, stdout);
    std::printf(
        "\nflags:\n%s  --help\n      print this help and exit\n"
        "  --version\n      print plumbd's version and exit\n",
        plumbline::daemon::FlagsHelp("plumbd_main.cc").c_str());
    return 0;
  }
  if (plumbline::daemon::WantsVersion(argc, argv)) {
    std::printf("plumbd %s\n", plumbline::daemon::kPlumblineVersion);
    return 0;
  }
  absl::StatusOr<std::vector<std::string>> args =
      plumbline::daemon::ParseFlags(argc, argv);
  if (!args.ok() || !args->empty()) {
    std::fprintf(stderr, "plumbd: %s\n%s",
                 args.ok() ? "unexpected positional argument"
                           : std::string(args.status().message()).c_str(),
                 kUsage);
    return 2;
  }
  return plumbline::daemon::Run();
}
