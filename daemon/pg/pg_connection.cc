#include "daemon/pg/pg_connection.h"

#include <libpq-fe.h>
#include <poll.h>

#include <algorithm>
#include <cerrno>
#include <climits>
#include <cstring>
#include <utility>

#include "absl/strings/ascii.h"
#include "absl/strings/match.h"
#include "absl/strings/numbers.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_replace.h"
#include "absl/time/clock.h"

namespace plumbline::daemon {
namespace {

// PostgreSQL's identifiers (channel names too) hold at most NAMEDATALEN - 1
// bytes; a longer LISTEN channel would be cut short with only a notice.
constexpr size_t kMaxIdentifierBytes = 63;
// The protocol's limit on the parameters of one statement.
constexpr size_t kMaxParams = 65535;
// COPY data goes to libpq in pieces of about this many bytes.
constexpr size_t kCopyChunkBytes = 64 * 1024;
// Connect's wait unless the URI says otherwise.
constexpr char kDefaultConnectTimeoutSeconds[] = "10";

struct ResultDeleter {
  void operator()(PGresult* r) const { PQclear(r); }
};
using ResultPtr = std::unique_ptr<PGresult, ResultDeleter>;

bool HasNul(absl::string_view s) {
  return s.find('\0') != absl::string_view::npos;
}

// `sql` in a message: whitespace runs as one space, at most 80 bytes.
std::string SqlForMessage(absl::string_view sql) {
  std::string out;
  bool space = false;
  for (char c : sql) {
    if (absl::ascii_isspace(static_cast<unsigned char>(c))) {
      space = !out.empty();
      continue;
    }
    if (space) out.push_back(' ');
    space = false;
    out.push_back(c);
  }
  constexpr size_t kMax = 80;
  if (out.size() > kMax) {
    size_t cut = kMax;
    // Not inside a UTF-8 sequence.
    while (cut > 0 && (static_cast<unsigned char>(out[cut]) & 0xC0) == 0x80) {
      --cut;
    }
    out.resize(cut);
    out += "...";
  }
  return absl::StrCat("\"", out, "\"");
}

// libpq takes statements as C strings: one with a NUL byte would be cut
// short there and run as something else.
absl::Status CheckSqlText(absl::string_view sql) {
  if (!HasNul(sql)) return absl::OkStatus();
  return absl::InvalidArgumentError(absl::StrCat(
      "PostgreSQL: SQL ", SqlForMessage(sql), " contains a NUL byte"));
}

// libpq's messages end with a newline and sometimes hold several lines.
std::string OneLine(const char* text) {
  if (text == nullptr) return "";
  std::string s(absl::StripAsciiWhitespace(text));
  absl::StrReplaceAll({{"\n", "; "}, {"\t", ""}}, &s);
  return s;
}

// The parts of a URI that could be a password, to keep libpq's parse
// errors from repeating them: what follows ':' in the user info, and the
// value of a password= parameter.
std::vector<std::string> SecretCandidates(absl::string_view uri) {
  std::vector<std::string> out;
  const size_t scheme = uri.find("://");
  if (scheme != absl::string_view::npos) {
    absl::string_view rest = uri.substr(scheme + 3);
    const size_t at = rest.find('@');
    const size_t slash = rest.find('/');
    if (at != absl::string_view::npos &&
        (slash == absl::string_view::npos || at < slash)) {
      absl::string_view userinfo = rest.substr(0, at);
      const size_t colon = userinfo.find(':');
      if (colon != absl::string_view::npos && colon + 1 < userinfo.size()) {
        out.emplace_back(userinfo.substr(colon + 1));
      }
    }
  }
  size_t pos = 0;
  while ((pos = uri.find("password=", pos)) != absl::string_view::npos) {
    pos += 9;
    const size_t end = uri.find('&', pos);
    absl::string_view value =
        uri.substr(pos, end == absl::string_view::npos ? absl::string_view::npos
                                                       : end - pos);
    if (!value.empty()) out.emplace_back(value);
  }
  return out;
}

std::string Redact(std::string text, const std::vector<std::string>& secrets) {
  for (const std::string& s : secrets) {
    absl::StrReplaceAll({{s, "<secret>"}}, &text);
  }
  return text;
}

// libpq prints notices (NOTICE, WARNING) on stderr unless told otherwise;
// the results already say what the callers need, and plumbd's stderr is
// its event log.
void IgnoreNotice(void* /*arg*/, const char* /*message*/) {}

}  // namespace

absl::StatusCode PgErrorCode(absl::string_view sqlstate) {
  if (sqlstate.size() != 5) return absl::StatusCode::kInternal;
  const absl::string_view cls = sqlstate.substr(0, 2);
  if (sqlstate == "23505") return absl::StatusCode::kAlreadyExists;
  if (cls == "23") return absl::StatusCode::kFailedPrecondition;
  if (sqlstate == "40001" || sqlstate == "40P01" || sqlstate == "55P03") {
    return absl::StatusCode::kAborted;
  }
  if (cls == "08" || sqlstate == "57P01" || sqlstate == "57P02" ||
      sqlstate == "57P03") {
    return absl::StatusCode::kUnavailable;
  }
  if (sqlstate == "57014") return absl::StatusCode::kCancelled;
  if (sqlstate == "42501") return absl::StatusCode::kPermissionDenied;
  if (cls == "42" || cls == "22" || sqlstate == "0A000") {
    return absl::StatusCode::kInvalidArgument;
  }
  if (cls == "53") return absl::StatusCode::kResourceExhausted;
  if (cls == "25") return absl::StatusCode::kFailedPrecondition;
  return absl::StatusCode::kInternal;
}

std::string PgCopyLine(const PgRow& row) {
  std::string line;
  for (size_t i = 0; i < row.size(); ++i) {
    if (i > 0) line.push_back('\t');
    if (!row[i].has_value()) {
      line += "\\N";
      continue;
    }
    for (char c : *row[i]) {
      switch (c) {
        case '\\':
          line += "\\\\";
          break;
        case '\t':
          line += "\\t";
          break;
        case '\n':
          line += "\\n";
          break;
        case '\r':
          line += "\\r";
          break;
        default:
          line.push_back(c);
      }
    }
  }
  line.push_back('\n');
  return line;
}

absl::StatusOr<std::unique_ptr<PgConnection>> PgConnection::Connect(
    absl::string_view uri) {
  if (!absl::StartsWith(uri, "postgresql://") &&
      !absl::StartsWith(uri, "postgres://")) {
    return absl::InvalidArgumentError(
        "PostgreSQL connection: not a libpq URI (expected "
        "postgresql://USER@HOST:PORT/DATABASE; key=value strings are not "
        "accepted)");
  }
  if (HasNul(uri)) {
    return absl::InvalidArgumentError(
        "PostgreSQL connection URI contains a NUL byte");
  }
  const std::string uri_text(uri);
  const std::vector<std::string> secrets = SecretCandidates(uri);

  // Parse first: a URI with a password is refused before anything is sent.
  char* parse_error = nullptr;
  PQconninfoOption* options = PQconninfoParse(uri_text.c_str(), &parse_error);
  if (options == nullptr) {
    std::string why =
        parse_error != nullptr ? OneLine(parse_error) : "out of memory";
    if (parse_error != nullptr) PQfreemem(parse_error);
    return absl::InvalidArgumentError(
        absl::StrCat("PostgreSQL connection URI does not parse: ",
                     Redact(std::move(why), secrets)));
  }
  bool has_password = false;
  for (const PQconninfoOption* o = options; o->keyword != nullptr; ++o) {
    if (std::strcmp(o->keyword, "password") == 0 && o->val != nullptr &&
        o->val[0] != '\0') {
      has_password = true;
    }
  }
  PQconninfoFree(options);
  if (has_password) {
    return absl::InvalidArgumentError(
        "PostgreSQL connection URI carries a password: remove it from the "
        "URI and put it in a PGPASSFILE (.pgpass format: "
        "host:port:database:user:password, mode 0600)");
  }

  // Later values win: the URI's connect_timeout over ours, our
  // client_encoding over the URI's (every string here is UTF-8).
  const char* const keywords[] = {"connect_timeout",
                                  "fallback_application_name", "dbname",
                                  "client_encoding", nullptr};
  const char* const values[] = {kDefaultConnectTimeoutSeconds, "plumbd",
                                uri_text.c_str(), "UTF8", nullptr};
  PGconn* conn = PQconnectdbParams(keywords, values, /*expand_dbname=*/1);
  if (conn == nullptr) {
    return absl::ResourceExhaustedError(
        "PostgreSQL connection: libpq is out of memory");
  }
  if (PQstatus(conn) != CONNECTION_OK) {
    const char* host = PQhost(conn);
    const char* port = PQport(conn);
    const std::string where = absl::StrCat(
        host != nullptr && host[0] != '\0' ? host : "(default host)", ":",
        port != nullptr && port[0] != '\0' ? port : "(default port)");
    const std::string why = Redact(OneLine(PQerrorMessage(conn)), secrets);
    const bool needs_password = PQconnectionNeedsPassword(conn) != 0;
    const char* user = PQuser(conn);
    const std::string user_text = user != nullptr ? user : "";
    PQfinish(conn);
    if (needs_password) {
      return absl::UnauthenticatedError(absl::StrCat(
          "PostgreSQL at ", where, " wants a password for user \"", user_text,
          "\" and none was found: put it in the file PGPASSFILE names "
          "(.pgpass format, mode 0600)"));
    }
    return absl::UnavailableError(
        absl::StrCat("PostgreSQL at ", where, ": cannot connect: ", why));
  }
  PQsetNoticeProcessor(conn, IgnoreNotice, nullptr);
  std::string description = absl::StrCat(PQhost(conn), ":", PQport(conn), "/",
                                         PQdb(conn), " as ", PQuser(conn));
  return std::unique_ptr<PgConnection>(
      new PgConnection(conn, std::move(description)));
}

PgConnection::~PgConnection() { PQfinish(conn_); }

int PgConnection::backend_pid() const { return PQbackendPID(conn_); }

namespace {

// The Status of a failed result `res` (null: libpq could not make one) of
// `sql` on `conn`, `description` naming the server.
absl::Status ResultError(PGconn* conn, const PGresult* res,
                         absl::string_view sql, absl::string_view description) {
  const char* state =
      res != nullptr ? PQresultErrorField(res, PG_DIAG_SQLSTATE) : nullptr;
  const char* primary = res != nullptr
                            ? PQresultErrorField(res, PG_DIAG_MESSAGE_PRIMARY)
                            : nullptr;
  std::string message;
  if (primary != nullptr) {
    message = primary;
    const char* detail = PQresultErrorField(res, PG_DIAG_MESSAGE_DETAIL);
    const char* hint = PQresultErrorField(res, PG_DIAG_MESSAGE_HINT);
    if (detail != nullptr) absl::StrAppend(&message, "; ", OneLine(detail));
    if (hint != nullptr) absl::StrAppend(&message, "; hint: ", OneLine(hint));
  } else if (res != nullptr && PQresultErrorMessage(res)[0] != '\0') {
    message = OneLine(PQresultErrorMessage(res));
  } else {
    message = OneLine(PQerrorMessage(conn));
  }
  const std::string sqlstate = state != nullptr ? state : "";
  absl::StatusCode code = PgErrorCode(sqlstate);
  // However the error reads, a connection that is gone is Unavailable.
  if (PQstatus(conn) == CONNECTION_BAD) code = absl::StatusCode::kUnavailable;
  return absl::Status(
      code, absl::StrCat("PostgreSQL ", description, ": ",
                         sqlstate.empty() ? "" : "SQLSTATE ", sqlstate,
                         sqlstate.empty() ? "" : " ", "in ", SqlForMessage(sql),
                         ": ", message));
}

// Reads and drops every remaining result, ending a COPY in either direction
// (a COPY IN is aborted with `why`).
void DrainResults(PGconn* conn, const char* why) {
  while (true) {
    ResultPtr res(PQgetResult(conn));
    if (res == nullptr) return;
    switch (PQresultStatus(res.get())) {
      case PGRES_COPY_IN:
        if (PQputCopyEnd(conn, why) != 1) return;
        break;
      case PGRES_COPY_OUT: {
        char* buffer = nullptr;
        while (PQgetCopyData(conn, &buffer, 0) > 0) PQfreemem(buffer);
        break;
      }
      case PGRES_COPY_BOTH:
        return;  // replication protocol: never started here
      default:
        break;
    }
    if (PQstatus(conn) == CONNECTION_BAD) return;
  }
}

// OK when `res` finished a statement; otherwise the error. A COPY that
// came back from Exec or Query is aborted: it needs CopyIn.
absl::Status CheckResult(PGconn* conn, const PGresult* res,
                         absl::string_view sql, absl::string_view description) {
  if (res == nullptr) return ResultError(conn, res, sql, description);
  switch (PQresultStatus(res)) {
    case PGRES_COMMAND_OK:
    case PGRES_TUPLES_OK:
    case PGRES_EMPTY_QUERY:
      return absl::OkStatus();
    case PGRES_COPY_IN:
      PQputCopyEnd(conn, "a COPY FROM STDIN needs CopyIn");
      DrainResults(conn, "a COPY FROM STDIN needs CopyIn");
      return absl::InvalidArgumentError(
          absl::StrCat("PostgreSQL ", description, ": ", SqlForMessage(sql),
                       " is a COPY FROM STDIN: use CopyIn"));
    case PGRES_COPY_OUT:
    case PGRES_COPY_BOTH: {
      char* buffer = nullptr;
      while (PQgetCopyData(conn, &buffer, 0) > 0) PQfreemem(buffer);
      DrainResults(conn, "unexpected COPY");
      return absl::InvalidArgumentError(
          absl::StrCat("PostgreSQL ", description, ": ", SqlForMessage(sql),
                       " is a COPY TO STDOUT, which is not supported"));
    }
    default:
      return ResultError(conn, res, sql, description);
  }
}

}  // namespace

absl::Status PgConnection::Exec(absl::string_view sql) {
  if (absl::Status s = CheckSqlText(sql); !s.ok()) return s;
  const std::string text(sql);
  ResultPtr res(PQexec(conn_, text.c_str()));
  absl::Status status = CheckResult(conn_, res.get(), sql, description_);
  res.reset();
  // PQexec returns the last result of several statements; any others are
  // gone already, but be sure the connection is idle for the next call.
  DrainResults(conn_, "unexpected COPY");
  return status;
}

absl::StatusOr<PgResult> PgConnection::Query(absl::string_view sql,
                                             absl::Span<const PgValue> params) {
  if (absl::Status s = CheckSqlText(sql); !s.ok()) return s;
  if (params.size() > kMaxParams) {
    return absl::InvalidArgumentError(
        absl::StrCat("PostgreSQL: ", SqlForMessage(sql), " has ", params.size(),
                     " parameters; a statement takes at most ", kMaxParams));
  }
  std::vector<const char*> values(params.size(), nullptr);
  for (size_t i = 0; i < params.size(); ++i) {
    if (!params[i].has_value()) continue;
    if (HasNul(*params[i])) {
      return absl::InvalidArgumentError(absl::StrCat(
          "PostgreSQL: parameter $", i + 1, " of ", SqlForMessage(sql),
          " contains a NUL byte, which PostgreSQL text cannot hold"));
    }
    values[i] = params[i]->c_str();
  }
  const std::string text(sql);
  ResultPtr res(PQexecParams(conn_, text.c_str(),
                             static_cast<int>(params.size()),
                             /*paramTypes=*/nullptr, values.data(),
                             /*paramLengths=*/nullptr, /*paramFormats=*/nullptr,
                             /*resultFormat=text*/ 0));
  if (absl::Status s = CheckResult(conn_, res.get(), sql, description_);
      !s.ok()) {
    return s;
  }
  PgResult out;
  const int ncols = PQnfields(res.get());
  const int nrows = PQntuples(res.get());
  out.columns.reserve(static_cast<size_t>(ncols));
  for (int c = 0; c < ncols; ++c)
    out.columns.emplace_back(PQfname(res.get(), c));
  out.rows.reserve(static_cast<size_t>(nrows));
  for (int r = 0; r < nrows; ++r) {
    PgRow row;
    row.reserve(static_cast<size_t>(ncols));
    for (int c = 0; c < ncols; ++c) {
      if (PQgetisnull(res.get(), r, c)) {
        row.emplace_back(std::nullopt);
      } else {
        row.emplace_back(
            std::string(PQgetvalue(res.get(), r, c),
                        static_cast<size_t>(PQgetlength(res.get(), r, c))));
      }
    }
    out.rows.push_back(std::move(row));
  }
  const char* affected = PQcmdTuples(res.get());
  if (affected != nullptr && affected[0] != '\0' &&
      !absl::SimpleAtoi(affected, &out.affected_rows)) {
    return absl::InternalError(
        absl::StrCat("PostgreSQL ", description_, ": ", SqlForMessage(sql),
                     " reported an affected-row count that is no number: \"",
                     affected, "\""));
  }
  return out;
}

absl::StatusOr<int64_t> PgConnection::CopyIn(absl::string_view copy_sql,
                                             absl::Span<const PgRow> rows) {
  if (absl::Status s = CheckSqlText(copy_sql); !s.ok()) return s;
  const std::string text(copy_sql);
  ResultPtr res(PQexec(conn_, text.c_str()));
  if (res == nullptr)
    return ResultError(conn_, nullptr, copy_sql, description_);
  switch (PQresultStatus(res.get())) {
    case PGRES_COPY_IN:
      break;
    case PGRES_COMMAND_OK:
    case PGRES_TUPLES_OK:
    case PGRES_EMPTY_QUERY:
      return absl::InvalidArgumentError(
          absl::StrCat("PostgreSQL ", description_,
                       ": CopyIn needs a COPY "
                       "... FROM STDIN, and ",
                       SqlForMessage(copy_sql), " is none (it ran)"));
    case PGRES_COPY_OUT:
    case PGRES_COPY_BOTH:
      return CheckResult(conn_, res.get(), copy_sql, description_);
    default:
      return ResultError(conn_, res.get(), copy_sql, description_);
  }
  const size_t ncols = static_cast<size_t>(PQnfields(res.get()));
  const bool binary = PQbinaryTuples(res.get()) != 0;
  res.reset();

  // Ends the COPY with an error of ours: the server rolls the COPY back.
  auto abort_copy = [&](absl::Status why) {
    const std::string reason(why.message());
    if (PQputCopyEnd(conn_, reason.c_str()) == 1) {
      DrainResults(conn_, reason.c_str());
    }
    return why;
  };
  if (binary) {
    return abort_copy(absl::InvalidArgumentError(
        absl::StrCat("PostgreSQL: ", SqlForMessage(copy_sql),
                     " asks for binary COPY; CopyIn sends text format")));
  }
  std::string buffer;
  auto flush = [&]() -> bool {
    if (buffer.empty()) return true;
    const bool ok = PQputCopyData(conn_, buffer.data(),
                                  static_cast<int>(buffer.size())) == 1;
    buffer.clear();
    return ok;
  };
  for (size_t i = 0; i < rows.size(); ++i) {
    const PgRow& row = rows[i];
    if (row.size() != ncols) {
      return abort_copy(absl::InvalidArgumentError(absl::StrCat(
          "PostgreSQL: ", SqlForMessage(copy_sql), ": row ", i + 1, " of ",
          rows.size(), " has ", row.size(), " values, the COPY takes ", ncols,
          " columns; nothing was copied")));
    }
    for (size_t c = 0; c < row.size(); ++c) {
      if (row[c].has_value() && HasNul(*row[c])) {
        return abort_copy(absl::InvalidArgumentError(
            absl::StrCat("PostgreSQL: ", SqlForMessage(copy_sql), ": row ",
                         i + 1, ", value ", c + 1,
                         " contains a NUL byte, which PostgreSQL text "
                         "cannot hold; nothing was copied")));
      }
    }
    buffer += PgCopyLine(row);
    if (buffer.size() >= kCopyChunkBytes && !flush()) break;
  }
  if (!flush() || PQputCopyEnd(conn_, nullptr) != 1) {
    absl::Status s = ResultError(conn_, nullptr, copy_sql, description_);
    DrainResults(conn_, "send failed");
    return s;
  }
  res.reset(PQgetResult(conn_));
  absl::Status status = CheckResult(conn_, res.get(), copy_sql, description_);
  int64_t copied = 0;
  if (status.ok()) {
    const char* count = PQcmdTuples(res.get());
    if (!absl::SimpleAtoi(count, &copied)) {
      status = absl::InternalError(absl::StrCat(
          "PostgreSQL ", description_, ": ", SqlForMessage(copy_sql),
          " reported a row count that is no number: \"", count, "\""));
    }
  }
  res.reset();
  DrainResults(conn_, "unexpected COPY");
  if (!status.ok()) return status;
  return copied;
}

namespace {

absl::Status CheckChannel(absl::string_view channel) {
  if (channel.empty()) {
    return absl::InvalidArgumentError("PostgreSQL: empty channel name");
  }
  if (channel.size() > kMaxIdentifierBytes) {
    return absl::InvalidArgumentError(
        absl::StrCat("PostgreSQL: channel name of ", channel.size(),
                     " bytes; PostgreSQL keeps at most ", kMaxIdentifierBytes));
  }
  if (HasNul(channel)) {
    return absl::InvalidArgumentError(
        "PostgreSQL: channel name contains a NUL byte");
  }
  return absl::OkStatus();
}

}  // namespace

absl::Status PgConnection::Listen(absl::string_view channel) {
  if (absl::Status s = CheckChannel(channel); !s.ok()) return s;
  char* quoted = PQescapeIdentifier(conn_, channel.data(), channel.size());
  if (quoted == nullptr) {
    return absl::InvalidArgumentError(
        absl::StrCat("PostgreSQL: channel name cannot be quoted: ",
                     OneLine(PQerrorMessage(conn_))));
  }
  const std::string sql = absl::StrCat("LISTEN ", quoted);
  PQfreemem(quoted);
  return Exec(sql);
}

absl::Status PgConnection::Notify(absl::string_view channel,
                                  absl::string_view payload) {
  if (absl::Status s = CheckChannel(channel); !s.ok()) return s;
  return Query("SELECT pg_notify($1, $2)",
               {std::string(channel), std::string(payload)})
      .status();
}

absl::StatusOr<std::vector<PgNotification>> PgConnection::WaitForNotification(
    absl::Duration timeout) {
  std::vector<PgNotification> out;
  auto lost = [&]() {
    return absl::UnavailableError(
        absl::StrCat("PostgreSQL ", description_,
                     ": connection lost while waiting for notifications: ",
                     OneLine(PQerrorMessage(conn_))));
  };
  auto take = [&]() {
    while (PGnotify* n = PQnotifies(conn_)) {
      out.push_back(PgNotification{n->relname, n->extra, n->be_pid});
      PQfreemem(n);
    }
  };
  if (PQconsumeInput(conn_) == 0) return lost();
  take();
  const absl::Time deadline = absl::Now() + timeout;
  while (out.empty()) {
    const absl::Duration left = deadline - absl::Now();
    if (left <= absl::ZeroDuration()) break;
    const int fd = PQsocket(conn_);
    if (fd < 0) return lost();
    pollfd pfd{fd, POLLIN, 0};
    // Rounded up, so that a wait never ends just before the deadline.
    const int64_t ms = std::min<int64_t>(
        absl::ToInt64Milliseconds(absl::Ceil(left, absl::Milliseconds(1))),
        INT_MAX);
    const int rc = poll(&pfd, 1, static_cast<int>(ms));
    if (rc < 0) {
      if (errno == EINTR) continue;
      return absl::InternalError(absl::StrCat(
          "PostgreSQL ", description_, ": poll: ", std::strerror(errno)));
    }
    if (rc == 0) continue;
    if (PQconsumeInput(conn_) == 0) return lost();
    take();
  }
  return out;
}

absl::StatusOr<bool> PgConnection::QueryBool(absl::string_view function,
                                             int64_t key) {
  absl::StatusOr<PgResult> r = Query(
      absl::StrCat("SELECT ", function, "($1::bigint)"), {absl::StrCat(key)});
  if (!r.ok()) return r.status();
  if (r->rows.size() != 1 || r->rows[0].size() != 1 || !r->rows[0][0]) {
    return absl::InternalError(absl::StrCat("PostgreSQL ", description_, ": ",
                                            function, "(", key,
                                            ") returned no single value"));
  }
  return *r->rows[0][0] == "t";
}

absl::StatusOr<bool> PgConnection::TryAdvisoryLock(int64_t key) {
  return QueryBool("pg_try_advisory_lock", key);
}

absl::Status PgConnection::AdvisoryUnlock(int64_t key) {
  absl::StatusOr<bool> released = QueryBool("pg_advisory_unlock", key);
  if (!released.ok()) return released.status();
  if (!*released) {
    return absl::FailedPreconditionError(
        absl::StrCat("PostgreSQL ", description_, ": advisory lock ", key,
                     " is not held by this connection"));
  }
  return absl::OkStatus();
}

}  // namespace plumbline::daemon
