// File: daemon/util/redact.h
//
// Secrets kept out of logs: bearer tokens (plb_<id>_<secret>, see
// daemon/security/token_hash.h) keep their public id and lose their secret,
// and whatever follows "Bearer " is masked. daemon/util/event_log runs every
// logged value through MaskSecrets when MayHoldSecret says it might need it.
//
//   MaskSecrets("authorization: Bearer abc")  // "authorization: Bearer
//   [masked]"
//
// Thread-safe: pure functions.
#ifndef PLUMBLINE_DAEMON_UTIL_REDACT_H_
#define PLUMBLINE_DAEMON_UTIL_REDACT_H_

#include <string>

#include "absl/strings/string_view.h"

namespace plumbline::daemon {

// Every Plumbline bearer token starts with this prefix.
inline constexpr char kTokenPrefix[] = "plb_";

// Whether `text` may hold a token or an "authorization: Bearer" value.
bool MayHoldSecret(absl::string_view text);

// `text` with the secret part of every token and the credential after every
// "Bearer " replaced by "[masked]"; a token keeps its public id.
std::string MaskSecrets(absl::string_view text);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_UTIL_REDACT_H_
