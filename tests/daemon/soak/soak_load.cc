// File: tests/daemon/soak/soak_load.cc
#include "tests/daemon/soak/soak_load.h"

#include <grpcpp/client_context.h>
#include <grpcpp/create_channel.h>
#include <grpcpp/security/credentials.h>
#include <signal.h>

#include <cmath>
#include <filesystem>
#include <functional>
#include <limits>
#include <random>

#include "absl/strings/str_cat.h"
#include "absl/time/clock.h"
#include "absl/time/time.h"
#include "plumbline/v1/outcomes.grpc.pb.h"
#include "plumbline/v1/registry.grpc.pb.h"
#include "plumbline/v1/scoring.grpc.pb.h"
#include "tests/testing/process.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon::testing {
namespace {

using grpc::StatusCode;

constexpr absl::Duration kCallDeadline = absl::Seconds(10);
constexpr absl::Duration kRefitDeadline = absl::Seconds(60);
constexpr char kActor[] = "soak";

void SetDeadline(grpc::ClientContext* context, absl::Duration deadline) {
  context->set_deadline(absl::ToChronoTime(absl::Now() + deadline));
}

// Codes after which the same call is sent again.
bool Retryable(StatusCode code) {
  return code == StatusCode::UNAVAILABLE ||
         code == StatusCode::DEADLINE_EXCEEDED ||
         code == StatusCode::RESOURCE_EXHAUSTED;
}

// One parcel's features, drawn at random. parcel_kg (IMPUTE) and hour
// (INDICATOR) are sometimes missing; distance_km (REJECT) never is.
struct Parcel {
  double distance_km;
  double parcel_kg;  // NaN: missing
  int region;        // index into urban, suburban, rural
  int service;       // index into standard, express
  double hour;       // NaN: missing
};

Parcel DrawParcel(std::mt19937_64& random) {
  std::uniform_real_distribution<double> unit(0.0, 1.0);
  const double nan = std::numeric_limits<double>::quiet_NaN();
  Parcel p;
  p.distance_km = std::round(unit(random) * 400.0) / 10.0;
  p.parcel_kg = unit(random) < 0.1 ? nan : std::round(unit(random) * 80) / 10;
  p.region = static_cast<int>(random() % 3);
  p.service = static_cast<int>(random() % 2);
  p.hour = unit(random) < 0.1 ? nan : static_cast<double>(random() % 24);
  return p;
}

void ToRecord(const Parcel& p, const std::string& id, v1::Record* record) {
  static const char* const kRegions[] = {"urban", "suburban", "rural"};
  static const char* const kServices[] = {"standard", "express"};
  record->set_record_id(id);
  auto& fields = *record->mutable_features()->mutable_fields();
  fields["distance_km"].set_number_value(p.distance_km);
  if (!std::isnan(p.parcel_kg)) {
    fields["parcel_kg"].set_number_value(p.parcel_kg);
  }
  fields["region"].set_string_value(kRegions[p.region]);
  fields["service"].set_string_value(kServices[p.service]);
  if (!std::isnan(p.hour)) fields["hour"].set_number_value(p.hour);
}

}  // namespace

const char* SoakCallName(SoakCall call) {
  switch (call) {
    case SoakCall::kScore:
      return "Score";
    case SoakCall::kBatchNamed:
      return "ScoreBatch (named)";
    case SoakCall::kBatchDense:
      return "ScoreBatch (dense)";
    case SoakCall::kOutcomes:
      return "ReportOutcomes";
    case SoakCall::kOutcomeEntry:
      return "  outcome results";
    case SoakCall::kListVersions:
      return "ListVersions";
    case SoakCall::kActivate:
      return "Activate";
    case SoakCall::kRollback:
      return "Rollback";
    case SoakCall::kRefit:
      return "Refit";
    case SoakCall::kReload:
      return "set file + SIGHUP";
  }
  return "?";
}

