// File: daemon/server/plumbd.h
//
// plumbd as one object: it owns every part of the daemon as a member,
// declared in the order the parts depend on each other, so the compiler
// builds them bottom-up and tears them down top-down. The plumbd program
// (daemon/server/plumbd_main.cc) parses its flags, starts one Plumbd and
// turns signals into Reload and Shutdown; tests may start a whole daemon in
// their own process the same way.
//
//   absl::StatusOr<DaemonOptions> options = LoadPlumbdOptions(overrides);
//   absl::StatusOr<std::unique_ptr<Plumbd>> plumbd = Plumbd::Start(*options);
//   ... (*plumbd)->bound_address() ...
//   (*plumbd)->Shutdown(absl::Seconds(5));
//   (*plumbd)->Wait();
//   plumbd->reset();   // commits what the ledger still holds, then closes
//
// Start, in order: the sets directory is checked (before the ledger file is
// created), the ledger, the version store, the lifecycle and the set
// registry (first reload), the monitor (windows rebuilt from the ledger and
// evaluated once, so the first scrape has figures), the metrics endpoint
// (logged as event=metrics_listening addr=HOST:PORT) and access control, the
// history store and the dossier store, the refit worker, the gRPC server,
// the model-health page on the metrics listener (event=pages_serving
// url=http://HOST:PORT/), then the ready file and event=listening. The
// monitor evaluates every drift_policy.tick_seconds on its own thread; each
// tick's evaluation also goes to the history (pages.history_interval).
//
// Destruction is the reverse: the page is detached from the metrics
// listener, the ticker stops, version changes stop reaching the server, the
// server goes (calls in flight have finished), the refit worker finishes a
// running job, the metrics endpoint closes, the ledger commits what is queued
// and closes the file.
//
// Thread-safe: Reload, Shutdown and the accessors may be called from any
// thread while another blocks in Wait.
#ifndef PLUMBLINE_DAEMON_SERVER_PLUMBD_H_
#define PLUMBLINE_DAEMON_SERVER_PLUMBD_H_

#include <atomic>
#include <memory>
#include <string>

#include "absl/status/statusor.h"
#include "absl/synchronization/mutex.h"
#include "absl/time/time.h"
#include "daemon/health/monitor.h"
#include "daemon/health/ticker.h"
#include "daemon/history/history_store.h"
#include "daemon/ledger/ledger.h"
#include "daemon/metrics/exporter.h"
#include "daemon/metrics/requests.h"
#include "daemon/pg/pg_leader.h"
#include "daemon/pg/pg_version_store.h"
#include "daemon/refit/job.h"
#include "daemon/refit/worker.h"
#include "daemon/registry/lifecycle.h"
#include "daemon/registry/version_store.h"
#include "daemon/review/dossier_store.h"
#include "daemon/scoring/set_registry.h"
#include "daemon/scoring/shadow_tracker.h"
#include "daemon/server/grpc_server.h"
#include "daemon/server/options.h"
#include "daemon/services/monitor.h"
#include "daemon/services/registry.h"
#include "daemon/web/pages.h"

namespace plumbline::daemon {

// What plumbd's command line may say; an empty string keeps the config
// file's value (or the default).
struct PlumbdOverrides {
  std::string config_file;     // --config: plumbline.v1.DaemonConfig JSON
  std::string sets_dir;        // --sets
  std::string listen;          // --listen
  std::string ledger_path;     // --ledger
  std::string metrics_listen;  // --metrics_listen
};

// The defaults, then the config file, then the flags. With no metrics
// address configured anywhere and a gRPC --listen on port 0, metrics take a
// free port too (tests, several daemons on one machine). Errors name the
// config file and field.
absl::StatusOr<DaemonOptions> LoadPlumbdOptions(const PlumbdOverrides& flags);

class Plumbd {
 public:
  // Starts every part (see the file comment) and returns once the gRPC
  // server serves. With a non-empty `ready_file`, writes the bound HOST:PORT
  // to it (atomically) before returning. Errors: the cause, with the part
  // that failed (config, sets directory, ledger, metrics, server).
  static absl::StatusOr<std::unique_ptr<Plumbd>> Start(
      DaemonOptions options, const std::string& ready_file = "");

