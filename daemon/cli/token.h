// File: daemon/cli/token.h
//
// `plumbctl token new`: makes a secret for plumbd's access control and
// prints it once, with the config entry that holds only its salted hash:
//   --role score|admin   a bearer token (plb_<id>_<secret>) and the entry
//                        for security.access.tokens
//   --role metrics       a password for the metrics endpoint's basic auth
//                        and the entry for security.metrics_auth
// Works offline: plumbd is not contacted. plumbd reads its config at
// startup, so it must be restarted to accept a new entry.
//
//   TokenNewOptions options{.role = "score", .name = "router"};
//   absl::Status s = RunTokenNewCommand(options, std::cout);
//
// Thread-safe: no shared state, but it writes to the given stream.
#ifndef PLUMBLINE_DAEMON_CLI_TOKEN_H_
#define PLUMBLINE_DAEMON_CLI_TOKEN_H_

#include <ostream>
#include <string>

#include "absl/status/status.h"
#include "daemon/security/token_hash.h"

namespace plumbline::daemon {

struct TokenNewOptions {
  // "score", "admin" or "metrics".
  std::string role;
  // Who holds the token (logs), or the metrics user name. Default: "token-"
  // plus the token's id, or "metrics" for --role metrics.
  std::string name;
  // PBKDF2 iterations of the stored hash.
  int iterations = kDefaultHashIterations;
};

// INVALID_ARGUMENT for an unknown role or too few iterations.
absl::Status RunTokenNewCommand(const TokenNewOptions& options,
                                std::ostream& out);

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_CLI_TOKEN_H_