bool SoakCodeAllowed(SoakCall kind, StatusCode code) {
  if (code == StatusCode::OK) return true;
  // Calls in flight when plumbd is killed, or sent while it restarts.
  const bool lost =
      code == StatusCode::UNAVAILABLE || code == StatusCode::DEADLINE_EXCEEDED;
  switch (kind) {
    case SoakCall::kScore:
    case SoakCall::kBatchNamed:
    case SoakCall::kBatchDense:
    case SoakCall::kOutcomes:
      // Back-pressure of the ledger queue.
      return lost || code == StatusCode::RESOURCE_EXHAUSTED;
    case SoakCall::kOutcomeEntry:
      return false;  // every outcome is for an acknowledged score
    case SoakCall::kListVersions:
    case SoakCall::kReload:
      return lost;
    case SoakCall::kActivate:
      // The version listed is active by now, or not yet known to a daemon
      // restarted before its file was read.
      return lost || code == StatusCode::FAILED_PRECONDITION ||
             code == StatusCode::NOT_FOUND;
    case SoakCall::kRollback:
    case SoakCall::kRefit:
      // No earlier version to go back to; too few labels, or a refit of
      // the set already running.
      return lost || code == StatusCode::FAILED_PRECONDITION;
  }
  return false;
}

void SoakEndpoint::Set(const std::string& addr, pid_t pid) {
  absl::MutexLock lock(&mu_);
  ++generation_;
  pid_ = pid;
  channel_ = grpc::CreateChannel(addr, grpc::InsecureChannelCredentials());
}

void SoakEndpoint::Clear() {
  absl::MutexLock lock(&mu_);
  pid_ = 0;
  channel_.reset();
}

std::optional<SoakEndpoint::Current> SoakEndpoint::Get() const {
  absl::MutexLock lock(&mu_);
  if (channel_ == nullptr) return std::nullopt;
  return Current{generation_, channel_};
}

bool SoakEndpoint::Signal(int signal_number) {
  absl::MutexLock lock(&mu_);
  if (pid_ == 0) return false;
  return kill(pid_, signal_number) == 0;
}

void SoakTally::Count(SoakCall kind, StatusCode code) {
  absl::MutexLock lock(&mu_);
  ++codes_[kind][static_cast<int>(code)];
}

void SoakTally::AckScore(const std::string& record_id, double probability,
                         bool repeat) {
  absl::MutexLock lock(&mu_);
  if (repeat) ++repeats_;
  if (scores_.emplace(record_id, probability).second) {
    unlabelled_.emplace_back(record_id, probability);
  }
}

void SoakTally::AckOutcome(const std::string& record_id, int label) {
  absl::MutexLock lock(&mu_);
  outcomes_[record_id] = label;
}

std::vector<std::pair<std::string, double>> SoakTally::TakeUnlabelled(
    size_t max) {
  absl::MutexLock lock(&mu_);
  const size_t n = std::min(max, unlabelled_.size());
  std::vector<std::pair<std::string, double>> out(unlabelled_.end() - n,
                                                  unlabelled_.end());
  unlabelled_.resize(unlabelled_.size() - n);
  return out;
}

std::map<SoakCall, std::map<int, int64_t>> SoakTally::Codes() const {
  absl::MutexLock lock(&mu_);
  return codes_;
}

absl::flat_hash_map<std::string, double> SoakTally::Scores() const {
  absl::MutexLock lock(&mu_);
  return scores_;
}

absl::flat_hash_map<std::string, int> SoakTally::Outcomes() const {
  absl::MutexLock lock(&mu_);
  return outcomes_;
}

int64_t SoakTally::repeats() const {
  absl::MutexLock lock(&mu_);
  return repeats_;
}

int SoakLabel(const std::string& record_id, double probability) {
  // std::hash of the id as a uniform draw in [0, 1).
  const uint64_t h = std::hash<std::string>()(record_id) * 0x9E3779B97F4A7C15u;
  return static_cast<double>(h >> 11) * 0x1.0p-53 < probability ? 1 : 0;
}

SoakLoad::SoakLoad(SoakEndpoint* endpoint, SoakTally* tally,
                   SoakLoadOptions options)
    : endpoint_(endpoint), tally_(tally), options_(std::move(options)) {}

SoakLoad::~SoakLoad() { Stop(); }

