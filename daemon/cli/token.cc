// File: daemon/cli/token.cc
#include "daemon/cli/token.h"

#include <string>

#include "absl/strings/escaping.h"
#include "absl/strings/str_cat.h"
#include "google/protobuf/util/json_util.h"
#include "plumbline/v1/security.pb.h"

namespace plumbline::daemon {
namespace {

// One-line JSON of `message` (protobuf's JSON mapping, as plumbd reads it).
std::string Json(const google::protobuf::Message& message) {
  std::string json;
  google::protobuf::util::JsonPrintOptions options;
  options.preserve_proto_field_names = true;
  (void)google::protobuf::util::MessageToJsonString(message, &json, options);
  return json;
}

absl::Status MetricsPassword(const TokenNewOptions& options,
                             std::ostream& out) {
  absl::StatusOr<std::string> bytes = RandomBytes(24);
  if (!bytes.ok()) return bytes.status();
  const std::string password = absl::BytesToHexString(*bytes);
  absl::StatusOr<std::string> hash = HashSecret(password, options.iterations);
  if (!hash.ok()) return hash.status();
  v1::MetricsAuthConfig entry;
  entry.set_username(options.name.empty() ? "metrics" : options.name);
  entry.set_password_hash(*hash);
  out << "# The metrics password, shown once (plumbd keeps only its hash).\n"
      << "# Give it to the scraper with the user name \"" << entry.username()
      << "\" (HTTP basic auth):\n"
      << password << "\n"
      << "# Set this as security.metrics_auth in plumbd's config file, then "
         "restart plumbd:\n"
      << Json(entry) << "\n";
  return absl::OkStatus();
}

}  // namespace

absl::Status RunTokenNewCommand(const TokenNewOptions& options,
                                std::ostream& out) {
  if (options.iterations < kMinHashIterations) {
    return absl::InvalidArgumentError(
        absl::StrCat("--iterations must be at least ", kMinHashIterations));
  }
  v1::AccessConfig::Token entry;
  if (options.role == "score") {
    entry.set_role(v1::AccessConfig::SCORE);
  } else if (options.role == "admin") {
    entry.set_role(v1::AccessConfig::ADMIN);
  } else if (options.role == "metrics") {
    return MetricsPassword(options, out);
  } else {
    return absl::InvalidArgumentError(absl::StrCat(
        "--role: '", options.role, "' is not score, admin or metrics"));
  }
  absl::StatusOr<NewToken> token = MakeToken();
  if (!token.ok()) return token.status();
  absl::StatusOr<std::string> hash =
      HashSecret(token->token, options.iterations);
  if (!hash.ok()) return hash.status();
  entry.set_name(options.name.empty() ? absl::StrCat("token-", token->id)
                                      : options.name);
  entry.set_id(token->id);
  entry.set_hash(*hash);
  out << "# The token, shown once (plumbd keeps only its hash). Give it to "
         "the caller,\n"
      << "# e.g. as PLUMBLINE_TOKEN for plumbctl or as 'authorization: "
         "Bearer <token>' metadata:\n"
      << token->token << "\n"
      << "# Add this entry to security.access.tokens in plumbd's config "
         "file, then restart plumbd:\n"
      << Json(entry) << "\n";
  return absl::OkStatus();
}

}  // namespace plumbline::daemon
