// File: daemon/ledger/set_ids.cc
#include "daemon/ledger/set_ids.h"

#include <utility>

#include "absl/strings/str_cat.h"

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
       "INSERT INTO score_sets(set_name, set_version, role) VALUES (?1,?2,?3)"
       " ON CONFLICT DO NOTHING"},
      {&ids->find_,
       "SELECT id FROM score_sets WHERE set_name = ?1 AND set_version = ?2"
       " AND role = ?3"},
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
    absl::StatusOr<int64_t> set_id =
        InsertAndFind(*insert_, *find_,
                      absl::StrCat("set '", score.set_name, "' version '",
                                   score.set_version, "' in score_sets"));
    if (!set_id.ok()) return set_id.status();
    id.set_id = *set_id;
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