void SoakLoad::Start() {
  stop_ = false;
  threads_.emplace_back([this] { ScoreLoop(SoakCall::kScore, 0); });
  threads_.emplace_back([this] { ScoreLoop(SoakCall::kBatchNamed, 1); });
  threads_.emplace_back([this] { ScoreLoop(SoakCall::kBatchDense, 2); });
  threads_.emplace_back([this] { OutcomesLoop(); });
  threads_.emplace_back([this] { OperatorLoop(); });
}

void SoakLoad::Stop() {
  stop_ = true;
  for (std::thread& t : threads_) t.join();
  threads_.clear();
}

void SoakLoad::Pause(int ms) {
  absl::Time until = absl::Now() + absl::Milliseconds(ms);
  while (!stop_ && absl::Now() < until) absl::SleepFor(absl::Milliseconds(5));
}

std::optional<SoakEndpoint::Current> SoakLoad::WaitForEndpoint() {
  while (!stop_) {
    if (std::optional<SoakEndpoint::Current> current = endpoint_->Get()) {
      return current;
    }
    absl::SleepFor(absl::Milliseconds(20));
  }
  return std::nullopt;
}

void SoakLoad::ScoreLoop(SoakCall kind, int thread) {
  std::mt19937_64 random(options_.seed * 31 + thread);
  for (int64_t call = 0; !stop_; ++call) {
    // One request, sent until plumbd acknowledges it.
    const std::string prefix =
        absl::StrCat("s", options_.seed, "-t", thread, "-c", call, "-");
    v1::ScoreRequest single;
    v1::ScoreBatchRequest batch;
    std::vector<std::string> ids;
    if (kind == SoakCall::kScore) {
      single.set_set(kSoakSet);
      single.mutable_reasons()->set_top(2);
      ids.push_back(absl::StrCat(prefix, 0));
      ToRecord(DrawParcel(random), ids[0], single.mutable_record());
    } else {
      batch.set_set(kSoakSet);
      const int n = kind == SoakCall::kBatchNamed
                        ? 1 + static_cast<int>(random() % 20)
                        : 1 + static_cast<int>(random() % 50);
      v1::DenseRows* dense = batch.mutable_dense();
      if (kind == SoakCall::kBatchDense) {
        for (const char* c :
             {"distance_km", "parcel_kg", "region", "service", "hour"}) {
          dense->add_columns(c);
        }
        dense->set_nan_is_missing(true);
      }
      for (int i = 0; i < n; ++i) {
        ids.push_back(absl::StrCat(prefix, i));
        const Parcel p = DrawParcel(random);
        if (kind == SoakCall::kBatchNamed) {
          ToRecord(p, ids.back(), batch.add_records());
        } else {
          v1::DenseRows::Row* row = dense->add_rows();
          row->set_record_id(ids.back());
          for (double v :
               {p.distance_km, p.parcel_kg, static_cast<double>(p.region),
                static_cast<double>(p.service), p.hour}) {
            row->add_values(v);
          }
        }
      }
    }
    while (std::optional<SoakEndpoint::Current> current = WaitForEndpoint()) {
      auto stub = v1::Scoring::NewStub(current->channel);
      grpc::ClientContext context;
      SetDeadline(&context, kCallDeadline);
      grpc::Status status;
      if (kind == SoakCall::kScore) {
        v1::ScoreReply reply;
        status = stub->Score(&context, single, &reply);
        if (status.ok()) {
          tally_->AckScore(reply.score().record_id(),
                           reply.score().probability(), reply.score().repeat());
        }
      } else {
        v1::ScoreBatchReply reply;
        status = stub->ScoreBatch(&context, batch, &reply);
        if (status.ok()) {
          for (const v1::Scored& s : reply.scores()) {
            tally_->AckScore(s.record_id(), s.probability(), s.repeat());
          }
        }
      }
      tally_->Count(kind, status.error_code());
      if (status.ok() || !Retryable(status.error_code())) break;
      Pause(20);
    }
    Pause(options_.pause_ms);
  }
}

