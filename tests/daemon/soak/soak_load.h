// File: tests/daemon/soak/soak_load.h
//
// The client side of the soak test (soak_test.cc): threads that keep a
// bounded mixed load on whichever plumbd serves at the moment — Score,
// ScoreBatch (named records and dense rows), ReportOutcomes, registry
// changes (Activate, Rollback, Refit) and SIGHUP reloads after a new set
// file — and write down every call's gRPC code and everything plumbd
// acknowledged, so the test can look for each acknowledged score and
// outcome in the ledger afterwards.
//
// A scoring or outcomes call whose reply did not come (UNAVAILABLE while
// plumbd is killed, DEADLINE_EXCEEDED, RESOURCE_EXHAUSTED) is sent again
// unchanged — the same record ids with the same features or labels — until
// it is acknowledged, as a careful caller would; registry calls are not
// retried.
//
//   SoakEndpoint endpoint;
//   SoakTally tally;
//   SoakLoad load(&endpoint, &tally, {.sets_dir = dir, .seed = 7});
//   endpoint.Set(plumbd->addr(), plumbd->pid());
//   load.Start();
//   endpoint.Clear();  // before each kill; Set again after the restart
//   load.Stop();
//
// Thread-safe: SoakEndpoint and SoakTally may be used from any thread.
// SoakLoad is started and stopped by one thread; its destructor stops it.
#ifndef PLUMBLINE_TESTS_DAEMON_SOAK_SOAK_LOAD_H_
#define PLUMBLINE_TESTS_DAEMON_SOAK_SOAK_LOAD_H_

#include <grpcpp/channel.h>
#include <grpcpp/support/status.h>
#include <sys/types.h>

#include <atomic>
#include <cstdint>
#include <map>
#include <memory>
#include <optional>
#include <string>
#include <thread>
#include <utility>
#include <vector>

#include "absl/base/thread_annotations.h"
#include "absl/container/flat_hash_map.h"
#include "absl/synchronization/mutex.h"

namespace plumbline::daemon::testing {

// The set every soak call scores against.
inline constexpr char kSoakSet[] = "courier";

// What the soak calls, for the tally.
enum class SoakCall {
  kScore,         // Scoring.Score
  kBatchNamed,    // Scoring.ScoreBatch, records as Structs
  kBatchDense,    // Scoring.ScoreBatch, dense rows
  kOutcomes,      // Outcomes.ReportOutcomes (the call)
  kOutcomeEntry,  // one outcome's own result code in a reply that was OK
  kListVersions,  // Registry.ListVersions
  kActivate,      // Registry.Activate
  kRollback,      // Registry.Rollback
  kRefit,         // Registry.Refit
  kReload,        // a new set file and SIGHUP (OK: signal sent)
};
const char* SoakCallName(SoakCall call);

// The gRPC codes a call of `kind` may get in the soak (README,
// "Reliability"); any other code fails the test.
bool SoakCodeAllowed(SoakCall kind, grpc::StatusCode code);

// The plumbd the load talks to, swapped by the test's controller thread.
class SoakEndpoint {
 public:
  struct Current {
    int generation = 0;  // 1 for the first daemon, +1 per restart
    std::shared_ptr<grpc::Channel> channel;
  };

  // A new daemon serves at `addr` (HOST:PORT) as process `pid`.
  void Set(const std::string& addr, pid_t pid);
  // No daemon serves (call before killing it: no signal reaches it after).
  void Clear();
  // nullopt while no daemon serves.
  std::optional<Current> Get() const;
  // Sends `signal_number` to the serving daemon; false when none serves.
  bool Signal(int signal_number);

 private:
  mutable absl::Mutex mu_;
  // guarded by mu_
  int generation_ ABSL_GUARDED_BY(mu_) = 0;
  pid_t pid_ ABSL_GUARDED_BY(mu_) = 0;  // 0: none serves
  std::shared_ptr<grpc::Channel> channel_ ABSL_GUARDED_BY(mu_);
};

// Every call's code and everything acknowledged.
class SoakTally {
 public:
  void Count(SoakCall kind, grpc::StatusCode code);
  // A score the caller got back (record id → probability), and whether
  // plumbd said it was a repeat. Queues the record for an outcome.
  void AckScore(const std::string& record_id, double probability, bool repeat);
  void AckOutcome(const std::string& record_id, int label);
  // Up to `max` acknowledged scores that have no outcome sent yet.
  std::vector<std::pair<std::string, double>> TakeUnlabelled(size_t max);

  // Calls by kind and code (codes as gRPC's numbers).
  std::map<SoakCall, std::map<int, int64_t>> Codes() const;
  absl::flat_hash_map<std::string, double> Scores() const;
  absl::flat_hash_map<std::string, int> Outcomes() const;
  int64_t repeats() const;

 private:
  mutable absl::Mutex mu_;
  // guarded by mu_
  std::map<SoakCall, std::map<int, int64_t>> codes_ ABSL_GUARDED_BY(mu_);
  absl::flat_hash_map<std::string, double> scores_ ABSL_GUARDED_BY(mu_);
  absl::flat_hash_map<std::string, int> outcomes_ ABSL_GUARDED_BY(mu_);
  std::vector<std::pair<std::string, double>> unlabelled_ ABSL_GUARDED_BY(mu_);
  int64_t repeats_ ABSL_GUARDED_BY(mu_) = 0;
};

// The label the soak reports for a record scored `probability`: a draw
// from Bernoulli(probability) fixed by the record id, so a retry sends the
// same label and refits see labels the set explains.
int SoakLabel(const std::string& record_id, double probability);

struct SoakLoadOptions {
  std::string sets_dir;  // where the set file is rewritten before a SIGHUP
  uint64_t seed = 1;     // every random choice of the load
  // Pause between two calls of one thread, so the load stays bounded
  // (about 1,500 records a second on the machines of DEVELOPERS.md).
  int pause_ms = 15;
};

class SoakLoad {
 public:
  // `endpoint` and `tally` must outlive this object.
  SoakLoad(SoakEndpoint* endpoint, SoakTally* tally, SoakLoadOptions options);
  ~SoakLoad();
  SoakLoad(const SoakLoad&) = delete;
  SoakLoad& operator=(const SoakLoad&) = delete;

  void Start();
  // Stops every thread after its current call (a call not acknowledged by
  // then is dropped) and waits for them.
  void Stop();

 private:
  void ScoreLoop(SoakCall kind, int thread);
  void OutcomesLoop();
  void OperatorLoop();
  // Waits until a daemon serves or Stop; nullopt on Stop.
  std::optional<SoakEndpoint::Current> WaitForEndpoint();
  void Pause(int ms);

  SoakEndpoint* const endpoint_;
  SoakTally* const tally_;
  const SoakLoadOptions options_;
  std::atomic<bool> stop_{false};
  std::vector<std::thread> threads_;
};

}  // namespace plumbline::daemon::testing

#endif  // PLUMBLINE_TESTS_DAEMON_SOAK_SOAK_LOAD_H_
