// File: daemon/ledger/set_ids.cc
#include "daemon/ledger/set_ids.h"

#include <utility>

#include "absl/strings/str_cat.h"
#include "google/protobuf/util/json_util.h"
#include "google/protobuf/util/message_differencer.h"

namespace plumbline::daemon {
namespace {

// Runs `insert` (ON CONFLICT DO NOTHING) then `find`, both bound by the
// caller, and returns the id `find` reads; INTERNAL naming `what` if the row
// is not there right after its insert.
absl::StatusOr<int64_t> InsertAndFind(SqliteStatement& insert,
                                      SqliteStatement& find,
                                      absl::string_view what) {
  if (absl::Status s = insert.Run(); !s.ok()) return s;
  absl::StatusOr<bool> row = find.Step();
  const int64_t id = row.ok() && *row ? find.ColumnInt64(0) : -1;
  find.Reset();
  if (!row.ok()) return row.status();
  if (id < 0) {
    return absl::InternalError(absl::StrCat(
        "ledger: ", what, " was not found right after its insert"));
  }
  return id;
}

}  // namespace

absl::StatusOr<std::unique_ptr<LedgerSetIds>> LedgerSetIds::Create(
    SqliteDb& db) {
  std::unique_ptr<LedgerSetIds> ids(new LedgerSetIds());
  struct {
    std::unique_ptr<SqliteStatement>* out;
    const char* sql;
  } prepared[] = {
      {&ids->insert_,
       // A row of schema < 7 gets its layout when a packed row first
       // refers to it.
       "INSERT INTO score_sets(set_name, set_version, role, layout)"
       " VALUES (?1,?2,?3,?4) ON CONFLICT (set_name, set_version, role)"
       " DO UPDATE SET layout = excluded.layout"
       " WHERE score_sets.layout IS NULL AND excluded.layout IS NOT NULL"},
      {&ids->find_,
       "SELECT id, layout FROM score_sets WHERE set_name = ?1"
       " AND set_version = ?2 AND role = ?3"},
      {&ids->insert_name_,
       "INSERT INTO set_names(name) VALUES (?1) ON CONFLICT DO NOTHING"},
      {&ids->find_name_, "SELECT id FROM set_names WHERE name = ?1"},
  };
  for (auto& p : prepared) {
    auto stmt = db.Prepare(p.sql);
    if (!stmt.ok()) return stmt.status();
    *p.out = *std::move(stmt);
  }
  return ids;
}

absl::StatusOr<int64_t> LedgerSetIds::NameId(const std::string& name) {
  if (auto it = name_ids_.find(name); it != name_ids_.end()) return it->second;
  insert_name_->BindText(1, name);
  find_name_->BindText(1, name);
  absl::StatusOr<int64_t> id = InsertAndFind(
      *insert_name_, *find_name_, absl::StrCat("set name '", name, "'"));
  if (!id.ok()) return id.status();
  name_ids_.emplace(name, *id);
  return *id;
}

absl::StatusOr<LedgerSetId> LedgerSetIds::Id(const ScoreEntry& score) {
  if (last_.set_id >= 0 && score.set_name == last_name_ &&
      score.set_version == last_version_ && score.role == last_role_) {
    return last_;
  }
  // Lengths first, so no choice of separator can make two triples collide.
  const std::string key = absl::StrCat(
      score.set_name.size(), ":", score.set_name, ":", score.set_version.size(),
      ":", score.set_version, ":", ScoreRoleName(score.role));
  auto it = ids_.find(key);
  if (it == ids_.end()) {
    LedgerSetId id;
    absl::StatusOr<int64_t> name_id = NameId(score.set_name);
    if (!name_id.ok()) return name_id.status();
    id.name_id = *name_id;
    for (SqliteStatement* st : {insert_.get(), find_.get()}) {
      st->BindText(1, score.set_name);
      st->BindText(2, score.set_version);
      st->BindText(3, ScoreRoleName(score.role));
    }
    std::string layout;
    if (score.layout != nullptr) {
      google::protobuf::util::JsonPrintOptions options;
      options.preserve_proto_field_names = true;
      if (!google::protobuf::util::MessageToJsonString(*score.layout, &layout,
                                                       options)
               .ok()) {
        return absl::InternalError("ledger: cannot print a row layout");
      }
      insert_->BindText(4, layout);
    } else {
      insert_->BindNull(4);
    }
    if (absl::Status s = insert_->Run(); !s.ok()) return s;
    absl::StatusOr<bool> row = find_->Step();
    const int64_t set_id = row.ok() && *row ? find_->ColumnInt64(0) : -1;
    const std::string stored = set_id >= 0 ? find_->ColumnText(1) : "";
    find_->Reset();
    if (!row.ok()) return row.status();
    if (set_id < 0) {
      return absl::InternalError(absl::StrCat("ledger: set '", score.set_name,
                                              "' version '", score.set_version,
                                              "' was not found in score_sets "
                                              "right after its insert"));
    }
    // One layout per (set, version): packed rows of a version read by the
    // layout stored with it. Versions are immutable (the registry serves
    // the ledger's copy), so a difference is a bug, refused before a row
    // could be stored under the wrong layout.
    if (!layout.empty() && stored != layout) {
      v1::RowLayout previous;
      google::protobuf::util::JsonParseOptions strict;
      strict.ignore_unknown_fields = false;
      const bool same =
          google::protobuf::util::JsonStringToMessage(stored, &previous, strict)
              .ok() &&
          google::protobuf::util::MessageDifferencer::Equals(previous,
                                                             *score.layout);
      if (!same) {
        return absl::InternalError(absl::StrCat(
            "ledger: version '", score.set_version, "' of set '",
            score.set_name,
            "' was recorded with other features than the plan now scoring "
            "it; a version's features never change"));
      }
    }
    id.set_id = set_id;
    it = ids_.emplace(key, id).first;
  }
  last_name_ = score.set_name;
  last_version_ = score.set_version;
  last_role_ = score.role;
  last_ = it->second;
  return last_;
}

void LedgerSetIds::Forget() {
  ids_.clear();
  name_ids_.clear();
  last_ = LedgerSetId{};
}

}  // namespace plumbline::daemon
