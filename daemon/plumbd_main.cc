// File: daemon/plumbd_main.cc
//
// plumbd: serves the coefficient sets of a directory over gRPC, keeps every
// score and outcome in its SQLite ledger and watches each set's health
// (windows of recent records, drift policy, Prometheus metrics).
//
//   plumbd [--config FILE] [--sets DIR] [--listen HOST:PORT]
//          [--ledger FILE] [--metrics_listen HOST:PORT] [--ready_file FILE]
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
#include <filesystem>
#include <memory>
#include <system_error>
#include <string>
#include <thread>
#include <vector>

#include "absl/flags/flag.h"
#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "absl/synchronization/mutex.h"
#include "absl/time/time.h"
#include "daemon/access_control.h"
#include "daemon/daemon_options.h"
#include "daemon/daemon_server.h"
#include "daemon/event_log.h"
#include "daemon/file_util.h"
#include "daemon/flag_parsing.h"
#include "daemon/health_monitor.h"
#include "daemon/health_options.h"
#include "daemon/health_ticker.h"
#include "daemon/ledger.h"
#include "daemon/metrics_exporter.h"
#include "daemon/metrics_health.h"
#include "daemon/metrics_ledger.h"
#include "daemon/monitor_service.h"
#include "daemon/request_metrics.h"
#include "daemon/lifecycle.h"
#include "daemon/refit_job.h"
#include "daemon/refit_worker.h"
#include "daemon/registry_service.h"
#include "daemon/set_registry.h"
#include "daemon/signals.h"
#include "daemon/version_store.h"

ABSL_FLAG(std::string, config, "",
          "JSON config file (plumbline.v1.DaemonConfig); flags override it");
ABSL_FLAG(std::string, sets, "",
          "directory of coefficient-set *.json files (default ./sets)");
ABSL_FLAG(std::string, listen, "",
          "gRPC listen address HOST:PORT (default 127.0.0.1:7390; port 0 "
          "picks a free port)");
ABSL_FLAG(std::string, ledger, "",
          "SQLite ledger file (default ./var/ledger.db; its directory is "
          "created if missing)");
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

// Health service names of the monitor and registry services.
constexpr char kMonitorServiceName[] = "plumbline.v1.Monitor";
constexpr char kRegistryServiceName[] = "plumbline.v1.Registry";

int Fail(absl::string_view event, const absl::Status& status) {
  LogEvent(LogLevel::kError, event, {{"error", status.message()}});
  return 1;
}

