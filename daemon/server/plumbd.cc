// File: daemon/server/plumbd.cc
#include "daemon/server/plumbd.h"

#include <unistd.h>

#include <filesystem>
#include <system_error>
#include <utility>
#include <vector>

#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "daemon/access/access_control.h"
#include "daemon/ledger/sqlite_ledger.h"
#include "daemon/metrics/health.h"
#include "daemon/metrics/ledger.h"
#include "daemon/metrics/shadows.h"
#include "daemon/pg/pg_leader.h"
#include "daemon/pg/pg_ledger.h"
#include "daemon/pg/pg_version_store.h"
#include "daemon/registry/sqlite_version_store.h"
#include "daemon/server/health_options.h"
#include "daemon/server/library_logs.h"
#include "daemon/server/page_options.h"
#include "daemon/util/address.h"
#include "daemon/util/event_log.h"
#include "daemon/util/files.h"

namespace plumbline::daemon {
namespace {

// Health service names of the monitor and registry services.
constexpr char kMonitorServiceName[] = "plumbline.v1.Monitor";
constexpr char kRegistryServiceName[] = "plumbline.v1.Registry";

// `status` with `part` in front of its message, same code.
absl::Status In(absl::string_view part, const absl::Status& status) {
  return absl::Status(status.code(),
                      absl::StrCat(part, ": ", status.message()));
}

}  // namespace

absl::StatusOr<DaemonOptions> LoadPlumbdOptions(const PlumbdOverrides& flags) {
  DaemonOptions options;
  // Whether a metrics address was configured (file or flag), as opposed to
  // the default.
  bool metrics_configured = false;
  if (!flags.config_file.empty()) {
    absl::StatusOr<v1::DaemonConfig> loaded =
        ReadDaemonConfigFile(flags.config_file);
    if (!loaded.ok()) return loaded.status();
    options = OptionsFromConfig(*loaded);
    metrics_configured = !loaded->metrics_listen().empty();
  }
  if (!flags.sets_dir.empty()) options.sets_dir = flags.sets_dir;
  if (!flags.listen.empty()) options.listen = flags.listen;
  if (!flags.ledger_path.empty()) options.ledger.path = flags.ledger_path;
  if (!flags.metrics_listen.empty()) {
    options.metrics_listen = flags.metrics_listen;
    metrics_configured = true;
  }
  if (!metrics_configured && absl::EndsWith(options.listen, ":0")) {
    options.metrics_listen = BoundAddress(options.listen, 0);
  }
  // Settings checked here are config errors (event=config_failed), not
  // startup failures; Start checks them again, cheaply.
  if (absl::Status s = CheckDaemonOptions(options); !s.ok()) return s;
  if (absl::StatusOr<HealthMonitorOptions> health =
          HealthMonitorOptionsFrom(options.windows, options.drift_policy);
      !health.ok()) {
    return health.status();
  }
  if (absl::StatusOr<RefitSettings> refit = RefitSettingsFrom(options.refit);
      !refit.ok()) {
    return refit.status();
  }
  if (absl::StatusOr<PageSettings> pages = PageSettingsFrom(options);
      !pages.ok()) {
    return pages.status();
  }
  if (absl::StatusOr<std::unique_ptr<AccessControl>> access =
          AccessControl::Create(options.security.access(), nullptr);
      !access.ok()) {
    return access.status();
  }
  return options;
}

Plumbd::VersionChangeHook::VersionChangeHook(Lifecycle* lifecycle,
                                             SetRegistry* registry,
                                             Plumbd* plumbd)
    : lifecycle_(lifecycle) {
  lifecycle_->Attach(registry, [plumbd](const ReloadReport& report) {
    plumbd->server_->UpdateHealth(report);
    plumbd->SyncMonitor();
  });
}

Plumbd::VersionChangeHook::~VersionChangeHook() { lifecycle_->Detach(); }

absl::StatusOr<std::unique_ptr<Plumbd>> Plumbd::Start(
    DaemonOptions options, const std::string& ready_file) {
  ConfigureEventLog(options.log);
  RouteLibraryLogsToEventLog();
  if (absl::Status s = CheckDaemonOptions(options); !s.ok()) {
    return In("config", s);
  }
  absl::StatusOr<HealthMonitorOptions> health_options =
      HealthMonitorOptionsFrom(options.windows, options.drift_policy);
  if (!health_options.ok()) return In("config", health_options.status());
  absl::StatusOr<RefitSettings> refit_settings =
      RefitSettingsFrom(options.refit);
  if (!refit_settings.ok()) return In("config", refit_settings.status());
  absl::StatusOr<PageSettings> page_settings = PageSettingsFrom(options);
  if (!page_settings.ok()) return In("config", page_settings.status());

  // The sets directory is checked before the ledger is opened, so that a bad
  // directory leaves no ledger file behind.
  if (std::error_code ec;
      !std::filesystem::is_directory(options.sets_dir, ec)) {
    return absl::NotFoundError(
        absl::StrCat("sets directory ", options.sets_dir,
                     ": cannot list: not a directory this user can read"));
  }

  std::unique_ptr<Plumbd> d(new Plumbd(std::move(options)));
  const DaemonOptions& o = d->options_;

  LedgerOptions ledger_options = o.ledger;
  ledger_options.holder_note = absl::StrCat("listen ", o.listen);
  // --ledger PATH: one machine's SQLite file; --ledger postgresql://...: a
  // database several replicas share (daemon/pg/pg_ledger.h).
  const bool fleet = IsPgLedgerUri(o.ledger.path);
  absl::StatusOr<std::unique_ptr<Ledger>> ledger =
      fleet ? PgLedger::Open(std::move(ledger_options))
            : SqliteLedger::Open(std::move(ledger_options));
  if (!ledger.ok()) return ledger.status();
  d->ledger_ = *std::move(ledger);
  if (o.ledger.queue_capacity_rows < o.max_batch_records) {
    LogEvent(
        LogLevel::kWarning, "ledger_queue_small",
        {{"queue_capacity_rows", absl::StrCat(o.ledger.queue_capacity_rows)},
         {"max_batch_records", absl::StrCat(o.max_batch_records)},
         {"effect", "batches above the queue capacity are refused"}});
  }
  LogEvent(LogLevel::kInfo, "ledger_open",
           {{fleet ? "database" : "file", o.ledger.path},
            {"ack", o.ledger.ack == LedgerOptions::Ack::kCommitted ? "committed"
                                                                   : "queued"},
            {"durable", o.ledger.durable_commits ? "true" : "false"}});

  // The versions of every set live in the ledger; the lifecycle decides
  // which one serves (daemon/registry/lifecycle.h).
  // On a fleet they live in the shared database, and every replica
  // follows the changes made through the others (Watch, below).
  if (fleet) {
    absl::StatusOr<std::unique_ptr<PgVersionStore>> versions =
        PgVersionStore::Open(o.ledger.path);
    if (!versions.ok()) return versions.status();
    d->fleet_versions_ = versions->get();
    d->versions_ = *std::move(versions);
  } else {
    absl::StatusOr<std::unique_ptr<VersionStore>> versions =
        SqliteVersionStore::Open(o.ledger.path, o.ledger.env);
    if (!versions.ok()) return versions.status();
    d->versions_ = *std::move(versions);
  }
  d->lifecycle_ = std::make_unique<Lifecycle>(d->versions_.get());
  d->registry_ = std::make_unique<SetRegistry>(o.sets_dir, d->lifecycle_.get());
  if (absl::StatusOr<ReloadReport> report = d->registry_->Reload();
      !report.ok()) {
    return report.status();
  }

  // The monitor: one version's windows per loaded set, restored from its
  // last snapshot and the ledger rows after it (or rebuilt from the
  // ledger), fed by the ledger's commits from then on, evaluated once
  // before serving so the first scrape has figures.
  const absl::Duration tick = health_options->policy.tick();
  health_options->find_plan = [r = d->registry_.get()](
                                  const std::string& set,
                                  const std::string& version) {
    return r->FindVersion(set, version);
  };
  absl::StatusOr<std::unique_ptr<HealthMonitor>> monitor =
      HealthMonitor::Create(*std::move(health_options));
  if (!monitor.ok()) return monitor.status();
  d->monitor_ = *std::move(monitor);
  d->monitor_->SyncPlans(d->registry_->AllMonitored());
  // Snapshots shorten a restart on one machine's file. A replica of a
  // fleet rebuilds its windows from the shared ledger instead: a snapshot
  // of one replica's would have to name the fleet's marks, and the reads
  // run on the database server, not on this host's disk.
  if (!fleet) {
    absl::StatusOr<std::unique_ptr<SnapshotStore>> snapshots =
        SnapshotStore::Open(o.ledger.path, o.ledger.env);
    if (!snapshots.ok()) return snapshots.status();
    d->snapshots_ = *std::move(snapshots);
  }
  if (absl::StatusOr<RestoreReport> restored =
          d->monitor_->Restore(*d->ledger_, d->snapshots_.get());
      !restored.ok()) {
    return restored.status();
  }
  d->ledger_->set_rows_observer(
      [m = d->monitor_.get()](const CommittedRows& rows) {
        m->OnCommitted(rows);
      });
  d->monitor_->Evaluate();

  absl::StatusOr<std::unique_ptr<MetricsExporter>> exporter =
      MetricsExporter::Start(o.metrics_listen, o.security.metrics_auth());
  if (!exporter.ok()) return exporter.status();
  d->exporter_ = *std::move(exporter);
  if (absl::Status s = InstallAccessControl(o.security.access(),
                                            d->exporter_->shared_registry());
      !s.ok()) {
    return In("config", s);
  }
  ExportLedgerMetrics(d->ledger_.get(), d->exporter_.get());
  d->exporter_->Add(std::make_shared<HealthMetrics>(d->monitor_.get()));
  d->shadow_tracker_ = std::make_unique<ShadowTracker>(o.shadow_failure_limit);
  d->exporter_->Add(std::make_shared<ShadowMetrics>(d->shadow_tracker_.get()));
  d->request_metrics_ =
      std::make_unique<RequestMetrics>(d->exporter_->registry());
  LogEvent(LogLevel::kInfo, "metrics_listening",
           {{"addr", d->exporter_->bound_address()}});

  // The history the page draws, and the refit dossiers. A fleet's replicas
  // draw their pages without history for now (it lives in the SQLite file).
  if (page_settings->enabled && !fleet) {
    HistoryOptions history;
    history.interval = page_settings->history_interval;
    history.retention = page_settings->history_retention;
    absl::StatusOr<std::unique_ptr<HistoryStore>> store =
        HistoryStore::Open(o.ledger.path, history);
    if (!store.ok()) return In("history", store.status());
    d->history_ = *std::move(store);
    if (absl::StatusOr<int> rows =
            d->history_->Record(d->monitor_->AllHealth());
        !rows.ok()) {
      LogEvent(LogLevel::kWarning, "history_write_failed",
               {{"error", rows.status().message()}});
    }
  }
  d->dossiers_ = std::make_unique<DossierStore>(page_settings->dossier_dir);

  // Of a fleet, one replica at a time runs refit jobs: the one holding the
  // leader lock on the shared database.
  if (fleet) {
    char host[256] = {};
    gethostname(host, sizeof(host) - 1);
    absl::StatusOr<std::unique_ptr<PgLeader>> leader = PgLeader::Start(
        o.ledger.path, kPgRefitLeaderLockKey,
        absl::StrCat("plumbd ", host, " pid ", getpid(), " listen ", o.listen));
    if (!leader.ok()) return leader.status();
    d->leader_ = *std::move(leader);
  }

  // Refit jobs run on their own thread, off the request path.
  d->refit_runner_ =
      std::make_unique<RefitRunner>(d->ledger_.get(), d->lifecycle_.get(),
                                    d->registry_.get(), *refit_settings);
  d->refit_runner_->WriteDossiersTo(d->dossiers_.get(),
                                    &d->monitor_->options().policy);
  d->refits_ = std::make_unique<RefitWorker>(d->refit_runner_.get(),
                                             &d->exporter_->registry());

  d->monitor_service_ =
      std::make_unique<MonitorService>(d->registry_.get(), d->monitor_.get());
  d->registry_service_ = std::make_unique<RegistryService>(
      d->lifecycle_.get(), d->refits_.get(), d->shadow_tracker_.get(),
      d->dossiers_.get(), &d->monitor_->options().policy, d->ledger_.get());
  if (d->leader_ != nullptr) {
    d->registry_service_->set_refit_gate([leader = d->leader_.get()] {
      if (leader->is_leader()) return absl::OkStatus();
      const std::string holder = leader->Holder();
      return absl::FailedPreconditionError(absl::StrCat(
          "this replica does not run the fleet's refit jobs; ",
          holder.empty()
              ? std::string("no replica holds the leader lock "
                            "right now: retry shortly")
              : absl::StrCat("'", holder, "' does: send the refit there")));
    });
  }
  ServerAttachments attachments;
  attachments.shadows.tracker = d->shadow_tracker_.get();
  attachments.shadows.stop = [lifecycle = d->lifecycle_.get()](
                                 const SetVersion& shadow,
                                 const std::string& why) {
    absl::StatusOr<VersionRecord> stopped =
        lifecycle->StopShadow({shadow.set, shadow.version, "plumbd", why});
    if (!stopped.ok()) {
      LogEvent(LogLevel::kError, "shadow_stop_failed",
               {{"set", shadow.set},
                {"version", shadow.version},
                {"error", stopped.status().message()}});
    }
  };
  attachments.services.emplace_back(d->monitor_service_.get(),
                                    kMonitorServiceName);
  attachments.services.emplace_back(d->registry_service_.get(),
                                    kRegistryServiceName);
  attachments.interceptors = MakeInterceptorCreators(d->request_metrics_.get());
  absl::StatusOr<std::unique_ptr<DaemonServer>> server = DaemonServer::Start(
      o, d->registry_.get(), d->ledger_.get(), std::move(attachments));
  if (!server.ok()) return server.status();
  d->server_ = *std::move(server);

  // After an activation, approval, rollback or shadowing: health names and
  // the monitor's versions follow at once.
  d->version_hook_ = std::make_unique<VersionChangeHook>(
      d->lifecycle_.get(), d->registry_.get(), d.get());
  // A change made through another replica of the fleet: the registry and
  // health follow as after a local one (kPgVersionRecheck bounds a lost
  // notification).
  if (d->fleet_versions_ != nullptr) {
    if (absl::Status st = d->fleet_versions_->Watch(
            [l = d->lifecycle_.get()] { l->Refresh(); });
        !st.ok()) {
      return st;
    }
  }
  if (page_settings->enabled) {
    PagesParts parts;
    parts.monitor = d->monitor_.get();
    parts.lifecycle = d->lifecycle_.get();
    parts.history = d->history_.get();
    parts.dossiers = d->dossiers_.get();
    parts.policy = &d->monitor_->options().policy;
    PagesOptions pages;
    pages.refresh_seconds = page_settings->refresh_seconds;
    pages.chart_span = page_settings->chart_span;
    pages.tick = tick;
    d->pages_ = std::make_unique<ModelHealthPages>(parts, pages);
    d->exporter_->AttachPages(d->pages_.get());
    LogEvent(
        LogLevel::kInfo, "pages_serving",
        {{"url", absl::StrCat("http://", d->exporter_->bound_address(), "/")},
         {"dossiers", d->dossiers_->root()}});
  }
  d->ticker_ =
      std::make_unique<HealthTicker>(tick, [p = d.get()] { p->Tick(); });

  // Logged before the ready file is written, so whoever waits for the file
  // finds the line too (a background rebuild's thread may hold the CPU
  // between the two).
  LogEvent(LogLevel::kInfo, "listening",
           {{"addr", d->server_->bound_address()},
            {"sets", absl::StrCat(d->registry_->Names().size())}});
  d->exporter_->SetServing(ServingState::kServing);  // GET /serving: 200
  if (!ready_file.empty()) {
    if (absl::Status s = WriteFileAtomically(
            ready_file, absl::StrCat(d->server_->bound_address(), "\n"));
        !s.ok()) {
      return s;  // ~Plumbd stops the server
    }
  }
  return d;
}

Plumbd::~Plumbd() {
  // Other replicas' changes stop arriving before anything they touch goes.
  if (fleet_versions_ != nullptr) fleet_versions_->StopWatch();
  // The page requests in flight finish before the parts they read go.
  if (pages_ != nullptr) exporter_->DetachPages();
  // The one thread the members' order cannot stop: the server's, whose
  // calls may still be running. Shutdown is idempotent.
  if (ticker_ != nullptr) ticker_->Stop();
  if (server_ != nullptr) {
    server_->Shutdown(absl::ZeroDuration());
    server_->Wait();
  }
  if (ledger_ != nullptr) {
    // What is still queued reaches the windows, and the last snapshot holds
    // it: the next start reads no rows after it.
    if (absl::Status s = ledger_->Flush(); !s.ok()) {
      LogEvent(LogLevel::kWarning, "health_snapshot_failed",
               {{"error", s.message()}});
    } else if (snapshots_ != nullptr) {
      SaveSnapshots(/*at_shutdown=*/true);
    }
    ledger_->set_rows_observer(nullptr);
  }
}

void Plumbd::SaveSnapshots(bool at_shutdown) {
  if (snapshots_ == nullptr) return;  // a fleet's replica (see Start)
  const absl::Time start = absl::Now();
  // A tick skips the copy when nothing changed since the last save (the
  // saved snapshots still hold); the last save, at shutdown, always writes.
  std::vector<WindowSnapshot> snapshots = monitor_->Snapshots(
      /*if_changed=*/!at_shutdown && !snapshot_save_failed_.load());
  if (snapshots.empty()) return;
  absl::StatusOr<int64_t> bytes = snapshots_->Save(snapshots);
  snapshot_save_failed_.store(!bytes.ok());
  if (!bytes.ok()) {
    // The previous snapshots stay; the next start reads more rows after
    // them, or rebuilds.
    LogEvent(LogLevel::kWarning, "health_snapshot_failed",
             {{"error", bytes.status().message()}});
    return;
  }
  if (!at_shutdown) return;
  LogEvent(
      LogLevel::kInfo, "health_snapshot_saved",
      {{"versions", absl::StrCat(snapshots.size())},
       {"bytes", absl::StrCat(*bytes)},
       {"ms", absl::StrCat(absl::ToDoubleMilliseconds(absl::Now() - start))}});
}

void Plumbd::SyncMonitor() {
  absl::MutexLock lock(&sync_mu_);
  monitor_->SyncPlans(registry_->AllMonitored());
}

void Plumbd::Tick() {
  SyncMonitor();
  monitor_->Evaluate();
  SaveSnapshots(/*at_shutdown=*/false);
  if (history_ != nullptr) {
    if (absl::StatusOr<int> rows = history_->Record(monitor_->AllHealth());
        !rows.ok()) {
      LogEvent(LogLevel::kWarning, "history_write_failed",
               {{"error", rows.status().message()}});
    }
  }
  std::vector<SetVersion> active;
  for (const PlanPtr& plan : registry_->All()) {
    active.push_back(SetVersion{plan->name(), plan->version()});
  }
  // A fleet's replicas all hold the fleet's figures; only the leader acts
  // on them, so one drift makes one refit.
  if (leader_ == nullptr || leader_->is_leader()) {
    refits_->OnEvaluated(monitor_->AllHealth(), active);
  }
}

void Plumbd::Reload() {
  server_->Reload();
  SyncMonitor();  // a new version starts its own windows at once
}

void Plumbd::Shutdown(absl::Duration grace) {
  const absl::Duration drain = absl::Seconds(options_.grpc.drain_seconds());
  exporter_->SetServing(ServingState::kDraining);  // GET /serving: 503
  if (drain > absl::ZeroDuration()) {
    server_->StopServingHealth();
    LogEvent(LogLevel::kInfo, "draining",
             {{"seconds", absl::StrCat(options_.grpc.drain_seconds())},
              {"effect",
               "health checking says NOT_SERVING; calls are still taken "
               "until the drain ends"}});
    absl::SleepFor(drain);
  }
  server_->Shutdown(grace);
}

void Plumbd::Wait() { server_->Wait(); }

}  // namespace plumbline::daemon
