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
//   SecretVerdict v = (*check)->Check(presented);  // constant-time compare
//
// Used by daemon/access_control (tokens), daemon/metrics_exporter (basic
// auth), and plumbctl token new.
//
// Thread-safe: free functions without shared state; SecretCheck is safe to
// share between threads.
#ifndef PLUMBLINE_DAEMON_SECURITY_TOKEN_HASH_H_
#define PLUMBLINE_DAEMON_SECURITY_TOKEN_HASH_H_

#include <atomic>
#include <cstddef>
#include <cstdint>
#include <deque>
#include <functional>
#include <memory>
#include <optional>
#include <string>

#include "absl/base/thread_annotations.h"
#include "absl/container/flat_hash_set.h"
#include "absl/status/statusor.h"
#include "absl/strings/string_view.h"
#include "absl/synchronization/mutex.h"
#include "absl/time/clock.h"
#include "absl/time/time.h"
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

// What SecretCheck::Check concluded about one presented secret.
enum class SecretVerdict {
  kMatch,     // the secret derives the stored key
  kMismatch,  // it does not
  kThrottled  // not checked: too many fresh wrong secrets for this hash of
              // late (see SecretCheck); the caller may retry later
};

// How hard SecretCheck works for wrong secrets. The defaults bound an
// attacker who knows a public token id to about one PBKDF2 run (a quarter
// of a second of CPU at kDefaultHashIterations) every 5 s per token, after a
// burst of 5.
struct SecretCheckOptions {
  // PBKDF2 runs allowed at once for secrets seen for the first time.
  int burst = 5;
  // One more run becomes available every `refill` (up to `burst`).
  absl::Duration refill = absl::Seconds(5);
  // Digests of refused secrets remembered (oldest forgotten first).
  size_t max_refused = 1024;
  // The clock of the refill; tests pass a fake.
  std::function<absl::Time()> now = [] { return absl::Now(); };
};

// Checks presented secrets against one stored hash without letting wrong
// secrets cost a slow hash each:
//
//  - A secret that matched once is remembered as an HMAC-SHA256 digest
//    under a random per-object key (never the secret) and accepted again
//    by a constant-time comparison of digests, without PBKDF2; so is a
//    refused one (a bounded set of recent digests), refused again.
//  - A secret in neither cache costs one PBKDF2 run, taken from a token
//    bucket of `burst` runs refilled one per `refill`. With the bucket
//    empty the secret is not hashed and Check answers kThrottled.
//
// So N wrong secrets cost at most burst + elapsed / refill PBKDF2 runs.
// A caller whose secret was already verified is never throttled; a caller
// whose right secret is new to this process (after a restart) while
// someone floods the same token id with wrong ones is throttled until the
// flood stops (plumbd answers RESOURCE_EXHAUSTED saying so).
//
// Thread-safe. At most `burst` PBKDF2 runs are in flight at once per
// object (each takes its unit from the bucket before it starts).
class SecretCheck {
 public:
  // INVALID_ARGUMENT if `stored` does not parse, or has fewer than
  // kMinHashIterations iterations.
  static absl::StatusOr<std::unique_ptr<SecretCheck>> Create(
      absl::string_view stored, SecretCheckOptions options = {});

  SecretCheck(const SecretCheck&) = delete;
  SecretCheck& operator=(const SecretCheck&) = delete;

  // `hashed` (may be null) says whether this call ran PBKDF2.
  SecretVerdict Check(absl::string_view secret, bool* hashed = nullptr) const;

  // Check(secret) == kMatch: throttled counts as no match.
  bool Matches(absl::string_view secret) const {
    return Check(secret) == SecretVerdict::kMatch;
  }

  // PBKDF2 runs made so far (the cost the caches and the bucket bound).
  int64_t hashes() const { return hashes_.load(std::memory_order_relaxed); }

  // How long until a throttled caller may be checked again.
  absl::Duration RetryAfter() const;

 private:
  SecretCheck(StoredHash hash, std::string cache_key,
              SecretCheckOptions options);

  std::string CacheDigest(absl::string_view secret) const;
  void RefillLocked(absl::Time now) const ABSL_EXCLUSIVE_LOCKS_REQUIRED(mu_);
  void RememberRefusedLocked(std::string digest) const
      ABSL_EXCLUSIVE_LOCKS_REQUIRED(mu_);

  // Constant after construction.
  const StoredHash hash_;
  const std::string cache_key_;
  const SecretCheckOptions options_;

  mutable std::atomic<int64_t> hashes_{0};

  // Guarded by mu_.
  mutable absl::Mutex mu_;
  mutable std::string accepted_ ABSL_GUARDED_BY(mu_);
  mutable absl::flat_hash_set<std::string> refused_ ABSL_GUARDED_BY(mu_);
  // refused_ in the order the digests came, to forget the oldest.
  mutable std::deque<std::string> refused_order_ ABSL_GUARDED_BY(mu_);
  // PBKDF2 runs left in the bucket and when it was last refilled.
  mutable int credits_ ABSL_GUARDED_BY(mu_);
  mutable absl::Time refilled_at_ ABSL_GUARDED_BY(mu_);
};

}  // namespace plumbline::daemon

#endif  // PLUMBLINE_DAEMON_SECURITY_TOKEN_HASH_H_