  // Stops the server if Shutdown was not called, then tears everything
  // down in reverse order of construction.
  ~Plumbd();

  Plumbd(const Plumbd&) = delete;
  Plumbd& operator=(const Plumbd&) = delete;

  // gRPC HOST:PORT actually bound; metrics HOST:PORT.
  const std::string& bound_address() const { return server_->bound_address(); }
  const std::string& metrics_address() const {
    return exporter_->bound_address();
  }
  // Where refit jobs write their dossiers.
  const std::string& dossier_dir() const { return dossiers_->root(); }

  // Reloads the sets directory (SIGHUP); a new version starts its windows.
  void Reload();

  // Health names NOT_SERVING; then, for the configured drain
  // (grpc.drain_seconds), the server goes on taking calls; then it stops:
  // calls in flight may run for `grace`. Blocks for the drain.
  void Shutdown(absl::Duration grace);

  // Blocks until the server has shut down.
  void Wait();

 private:
  // Tells the gRPC server and the monitor about every version change the
  // lifecycle makes (activate, approve, rollback, shadow, refit promotion)
  // from construction to destruction; declared after the server, so no
  // change can reach a server that is gone.
  class VersionChangeHook {
   public:
    VersionChangeHook(Lifecycle* lifecycle, SetRegistry* registry,
                      Plumbd* plumbd);
    ~VersionChangeHook();
    VersionChangeHook(const VersionChangeHook&) = delete;
    VersionChangeHook& operator=(const VersionChangeHook&) = delete;

   private:
    Lifecycle* const lifecycle_;
  };

  explicit Plumbd(DaemonOptions options) : options_(std::move(options)) {}

  // Makes the monitor's versions those the registry serves. From the
  // signal thread (reloads), the ticker and lifecycle changes; one at a time.
  void SyncMonitor();
  // One tick: sync, evaluate, save the monitor's snapshots, let the refit
  // worker see the figures.
  void Tick();
  // Saves the monitor's snapshots (daemon/health/snapshot_store.h); a
  // failure is logged and the previous ones stay. A tick saves silently and
  // only what changed since the last save; `at_shutdown` saves whatever
  // the monitor holds and logs it.
  void SaveSnapshots(bool at_shutdown);
  // The last SaveSnapshots failed: the next one saves even if nothing
  // changed since the snapshots it tried to save.
  std::atomic<bool> snapshot_save_failed_{false};

  // Members in dependency order: each may use those above it. Constant
  // after Start.
  const DaemonOptions options_;
  absl::Mutex sync_mu_;  // one SyncMonitor at a time
  std::unique_ptr<Ledger> ledger_;
  // With a PostgreSQL ledger: whether this replica runs the fleet's refit
  // jobs (daemon/pg/pg_leader.h); null with an SQLite file (always).
  std::unique_ptr<PgLeader> leader_;
  std::unique_ptr<VersionStore> versions_;
  // versions_ when it is the fleet's (a PostgreSQL ledger), else null.
  PgVersionStore* fleet_versions_ = nullptr;
  std::unique_ptr<Lifecycle> lifecycle_;
  std::unique_ptr<SetRegistry> registry_;
  std::unique_ptr<HealthMonitor> monitor_;
  std::unique_ptr<SnapshotStore> snapshots_;  // the monitor's, in the ledger
  std::unique_ptr<ShadowTracker> shadow_tracker_;
  std::unique_ptr<MetricsExporter> exporter_;
  std::unique_ptr<RequestMetrics> request_metrics_;
  std::unique_ptr<HistoryStore> history_;  // null: pages.disabled
  std::unique_ptr<DossierStore> dossiers_;
  std::unique_ptr<RefitRunner> refit_runner_;
  std::unique_ptr<RefitWorker> refits_;
  std::unique_ptr<MonitorService> monitor_service_;
  std::unique_ptr<RegistryService> registry_service_;
  std::unique_ptr<DaemonServer> server_;
  std::unique_ptr<VersionChangeHook> version_hook_;
  // Attached to the metrics listener until ~Plumbd detaches it.
  std::unique_ptr<ModelHealthPages> pages_;
  std::unique_ptr<HealthTicker> ticker_;
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SERVER_PLUMBD_H_
