// File: daemon/security/token_hash.h
//
// Secrets of plumbd's access control: bearer tokens and the metrics
// password. Only a salted slow hash of a secret is ever stored, as
//
//   pbkdf2-sha256$<iterations>$<salt, base64>$<derived key, base64>
//
// (PBKDF2-HMAC-SHA256, RFC 8018, through OpenSSL's PKCS5_PBKDF2_HMAC; a
// 16-byte salt and a 32-byte key; salts and tokens come from OpenSSL's
// CSPRNG, RAND_bytes). A token is
//
//   plb_<id: 12 hex digits>_<secret: 64 hex digits>
//
// where the id is public (it names the token in the config and the logs)
// and the whole token is what is hashed.
//
//   absl::StatusOr<NewToken> token = MakeToken();
//   absl::StatusOr<std::string> stored = HashSecret(token->token);
//   auto check = SecretCheck::Create(*stored);
//   bool ok = (*check)->Matches(presented);   // constant-time comparison
//
// Used by daemon/access_control (tokens), daemon/metrics_exporter (basic
// auth), and plumbctl token new.
//
// Thread-safe: free functions without shared state; SecretCheck is safe to
// share between threads.
#ifndef PLUMBLINE_DAEMON_SECURITY_TOKEN_HASH_H_
#define PLUMBLINE_DAEMON_SECURITY_TOKEN_HASH_H_

#include <cstddef>
#include <memory>
#include <optional>
#include <string>

#include "absl/base/thread_annotations.h"
#include "absl/container/flat_hash_set.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "absl/synchronization/mutex.h"
#include "daemon/util/redact.h"

namespace plumbline::daemon {

inline constexpr char kHashAlgorithm[] = "pbkdf2-sha256";
// OWASP's 2023 password-storage advice for PBKDF2-HMAC-SHA256 (from memory).
inline constexpr int kDefaultHashIterations = 600000;
// The config refuses hashes with fewer iterations (common practice, no
// source: a floor against hashes made by hand with a toy count).
inline constexpr int kMinHashIterations = 10000;
// kTokenPrefix ("plb_") lives in daemon/util/redact.h, which masks tokens in
// logs.

struct StoredHash {
  int iterations = 0;
  std::string salt;
  std::string key;  // the derived key
};

// Parses the stored form. INVALID_ARGUMENT saying which part is wrong; the
// message never repeats the text.
absl::StatusOr<StoredHash> ParseStoredHash(absl::string_view text);
std::string FormatStoredHash(const StoredHash& hash);

// PBKDF2-HMAC-SHA256 of `secret` with `salt`, `length` bytes.
// REQUIRES: iterations >= 1, length >= 1.
absl::StatusOr<std::string> Pbkdf2Sha256(absl::string_view secret,
                                         absl::string_view salt, int iterations,
                                         size_t length);

// `n` bytes from OpenSSL's CSPRNG; INTERNAL if it cannot provide them.
absl::StatusOr<std::string> RandomBytes(size_t n);

// The stored form of `secret` with a fresh random salt.
absl::StatusOr<std::string> HashSecret(absl::string_view secret,
                                       int iterations = kDefaultHashIterations);

// Whether `secret` derives `hash.key`; the keys are compared in constant
// time (CRYPTO_memcmp).
bool VerifySecret(const StoredHash& hash, absl::string_view secret);

struct NewToken {
  std::string token;  // plb_<id>_<secret>
  std::string id;
};
// A fresh random token.
absl::StatusOr<NewToken> MakeToken();

// The public id of a token of the right shape; nullopt otherwise.
std::optional<std::string> TokenId(absl::string_view token);

// Checks presented secrets against one stored hash. The first check of a
// given secret runs PBKDF2 (deliberately slow); the answer is then cached
// under an HMAC-SHA256 of the secret keyed with a random per-object key, so
// a caller presenting the same token on every request pays the slow hash
// once, and a repeated wrong guess costs no more than the first. Nothing is
// cached in plain text.
class SecretCheck {
 public:
  // INVALID_ARGUMENT if `stored` does not parse, or has fewer than
  // kMinHashIterations iterations.
  static absl::StatusOr<std::unique_ptr<SecretCheck>> Create(
      absl::string_view stored);

  SecretCheck(const SecretCheck&) = delete;
  SecretCheck& operator=(const SecretCheck&) = delete;

  bool Matches(absl::string_view secret) const;

 private:
  SecretCheck(StoredHash hash, std::string cache_key)
      : hash_(std::move(hash)), cache_key_(std::move(cache_key)) {}

  std::string CacheDigest(absl::string_view secret) const;

  // Refused digests kept at most; the set is emptied when full.
  static constexpr size_t kMaxRefused = 1024;

  // Constant after construction.
  const StoredHash hash_;
  const std::string cache_key_;

  // Guarded by mu_.
  mutable absl::Mutex mu_;
  mutable std::string accepted_ ABSL_GUARDED_BY(mu_);
  mutable absl::flat_hash_set<std::string> refused_ ABSL_GUARDED_BY(mu_);
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SECURITY_TOKEN_HASH_H_