int Run() {
  DaemonOptions options;
  // Whether a metrics address was configured (file or flag), as opposed to
  // the default.
  bool metrics_configured = false;
  if (const std::string config = absl::GetFlag(FLAGS_config); !config.empty()) {
    absl::StatusOr<v1::DaemonConfig> loaded = ReadDaemonConfigFile(config);
    if (!loaded.ok()) return Fail("config_failed", loaded.status());
    options = OptionsFromConfig(*loaded);
    metrics_configured = !loaded->metrics_listen().empty();
  }
  if (const std::string sets = absl::GetFlag(FLAGS_sets); !sets.empty()) {
    options.sets_dir = sets;
  }
  if (const std::string listen = absl::GetFlag(FLAGS_listen); !listen.empty()) {
    options.listen = listen;
  }
  if (const std::string ledger = absl::GetFlag(FLAGS_ledger); !ledger.empty()) {
    options.ledger.path = ledger;
  }
  if (const std::string metrics = absl::GetFlag(FLAGS_metrics_listen);
      !metrics.empty()) {
    options.metrics_listen = metrics;
    metrics_configured = true;
  }
  if (!metrics_configured && absl::EndsWith(options.listen, ":0")) {
    // An ephemeral gRPC port (tests, several daemons on one machine) asks
    // for no fixed port: the metrics endpoint takes a free one too.
    options.metrics_listen = BoundAddress(options.listen, 0);
  }
  ConfigureEventLog(options.log);
  absl::StatusOr<HealthMonitorOptions> health_options =
      HealthMonitorOptionsFrom(options.windows, options.drift_policy);
  if (!health_options.ok()) return Fail("config_failed", health_options.status());

  absl::StatusOr<RefitSettings> refit_settings = RefitSettingsFrom(options.refit);
  if (!refit_settings.ok()) return Fail("config_failed", refit_settings.status());

  // The sets directory is checked before the ledger is opened, so that a bad
  // directory leaves no ledger file behind.
  if (std::error_code ec; !std::filesystem::is_directory(options.sets_dir, ec)) {
    return Fail("startup_failed",
                absl::NotFoundError(absl::StrCat(
                    "sets directory ", options.sets_dir,
                    ": cannot list: not a directory this user can read")));
  }
  // Destroyed after the server, so it commits every row an RPC in flight at
  // shutdown queued.
  absl::StatusOr<std::unique_ptr<Ledger>> ledger = Ledger::Open(options.ledger);
  if (!ledger.ok()) return Fail("startup_failed", ledger.status());
  if (options.ledger.queue_capacity_rows < options.max_batch_records) {
    LogEvent(LogLevel::kWarning, "ledger_queue_small",
             {{"queue_capacity_rows",
               absl::StrCat(options.ledger.queue_capacity_rows)},
              {"max_batch_records", absl::StrCat(options.max_batch_records)},
              {"effect", "batches above the queue capacity are refused"}});
  }
  LogEvent(LogLevel::kInfo, "ledger_open",
           {{"file", options.ledger.path},
            {"ack", options.ledger.ack == LedgerOptions::Ack::kCommitted
                        ? "committed"
                        : "queued"},
            {"durable", options.ledger.durable_commits ? "true" : "false"}});

  // The versions of every set live in the ledger; the lifecycle decides
  // which one serves (daemon/lifecycle.h).
  absl::StatusOr<std::unique_ptr<VersionStore>> versions =
      VersionStore::Open(options.ledger.path);
  if (!versions.ok()) return Fail("startup_failed", versions.status());
  Lifecycle lifecycle(versions->get());
  SetRegistry registry(options.sets_dir, &lifecycle);
  if (absl::StatusOr<ReloadReport> report = registry.Reload(); !report.ok()) {
    return Fail("startup_failed", report.status());
  }

  // The monitor: one version's windows per loaded set, refilled from the
  // ledger, evaluated once before serving so the first scrape has figures.
  const absl::Duration tick = health_options->policy.tick();
  absl::StatusOr<std::unique_ptr<HealthMonitor>> monitor =
      HealthMonitor::Create(*std::move(health_options));
  if (!monitor.ok()) return Fail("startup_failed", monitor.status());
  (*monitor)->SyncPlans(registry.AllMonitored());
  if (absl::Status s = (*monitor)->Rebuild(**ledger); !s.ok()) {
    return Fail("startup_failed", s);
  }
  (*monitor)->Evaluate();

  // Metrics: destroyed before the ledger (whose queue gauge it reads) and
  // the monitor; the ledger's commit metrics outlive it.
  absl::StatusOr<std::unique_ptr<MetricsExporter>> exporter =
      MetricsExporter::Start(options.metrics_listen,
                             options.security.metrics_auth());
  if (!exporter.ok()) return Fail("startup_failed", exporter.status());
  if (absl::Status s = InstallAccessControl(options.security.access(),
                                            (*exporter)->shared_registry());
      !s.ok()) {
    return Fail("config_failed", s);
  }
  ExportLedgerMetrics(ledger->get(), exporter->get());
  (*exporter)->Add(std::make_shared<HealthMetrics>(monitor->get()));
  RequestMetrics request_metrics((*exporter)->registry());
  LogEvent(LogLevel::kInfo, "metrics_listening",
           {{"addr", (*exporter)->bound_address()}});

  // Refit jobs run on their own thread, off the request path.
  RefitRunner refit_runner(ledger->get(), &lifecycle, &registry,
                           *refit_settings);
  auto refits = std::make_unique<RefitWorker>(&refit_runner,
                                              &(*exporter)->registry());

  MonitorService monitor_service(&registry, monitor->get());
  RegistryService registry_service(&lifecycle, refits.get());
  ServerAttachments attachments;
  attachments.health_sink = monitor->get();
  attachments.services.emplace_back(&monitor_service, kMonitorServiceName);
  attachments.services.emplace_back(&registry_service, kRegistryServiceName);
  attachments.interceptors = MakeInterceptorCreators(&request_metrics);
  absl::StatusOr<std::unique_ptr<DaemonServer>> server = DaemonServer::Start(
      options, &registry, ledger->get(), std::move(attachments));
  if (!server.ok()) return Fail("startup_failed", server.status());
  DaemonServer* daemon = server->get();
  HealthMonitor* health = monitor->get();
  // Reloads (signal thread) and ticks (ticker thread) both sync the
  // monitor's versions with the registry; one at a time.
  absl::Mutex sync_mu;
  auto sync = [&registry, health, &sync_mu] {
    absl::MutexLock lock(&sync_mu);
    health->SyncPlans(registry.AllMonitored());
  };
  // After an activation, approval, rollback or shadowing: health names and
  // the monitor's versions follow at once.
  lifecycle.Attach(&registry, [daemon, &sync](const ReloadReport& report) {
    daemon->UpdateHealth(report);
    sync();
  });
  HealthTicker ticker(tick, [health, &sync, &registry, worker = refits.get()] {
    sync();
    health->Evaluate();
    std::vector<std::string> active;
    for (const PlanPtr& plan : registry.All()) {
      active.push_back(absl::StrCat(plan->name(), "\n", plan->version()));
    }
    worker->OnEvaluated(health->AllHealth(), active);
  });

  if (const std::string ready = absl::GetFlag(FLAGS_ready_file);
      !ready.empty()) {
    absl::Status written =
        WriteFileAtomically(ready, absl::StrCat(daemon->bound_address(), "\n"));
    if (!written.ok()) {
      daemon->Shutdown(absl::ZeroDuration());
      daemon->Wait();
      return Fail("startup_failed", written);
    }
  }
  LogEvent(LogLevel::kInfo, "listening",
           {{"addr", daemon->bound_address()},
            {"sets", absl::StrCat(registry.Names().size())}});

  std::thread signal_thread([daemon, &sync] {
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
        sync();  // a new version starts its own windows at once
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
  ticker.Stop();
  refits.reset();  // finishes a running job; the server object still exists
  server->reset();
  exporter->reset();
  ledger->reset();  // commits what is still queued, then closes the file
  monitor->reset();
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
      "              [--ledger FILE] [--metrics_listen HOST:PORT] "
      "[--ready_file FILE]\n"
      "Serves the coefficient sets of a directory over gRPC, records every "
      "score and\noutcome in an SQLite ledger and exports model-health "
      "metrics (defaults: ./sets,\n127.0.0.1:7390, ./var/ledger.db, metrics "
      "on 127.0.0.1:7391).\n"
      "Flags override the config file; - and _ are the same in flag names.\n"
      "SIGHUP reloads the sets; SIGTERM or SIGINT stop gracefully.\n";
  if (plumbline::daemon::WantsHelp(argc, argv)) {
    std::fputs(kUsage, stdout);
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
