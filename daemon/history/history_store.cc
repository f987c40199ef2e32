// File: daemon/history/history_store.cc
#include "daemon/history/history_store.h"

#include <limits>
#include <utility>

#include "absl/strings/str_cat.h"
#include "daemon/policy/drift_policy.h"
#include "daemon/policy/figures.h"
#include "daemon/util/time.h"
#include "google/protobuf/struct.pb.h"
#include "google/protobuf/util/json_util.h"

namespace plumbline::daemon {
namespace {

v1::DriftState StateOf(absl::string_view name) {
  if (name == "drifting") return v1::DRIFTING;
  if (name == "watch") return v1::WATCH;
  return v1::STEADY;
}

}  // namespace

std::string FiguresJson(const v1::WindowHealth& window) {
  google::protobuf::Struct root;
  auto& fields = *root.mutable_fields();
  for (const WindowFigure& f : kWindowFigures) {
    const v1::Figure& figure = (window.*f.get)();
    if (figure.defined()) {
      fields[std::string(f.metric)].set_number_value(figure.value());
    }
  }
  google::protobuf::Struct features;
  for (const v1::FeatureHealth& fh : window.features()) {
    google::protobuf::Struct one;
    for (const FeatureFigure& f : kFeatureFigures) {
      const v1::Figure& figure = (fh.*f.get)();
      if (figure.defined()) {
        (*one.mutable_fields())[std::string(f.metric)].set_number_value(
            figure.value());
      }
    }
    if (!one.fields().empty()) {
      *(*features.mutable_fields())[fh.feature()].mutable_struct_value() =
          std::move(one);
    }
  }
  if (!features.fields().empty()) {
    *fields["features"].mutable_struct_value() = std::move(features);
  }
  std::string json;
  // A Struct of finite numbers always prints.
  (void)google::protobuf::util::MessageToJsonString(root, &json);
  return json;
}

absl::StatusOr<std::unique_ptr<HistoryStore>> HistoryStore::Open(
    const std::string& ledger_path, HistoryOptions options) {
  absl::StatusOr<std::unique_ptr<SqliteDb>> db = SqliteDb::Open(ledger_path);
  if (!db.ok()) return db.status();
  return std::unique_ptr<HistoryStore>(
      new HistoryStore(*std::move(db), std::move(options)));
}

absl::StatusOr<int> HistoryStore::Record(
    const std::vector<v1::SetHealth>& health) {
  const absl::Time now = options_.now();
  absl::MutexLock lock(&mu_);
  absl::StatusOr<std::unique_ptr<SqliteStatement>> insert = db_->Prepare(
      "INSERT INTO health_history(at_us, set_name, version, window_name, "
      "state, labelled, scored, figures) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, "
      "?8)");
  if (!insert.ok()) return insert.status();
  if (absl::Status s = db_->Exec("BEGIN IMMEDIATE"); !s.ok()) return s;
  int written = 0;
  std::vector<SetVersion> recorded;
  for (const v1::SetHealth& h : health) {
    if (!h.has_evaluated_at()) continue;
    const SetVersion key{h.set(), h.version()};
    auto last = last_.find(key);
    if (last != last_.end() && now - last->second < options_.interval) {
      continue;
    }
    const absl::Time at =
        FromTimestamp(h.evaluated_at(), "evaluated_at").value_or(now);
    for (const v1::WindowHealth& w : h.windows()) {
      SqliteStatement& s = **insert;
      s.BindInt64(1, absl::ToUnixMicros(at));
      s.BindText(2, h.set());
      s.BindText(3, h.version());
      s.BindText(4, w.window());
      s.BindText(5, DriftStateName(h.state()));
      s.BindInt64(6, w.labelled());
      s.BindInt64(7, w.scored());
      s.BindText(8, FiguresJson(w));
      if (absl::Status st = s.Run(); !st.ok()) {
        db_->Exec("ROLLBACK").IgnoreError();
        return st;
      }
      ++written;
    }
    recorded.push_back(key);
  }
  if (now - last_retention_ >= options_.interval) {
    absl::StatusOr<std::unique_ptr<SqliteStatement>> purge =
        db_->Prepare("DELETE FROM health_history WHERE at_us < ?1");
    if (!purge.ok()) {
      db_->Exec("ROLLBACK").IgnoreError();
      return purge.status();
    }
    (*purge)->BindInt64(1, absl::ToUnixMicros(now - options_.retention));
    if (absl::Status st = (*purge)->Run(); !st.ok()) {
      db_->Exec("ROLLBACK").IgnoreError();
      return st;
    }
  }
  if (absl::Status s = db_->Exec("COMMIT"); !s.ok()) {
    db_->Exec("ROLLBACK").IgnoreError();
    return s;
  }
  if (now - last_retention_ >= options_.interval) last_retention_ = now;
  for (const SetVersion& key : recorded) last_[key] = now;
  return written;
}

absl::StatusOr<std::vector<HistoryPoint>> HistoryStore::Read(
    absl::string_view set, absl::Time since) {
  absl::MutexLock lock(&mu_);
  absl::StatusOr<std::unique_ptr<SqliteStatement>> select = db_->Prepare(
      "SELECT at_us, version, window_name, state, labelled, scored, figures "
      "FROM health_history WHERE set_name = ?1 AND at_us >= ?2 "
      "ORDER BY at_us, id");
  if (!select.ok()) return select.status();
  SqliteStatement& s = **select;
  s.BindText(1, set);
  s.BindInt64(2, since == absl::InfinitePast()
                     ? std::numeric_limits<int64_t>::min()
                     : absl::ToUnixMicros(since));
  std::vector<HistoryPoint> out;
  for (;;) {
    absl::StatusOr<bool> more = s.Step();
    if (!more.ok()) return more.status();
    if (!*more) break;
    HistoryPoint p;
    p.at = absl::FromUnixMicros(s.ColumnInt64(0));
    p.version = s.ColumnText(1);
    p.window = s.ColumnText(2);
    p.state = StateOf(s.ColumnText(3));
    p.labelled = s.ColumnInt64(4);
    p.scored = s.ColumnInt64(5);
    google::protobuf::Struct figures;
    if (!google::protobuf::util::JsonStringToMessage(s.ColumnText(6), &figures)
             .ok()) {
      return absl::DataLossError(absl::StrCat(
          "health_history of set ", set, ": row at ", absl::FormatTime(p.at),
          " holds figures that are not JSON"));
    }
    for (const auto& [name, value] : figures.fields()) {
      if (value.has_number_value()) {
        p.figures[name] = value.number_value();
      } else if (name == "features" && value.has_struct_value()) {
        for (const auto& [feature, inner] : value.struct_value().fields()) {
          for (const auto& [metric, v] : inner.struct_value().fields()) {
            if (v.has_number_value()) {
              p.features[feature][metric] = v.number_value();
            }
          }
        }
      }
    }
    out.push_back(std::move(p));
  }
  return out;
}

}  // namespace plumbline::daemon