void SoakLoad::OutcomesLoop() {
  while (!stop_) {
    std::vector<std::pair<std::string, double>> records =
        tally_->TakeUnlabelled(50);
    if (records.empty()) {
      Pause(20);
      continue;
    }
    v1::ReportOutcomesRequest request;
    for (const auto& [id, probability] : records) {
      v1::Outcome* outcome = request.add_outcomes();
      outcome->set_record_id(id);
      outcome->set_label(SoakLabel(id, probability));
    }
    while (std::optional<SoakEndpoint::Current> current = WaitForEndpoint()) {
      auto stub = v1::Outcomes::NewStub(current->channel);
      grpc::ClientContext context;
      SetDeadline(&context, kCallDeadline);
      v1::ReportOutcomesReply reply;
      grpc::Status status = stub->ReportOutcomes(&context, request, &reply);
      tally_->Count(SoakCall::kOutcomes, status.error_code());
      if (status.ok()) {
        for (int k = 0; k < reply.results_size(); ++k) {
          const int code = reply.results(k).code();
          tally_->Count(SoakCall::kOutcomeEntry, static_cast<StatusCode>(code));
          if (code == 0) {
            tally_->AckOutcome(request.outcomes(k).record_id(),
                               request.outcomes(k).label());
          }
        }
      }
      if (status.ok() || !Retryable(status.error_code())) break;
      Pause(20);
    }
    Pause(options_.pause_ms);
  }
}

void SoakLoad::OperatorLoop() {
  std::mt19937_64 random(options_.seed * 31 + 7);
  int file_version = 0;
  while (!stop_) {
    Pause(300 + static_cast<int>(random() % 1200));
    std::optional<SoakEndpoint::Current> current = WaitForEndpoint();
    if (!current) return;
    auto registry = v1::Registry::NewStub(current->channel);
    const int action = static_cast<int>(random() % 100);
    grpc::ClientContext context;
    SetDeadline(&context, kCallDeadline);
    if (action < 40) {
      // A new version in the sets directory (written whole, then renamed),
      // then SIGHUP: plumbd makes a version it sees first in a file active.
      ++file_version;
      const std::string path = options_.sets_dir + "/courier.json";
      const std::string version = absl::StrCat("f", file_version);
      const double intercept = -1.5 + 0.05 * (file_version % 7);
      if (WriteTextFile(path + ".new",
                        CourierSetJson(kSoakSet, version, intercept))
              .ok()) {
        std::filesystem::rename(path + ".new", path);
      }
      tally_->Count(SoakCall::kReload, endpoint_->Signal(SIGHUP)
                                           ? StatusCode::OK
                                           : StatusCode::UNAVAILABLE);
    } else if (action < 70) {
      v1::ListVersionsRequest list;
      list.set_set(kSoakSet);
      v1::ListVersionsReply versions;
      grpc::Status status = registry->ListVersions(&context, list, &versions);
      tally_->Count(SoakCall::kListVersions, status.error_code());
      if (!status.ok() || versions.versions_size() == 0) continue;
      v1::VersionRequest request;
      request.set_set(kSoakSet);
      request.set_version(
          versions
              .versions(static_cast<int>(
                  random() % static_cast<uint64_t>(versions.versions_size())))
              .version());
      request.set_actor(kActor);
      request.set_reason("soak: activate a listed version");
      grpc::ClientContext activate_context;
      SetDeadline(&activate_context, kCallDeadline);
      v1::VersionInfo info;
      tally_->Count(
          SoakCall::kActivate,
          registry->Activate(&activate_context, request, &info).error_code());
    } else if (action < 88) {
      v1::RollbackRequest request;
      request.set_set(kSoakSet);
      request.set_actor(kActor);
      request.set_reason("soak: roll back");
      v1::VersionInfo info;
      tally_->Count(SoakCall::kRollback,
                    registry->Rollback(&context, request, &info).error_code());
    } else {
      v1::RefitRequest request;
      request.set_set(kSoakSet);
      request.set_actor(kActor);
      request.set_reason("soak: refit now");
      grpc::ClientContext refit_context;
      SetDeadline(&refit_context, kRefitDeadline);
      v1::RefitReply reply;
      tally_->Count(
          SoakCall::kRefit,
          registry->Refit(&refit_context, request, &reply).error_code());
    }
  }
}

}  // namespace plumbline::daemon::testing
