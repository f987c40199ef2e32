// File: daemon/ledger/set_ids.cc
#include "daemon/ledger/set_ids.h"

#include <utility>

#include "absl/strings/str_cat.h"

namespace plumbline::daemon {

absl::StatusOr<std::unique_ptr<LedgerSetIds>> LedgerSetIds::Create(
    SqliteDb& db) {
  std::unique_ptr<LedgerSetIds> ids(new LedgerSetIds());
  auto insert = db.Prepare(
      "INSERT INTO score_sets(set_name, set_version, role) VALUES (?1,?2,?3)"
      " ON CONFLICT DO NOTHING");
  if (!insert.ok()) return insert.status();
  auto find = db.Prepare(
      "SELECT id FROM score_sets WHERE set_name = ?1 AND set_version = ?2"
      " AND role = ?3");
  if (!find.ok()) return find.status();
  ids->insert_ = *std::move(insert);
  ids->find_ = *std::move(find);
  return ids;
}

absl::StatusOr<int64_t> LedgerSetIds::Id(const ScoreEntry& score) {
  if (last_id_ >= 0 && score.set_name == last_name_ &&
      score.set_version == last_version_ && score.role == last_role_) {
    return last_id_;
  }
  // Lengths first, so no choice of separator can make two triples collide.
  const std::string key = absl::StrCat(
      score.set_name.size(), ":", score.set_name, ":", score.set_version.size(),
      ":", score.set_version, ":", ScoreRoleName(score.role));
  auto it = ids_.find(key);
  if (it == ids_.end()) {
    for (SqliteStatement* st : {insert_.get(), find_.get()}) {
      st->BindText(1, score.set_name);
      st->BindText(2, score.set_version);
      st->BindText(3, ScoreRoleName(score.role));
    }
    if (absl::Status s = insert_->Run(); !s.ok()) return s;
    absl::StatusOr<bool> row = find_->Step();
    const int64_t id = row.ok() && *row ? find_->ColumnInt64(0) : -1;
    find_->Reset();
    if (!row.ok()) return row.status();
    if (id < 0) {
      return absl::InternalError(absl::StrCat(
          "ledger: set '", score.set_name, "' version '", score.set_version,
          "' was not found in score_sets right after its insert"));
    }
    it = ids_.emplace(key, id).first;
  }
  last_name_ = score.set_name;
  last_version_ = score.set_version;
  last_role_ = score.role;
  last_id_ = it->second;
  return last_id_;
}

void LedgerSetIds::Forget() {
  ids_.clear();
  last_id_ = -1;
}

}  // namespace plumbline::daemon
