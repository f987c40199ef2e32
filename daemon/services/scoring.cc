// File: daemon/services/scoring.cc
#include "daemon/services/scoring.h"

#include <memory>
#include <type_traits>
#include <utility>
#include <vector>

#include "absl/container/flat_hash_map.h"
#include "absl/strings/str_cat.h"
#include "absl/time/clock.h"
#include "daemon/access/access_control.h"
#include "daemon/scoring/packed_row.h"
#include "daemon/util/event_log.h"
#include "daemon/util/grpc_status.h"
#include "google/protobuf/arena.h"

namespace plumbline::daemon {

ScoringService::ScoringService(const SetRegistry* registry,
                               ScoringLimits limits, Ledger* ledger,
                               ShadowOptions shadows)
    : registry_(registry),
      limits_(limits),
      ledger_(ledger),
      shadows_(std::move(shadows)) {}

absl::StatusOr<ServingSet> ScoringService::Lookup(
    const std::string& set) const {
  if (absl::Status s = CheckSetName(set); !s.ok()) return s;
  ServingSet serving = registry_->FindServing(set);
  if (serving.active == nullptr) return SetNotFound(set, registry_->Names());
  return serving;
}

void ScoringService::StopShadow(const SetVersion& key,
                                const absl::Status& last) {
  const std::string why =
      absl::StrCat("stopped after ", shadows_.tracker->limit(),
                   " consecutive calls it could not score; last: ",
                   absl::StatusCodeToString(last.code()));
  LogEvent(LogLevel::kError, "shadow_stopped",
           {{"set", key.set},
            {"version", key.version},
            {"reason", why},
            RecordValueField("last_error", last.message())});
  if (shadows_.stop) shadows_.stop(key, why);
}

void ScoringService::LogShadowFailure(const scorer::ScoringPlan& plan,
                                      const absl::Status& status) {
  {
    absl::MutexLock lock(&shadow_mu_);
    if (!shadow_failures_logged_.insert(SetVersion{plan.name(), plan.version()})
             .second) {
      return;
    }
  }
  LogEvent(LogLevel::kWarning, "shadow_failed",
           {{"set", plan.name()},
            {"version", plan.version()},
            RecordValueField("error", status.message()),
            {"effect",
             "this shadow's scores of such requests are not kept; "
             "logged once per version"}});
}

template <typename Reply, typename ScoreFn>
std::vector<ScoringService::ShadowRun> ScoringService::ScoreShadows(
    std::vector<PlanPtr> shadows, ScoreFn score) {
  std::vector<ShadowRun> runs;
  for (PlanPtr& plan : shadows) {
    const SetVersion key{plan->name(), plan->version()};
    if (shadows_.tracker != nullptr && shadows_.tracker->Stopped(key)) {
      continue;  // retired by now, or about to be
    }
    ShadowRun run;
    run.plan = std::move(plan);
    absl::StatusOr<Reply> reply = score(*run.plan, &run.inputs);
    if (shadows_.tracker != nullptr &&
        shadows_.tracker->Record(key, reply.status()) == ShadowTracker::kStop) {
      StopShadow(key, reply.status());
    }
    if (!reply.ok()) {
      LogShadowFailure(*run.plan, reply.status());
      continue;
    }
    if constexpr (std::is_same_v<Reply, v1::ScoreReply>) {
      run.log_odds.push_back(reply->score().log_odds());
      run.probability.push_back(reply->score().probability());
    } else {
      for (const v1::Scored& scored : reply->scores()) {
        run.log_odds.push_back(scored.log_odds());
        run.probability.push_back(scored.probability());
      }
    }
    runs.push_back(std::move(run));
  }
  return runs;
}

std::shared_ptr<const v1::RowLayout> ScoringService::Layout(
    const scorer::ScoringPlan& plan) {
  const SetVersion key{plan.name(), plan.version()};
  absl::MutexLock lock(&layouts_mu_);
  auto it = layouts_.find(key);
  if (it == layouts_.end()) {
    it =
        layouts_
            .emplace(key, std::make_shared<const v1::RowLayout>(LayoutOf(plan)))
            .first;
  }
  return it->second;
}

absl::Status ScoringService::Record(const scorer::ScoringPlan& plan,
                                    const RecordInputs& inputs,
                                    absl::Span<v1::Scored* const> scores,
                                    const std::vector<ShadowRun>& shadows) {
  const absl::Time now = absl::Now();
  // A record id names one record: two records of one call may not share
  // one (the ledger refuses ids recorded before, see Ledger::AppendScores).
  absl::flat_hash_map<absl::string_view, size_t> first_of;
  for (size_t i = 0; i < scores.size(); ++i) {
    const std::string& id = scores[i]->record_id();
    if (id.empty()) continue;
    auto [it, inserted] = first_of.emplace(id, i);
    if (!inserted) {
      return absl::InvalidArgumentError(absl::StrCat(
          "records ", it->second, " and ", i, " of the batch share record id '",
          id, "'; a record id names one record"));
    }
  }
  const std::shared_ptr<const v1::RowLayout> layout = Layout(plan);
  std::vector<ScoreEntry> entries(scores.size());
  entries.reserve(scores.size() * (1 + shadows.size()));
  for (size_t i = 0; i < scores.size(); ++i) {
    v1::Scored& scored = *scores[i];
    if (scored.record_id().empty()) {
      scored.set_record_id(record_ids_.Next(plan.name(), now));
    }
    ScoreEntry& entry = entries[i];
    entry.record_id = scored.record_id();
    entry.set_name = plan.name();
    entry.set_version = plan.version();
    entry.scored_at = now;
    entry.log_odds = scored.log_odds();
    entry.probability = scored.probability();
    const int record = static_cast<int>(i);
    PackFeatures(plan, inputs.Values(record), inputs.Sent(record),
                 &entry.features);
    entry.layout = layout;
  }
  for (const ShadowRun& run : shadows) {
    std::shared_ptr<const v1::RowLayout> shadow_layout = Layout(*run.plan);
    for (size_t i = 0; i < scores.size(); ++i) {
      ScoreEntry& entry = entries.emplace_back();
      entry.record_id = scores[i]->record_id();
      entry.set_name = run.plan->name();
      entry.set_version = run.plan->version();
      entry.role = ScoreRole::kShadow;
      entry.scored_at = now;
      entry.log_odds = run.log_odds[i];
      entry.probability = run.probability[i];
      const int record = static_cast<int>(i);
      PackFeatures(*run.plan, run.inputs.Values(record),
                   run.inputs.Sent(record), &entry.features);
      entry.layout = shadow_layout;
    }
  }
  absl::StatusOr<std::vector<ScoreWrite>> written =
      ledger_->AppendScores(std::move(entries));
  if (!written.ok()) {
    const absl::Status& s = written.status();
    // A full queue is the caller's to retry and would flood the log, and a
    // record id recorded before with other features is the caller's
    // mistake; any other refusal is a ledger problem the operator must see.
    if (s.code() != absl::StatusCode::kResourceExhausted &&
        s.code() != absl::StatusCode::kAlreadyExists &&
        s.code() != absl::StatusCode::kInvalidArgument) {
      LogEvent(LogLevel::kError, "ledger_write_failed",
               {{"set", plan.name()}, {"error", s.message()}});
    }
    return s;
  }
  // Repeats (retries): the stored score goes back (the ledger wrote
  // nothing, so the monitor does not see the record again).
  for (size_t i = 0; i < scores.size() && i < written->size(); ++i) {
    const ScoreWrite& w = (*written)[i];
    if (!w.repeat) continue;
    v1::Scored& scored = *scores[i];
    scored.set_repeat(true);
    scored.set_log_odds(w.stored.log_odds);
    scored.set_probability(w.stored.probability);
    if (w.stored.set_version != plan.version()) {
      // Reasons come from the version that scored: this one did not.
      scored.set_repeat_version(w.stored.set_version);
      scored.clear_reasons();
    }
  }
  return absl::OkStatus();
}

grpc::Status ScoringService::Score(grpc::ServerContext* context,
                                   const v1::ScoreRequest* request,
                                   v1::ScoreReply* reply) {
  if (grpc::Status s = Admit(context, Role::kScore); !s.ok()) return s;
  absl::StatusOr<ServingSet> serving = Lookup(request->set());
  if (!serving.ok()) return ToGrpcStatus(serving.status());
  const PlanPtr& plan = serving->active;
  RecordInputs inputs;
  absl::StatusOr<v1::ScoreReply> result =
      ScoreWithPlan(*plan, *request, limits_, &inputs);
  if (!result.ok()) return ToGrpcStatus(result.status());
  std::vector<ShadowRun> shadows = ScoreShadows<v1::ScoreReply>(
      std::move(serving->shadows),
      [&](const scorer::ScoringPlan& shadow, RecordInputs* shadow_inputs) {
        return ScoreWithPlan(shadow, *request, limits_, shadow_inputs);
      });
  v1::Scored* const scored[] = {result->mutable_score()};
  if (absl::Status s = Record(*plan, inputs, scored, shadows); !s.ok()) {
    return ToGrpcStatus(s);
  }
  *reply = *std::move(result);
  return grpc::Status::OK;
}

namespace {

// The first block of every ScoreBatch call's arena on this thread: reused,
// so a typical batch (about 200 bytes a record at 10 features) parses
// without a single malloc and without touching fresh pages. Bounded by the
// number of gRPC handler threads.
constexpr size_t kArenaFirstBlock = 256 << 10;
// Later blocks (bigger batches, wider sets) grow to this size.
constexpr size_t kArenaMaxBlock = 1 << 20;

}  // namespace

grpc::Status ScoringService::StreamedScoreBatch(
    grpc::ServerContext* context,
    grpc::ServerUnaryStreamer<v1::ScoreBatchRequest, v1::ScoreBatchReply>*
        streamer) {
  thread_local std::unique_ptr<char[]> first_block(new char[kArenaFirstBlock]);
  google::protobuf::ArenaOptions options;
  options.initial_block = first_block.get();
  options.initial_block_size = kArenaFirstBlock;
  options.max_block_size = kArenaMaxBlock;
  google::protobuf::Arena arena(options);
  auto* request =
      google::protobuf::Arena::CreateMessage<v1::ScoreBatchRequest>(&arena);
  if (!streamer->Read(request)) {
    // The parse-error interceptor (daemon/server/request_errors.h) turns
    // this into INVALID_ARGUMENT naming the method, as for every RPC.
    return grpc::Status(grpc::StatusCode::INTERNAL,
                        "the request could not be parsed");
  }
  v1::ScoreBatchReply reply;
  grpc::Status status = ScoreBatch(context, request, &reply);
  if (status.ok() && !streamer->Write(reply)) {
    return grpc::Status(grpc::StatusCode::UNAVAILABLE,
                        "the reply could not be sent (the caller is gone)");
  }
  return status;
}

grpc::Status ScoringService::ScoreBatch(grpc::ServerContext* context,
                                        const v1::ScoreBatchRequest* request,
                                        v1::ScoreBatchReply* reply) {
  if (grpc::Status s = Admit(context, Role::kScore); !s.ok()) return s;
  absl::StatusOr<ServingSet> serving = Lookup(request->set());
  if (!serving.ok()) return ToGrpcStatus(serving.status());
  const PlanPtr& plan = serving->active;
  RecordInputs inputs;
  absl::StatusOr<v1::ScoreBatchReply> result =
      ScoreBatchWithPlan(*plan, *request, limits_, &inputs);
  if (!result.ok()) return ToGrpcStatus(result.status());
  std::vector<ShadowRun> shadows = ScoreShadows<v1::ScoreBatchReply>(
      std::move(serving->shadows),
      [&](const scorer::ScoringPlan& shadow, RecordInputs* shadow_inputs) {
        return ScoreBatchWithPlan(shadow, *request, limits_, shadow_inputs);
      });
  std::vector<v1::Scored*> scored(result->mutable_scores()->pointer_begin(),
                                  result->mutable_scores()->pointer_end());
  if (absl::Status s = Record(*plan, inputs, scored, shadows); !s.ok()) {
    return ToGrpcStatus(s);
  }
  *reply = *std::move(result);
  return grpc::Status::OK;
}

grpc::Status ScoringService::ListSets(grpc::ServerContext* context,
                                      const v1::ListSetsRequest* /*request*/,
                                      v1::ListSetsReply* reply) {
  if (grpc::Status s = Admit(context, Role::kScore); !s.ok()) return s;
  for (const PlanPtr& plan : registry_->All()) {
    *reply->add_sets() = SummarizeSet(*plan);
  }
  return grpc::Status::OK;
}

}  // namespace plumbline::daemon
