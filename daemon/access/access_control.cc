// File: daemon/access/access_control.cc
#include "daemon/access/access_control.h"

#include <grpc/grpc_security_constants.h>
#include <grpcpp/security/auth_context.h>

#include <algorithm>
#include <chrono>
#include <cstdint>
#include <optional>
#include <utility>

#include "absl/algorithm/container.h"
#include "absl/base/const_init.h"
#include "absl/strings/ascii.h"
#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/strip.h"
#include "absl/synchronization/mutex.h"
#include "absl/time/time.h"
#include "daemon/util/event_log.h"
#include "daemon/util/grpc_status.h"

namespace plumbline::daemon {
namespace {

ABSL_CONST_INIT absl::Mutex installed_mu(absl::kConstInit);
std::shared_ptr<const AccessControl>& Installed()
    ABSL_EXCLUSIVE_LOCKS_REQUIRED(installed_mu) {
  static auto* installed = new std::shared_ptr<const AccessControl>();
  return *installed;
}

std::shared_ptr<const AccessControl> CurrentAccessControl() {
  absl::MutexLock lock(&installed_mu);
  return Installed();
}

absl::StatusOr<Role> RoleFrom(v1::AccessConfig::Role role,
                              absl::string_view field) {
  switch (role) {
    case v1::AccessConfig::SCORE:
      return Role::kScore;
    case v1::AccessConfig::ADMIN:
      return Role::kAdmin;
    default:
      return absl::InvalidArgumentError(
          absl::StrCat(field, ": set \"SCORE\" or \"ADMIN\""));
  }
}

bool Grants(Role held, Role needed) {
  return held == Role::kAdmin || held == needed;
}

// The credential of "Bearer <credential>" (scheme case-insensitive, RFC
// 7235); nullopt for anything else.
std::optional<absl::string_view> BearerCredential(absl::string_view value) {
  value = absl::StripAsciiWhitespace(value);
  constexpr absl::string_view kScheme = "bearer ";
  if (value.size() <= kScheme.size() ||
      !absl::EqualsIgnoreCase(value.substr(0, kScheme.size()), kScheme)) {
    return std::nullopt;
  }
  absl::string_view credential =
      absl::StripLeadingAsciiWhitespace(value.substr(kScheme.size()));
  if (credential.empty()) return std::nullopt;
  return credential;
}

std::string ToString(grpc::string_ref ref) {
  return std::string(ref.data(), ref.size());
}

}  // namespace

absl::string_view RoleName(Role role) {
  return role == Role::kAdmin ? "admin" : "score";
}

PresentedCredentials CredentialsOf(const grpc::ServerContextBase& context) {
  PresentedCredentials presented;
  const auto& metadata = context.client_metadata();
  for (auto [it, end] = metadata.equal_range("authorization"); it != end;
       ++it) {
    presented.authorization.push_back(ToString(it->second));
  }
  std::shared_ptr<const grpc::AuthContext> auth = context.auth_context();
  if (auth != nullptr) {
    for (const grpc::string_ref& s :
         auth->FindPropertyValues(GRPC_X509_SUBJECT_PROPERTY_NAME)) {
      presented.subjects.push_back(ToString(s));
    }
    for (const grpc::string_ref& s :
         auth->FindPropertyValues(GRPC_X509_CN_PROPERTY_NAME)) {
      presented.common_names.push_back(ToString(s));
    }
  }
  presented.peer = context.peer();
  return presented;
}

absl::StatusOr<std::unique_ptr<AccessControl>> AccessControl::Create(
    const v1::AccessConfig& config,
    std::shared_ptr<prometheus::Registry> registry) {
  std::unique_ptr<AccessControl> access(new AccessControl(std::move(registry)));
  for (int i = 0; i < config.tokens_size(); ++i) {
    const v1::AccessConfig::Token& token = config.tokens(i);
    const std::string field = absl::StrCat("security.access.tokens[", i, "]");
    absl::StatusOr<Role> role = RoleFrom(token.role(), field + ".role");
    if (!role.ok()) return role.status();
    // A well-formed token with this id must exist for the entry to be of use.
    const std::string probe =
        absl::StrCat(kTokenPrefix, token.id(), "_", std::string(64, '0'));
    if (!TokenId(probe).has_value()) {
      return absl::InvalidArgumentError(absl::StrCat(
          field, ".id: '", token.id(),
          "' is not a token id (12 lowercase hex digits, as printed by "
          "plumbctl token new)"));
    }
    absl::StatusOr<std::unique_ptr<SecretCheck>> check =
        SecretCheck::Create(token.hash());
    if (!check.ok()) {
      return absl::InvalidArgumentError(
          absl::StrCat(field, ".hash: ", check.status().message()));
    }
    TokenEntry entry;
    entry.name = token.name().empty() ? token.id() : token.name();
    entry.role = *role;
    entry.check = *std::move(check);
    if (!access->tokens_.emplace(token.id(), std::move(entry)).second) {
      return absl::InvalidArgumentError(absl::StrCat(
          field, ".id: '", token.id(), "' appears twice; ids must be unique"));
    }
  }
  for (int i = 0; i < config.subjects_size(); ++i) {
    const v1::AccessConfig::Subject& subject = config.subjects(i);
    const std::string field = absl::StrCat("security.access.subjects[", i, "]");
    if (subject.subject().empty() == subject.common_name().empty()) {
      return absl::InvalidArgumentError(
          absl::StrCat(field, ": set exactly one of subject and common_name"));
    }
    absl::StatusOr<Role> role = RoleFrom(subject.role(), field + ".role");
    if (!role.ok()) return role.status();
    access->subjects_.push_back(
        SubjectEntry{subject.subject(), subject.common_name(), *role});
  }
  return access;
}

absl::Status AccessControl::Refuse(AuthFailure reason,
                                   const PresentedCredentials& presented,
                                   Role role, absl::string_view detail_key,
                                   absl::string_view detail,
                                   absl::Duration retry_after) const {
  failures_.Count(reason);
  const absl::string_view reason_name = AuthFailureName(reason);
  if (detail_key.empty()) {
    LogEvent(LogLevel::kWarning, "auth_refused",
             {{"reason", reason_name},
              {"peer", presented.peer},
              {"needs", RoleName(role)}});
  } else {
    LogEvent(LogLevel::kWarning, "auth_refused",
             {{"reason", reason_name},
              {"peer", presented.peer},
              {"needs", RoleName(role)},
              {detail_key, detail}});
  }
  switch (reason) {
    case AuthFailure::kWrongRole:
      return absl::PermissionDeniedError(
          absl::StrCat(detail, " may not call this RPC: it needs the ",
                       RoleName(role), " role"));
    case AuthFailure::kMalformedCredentials:
      return absl::UnauthenticatedError(
          "the authorization metadata must be one 'Bearer <token>' value");
    case AuthFailure::kUnknownToken:
      return absl::UnauthenticatedError(
          "unknown or revoked token (plumbctl token new makes one; plumbd "
          "must have its entry in security.access.tokens)");
    case AuthFailure::kThrottled:
      return absl::ResourceExhaustedError(absl::StrCat(
          "token ", detail,
          ": too many wrong secrets for this token id of late, so this one "
          "was not checked; retry in ",
          std::max<int64_t>(
              absl::ToInt64Seconds(absl::Ceil(retry_after, absl::Seconds(1))),
              1),
          " s (a token plumbd has already accepted keeps working)"));
    case AuthFailure::kUnknownSubject:
      return absl::UnauthenticatedError(
          "the client certificate's subject is mapped to no role "
          "(security.access.subjects) and no token was sent");
    default:
      return absl::UnauthenticatedError(
          "no credentials: send 'authorization: Bearer <token>' metadata "
          "(plumbctl --token or PLUMBLINE_TOKEN) or a client certificate "
          "mapped to a role");
  }
}

absl::Status AccessControl::Check(const PresentedCredentials& presented,
                                  Role role) const {
  if (!enabled()) return absl::OkStatus();
  std::optional<Role> held;
  std::string holder;
  if (!presented.authorization.empty()) {
    std::optional<absl::string_view> token;
    if (presented.authorization.size() == 1) {
      token = BearerCredential(presented.authorization.front());
    }
    if (!token.has_value()) {
      return Refuse(AuthFailure::kMalformedCredentials, presented, role, "",
                    "");
    }
    const std::optional<std::string> id = TokenId(*token);
    auto it = id.has_value() ? tokens_.find(*id) : tokens_.end();
    if (it == tokens_.end()) {
      return Refuse(AuthFailure::kUnknownToken, presented, role, "token_id",
                    id.value_or(""));
    }
    bool hashed = false;
    const SecretVerdict verdict = it->second.check->Check(*token, &hashed);
    if (hashed) failures_.CountHash();
    if (verdict == SecretVerdict::kThrottled) {
      return Refuse(AuthFailure::kThrottled, presented, role, "token_id", *id,
                    it->second.check->RetryAfter());
    }
    if (verdict != SecretVerdict::kMatch) {
      return Refuse(AuthFailure::kUnknownToken, presented, role, "token_id",
                    *id);
    }
    held = it->second.role;
    holder = absl::StrCat("token ", it->second.name, " (role ",
                          RoleName(it->second.role), ")");
  }
  for (const SubjectEntry& entry : subjects_) {
    const bool match =
        entry.subject.empty()
            ? absl::c_linear_search(presented.common_names, entry.common_name)
            : absl::c_linear_search(presented.subjects, entry.subject);
    if (!match || (held.has_value() && Grants(*held, entry.role))) continue;
    held = entry.role;
    holder =
        absl::StrCat("client certificate ",
                     entry.subject.empty() ? entry.common_name : entry.subject,
                     " (role ", RoleName(entry.role), ")");
  }
  if (!held.has_value()) {
    if (!presented.subjects.empty()) {
      return Refuse(AuthFailure::kUnknownSubject, presented, role, "subject",
                    presented.subjects.front());
    }
    return Refuse(AuthFailure::kMissingCredentials, presented, role, "", "");
  }
  if (!Grants(*held, role)) {
    return Refuse(AuthFailure::kWrongRole, presented, role, "caller", holder);
  }
  return absl::OkStatus();
}

void InstallAccessControl(std::shared_ptr<const AccessControl> access) {
  absl::MutexLock lock(&installed_mu);
  Installed() = std::move(access);
}

absl::Status InstallAccessControl(
    const v1::AccessConfig& config,
    std::shared_ptr<prometheus::Registry> registry) {
  absl::StatusOr<std::unique_ptr<AccessControl>> access =
      AccessControl::Create(config, std::move(registry));
  if (!access.ok()) return access.status();
  if ((*access)->enabled()) {
    LogEvent(LogLevel::kInfo, "access_control_on",
             {{"tokens", absl::StrCat((*access)->token_count())},
              {"subjects", absl::StrCat((*access)->subject_count())}});
  } else {
    LogEvent(LogLevel::kWarning, "access_control_off",
             {{"effect",
               "no tokens or subjects in security.access: every caller may "
               "call every RPC, including the Registry's"}});
  }
  InstallAccessControl(
      std::shared_ptr<const AccessControl>(*std::move(access)));
  return absl::OkStatus();
}

grpc::Status Admit(const grpc::ServerContextBase* context, Role role) {
  if (context == nullptr) return grpc::Status::OK;
  if (context->deadline() < std::chrono::system_clock::now()) {
    return grpc::Status(grpc::StatusCode::DEADLINE_EXCEEDED,
                        "the call's deadline passed before plumbd started it; "
                        "nothing was done");
  }
  std::shared_ptr<const AccessControl> access = CurrentAccessControl();
  if (access == nullptr) return grpc::Status::OK;
  return ToGrpcStatus(access->Check(CredentialsOf(*context), role));
}

}  // namespace plumbline::daemon
