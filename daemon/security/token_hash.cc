// File: daemon/security/token_hash.cc
#include "daemon/security/token_hash.h"

#include <openssl/crypto.h>
#include <openssl/evp.h>
#include <openssl/hmac.h>
#include <openssl/rand.h>

#include <algorithm>
#include <utility>
#include <vector>

#include "absl/status/status.h"
#include "absl/strings/ascii.h"
#include "absl/strings/escaping.h"
#include "absl/strings/numbers.h"
#include "absl/strings/str_cat.h"
#include "absl/strings/str_split.h"
#include "absl/strings/strip.h"

namespace plumbline::daemon {
namespace {

constexpr size_t kSaltBytes = 16;
constexpr size_t kKeyBytes = 32;
constexpr size_t kTokenIdBytes = 6;       // 12 hex digits
constexpr size_t kTokenSecretBytes = 32;  // 64 hex digits

bool IsLowerHex(absl::string_view text) {
  for (char c : text) {
    if (!absl::ascii_isdigit(c) && (c < 'a' || c > 'f')) return false;
  }
  return !text.empty();
}

}  // namespace

absl::StatusOr<StoredHash> ParseStoredHash(absl::string_view text) {
  const std::vector<absl::string_view> parts = absl::StrSplit(text, '$');
  if (parts.size() != 4 || parts[0] != kHashAlgorithm) {
    return absl::InvalidArgumentError(absl::StrCat(
        "not a stored hash: expected ", kHashAlgorithm,
        "$<iterations>$<salt>$<key> (make one with plumbctl token new)"));
  }
  StoredHash hash;
  if (!absl::SimpleAtoi(parts[1], &hash.iterations) || hash.iterations < 1) {
    return absl::InvalidArgumentError(
        "stored hash: the iteration count is not a positive integer");
  }
  if (!absl::Base64Unescape(parts[2], &hash.salt) || hash.salt.empty()) {
    return absl::InvalidArgumentError("stored hash: the salt is not base64");
  }
  if (!absl::Base64Unescape(parts[3], &hash.key) || hash.key.empty()) {
    return absl::InvalidArgumentError("stored hash: the key is not base64");
  }
  return hash;
}

std::string FormatStoredHash(const StoredHash& hash) {
  return absl::StrCat(kHashAlgorithm, "$", hash.iterations, "$",
                      absl::Base64Escape(hash.salt), "$",
                      absl::Base64Escape(hash.key));
}

absl::StatusOr<std::string> Pbkdf2Sha256(absl::string_view secret,
                                         absl::string_view salt, int iterations,
                                         size_t length) {
  std::string key(length, '\0');
  if (PKCS5_PBKDF2_HMAC(secret.data(), static_cast<int>(secret.size()),
                        reinterpret_cast<const unsigned char*>(salt.data()),
                        static_cast<int>(salt.size()), iterations, EVP_sha256(),
                        static_cast<int>(length),
                        reinterpret_cast<unsigned char*>(key.data())) != 1) {
    return absl::InternalError("PKCS5_PBKDF2_HMAC failed");
  }
  return key;
}

absl::StatusOr<std::string> RandomBytes(size_t n) {
  std::string out(n, '\0');
  if (RAND_bytes(reinterpret_cast<unsigned char*>(out.data()),
                 static_cast<int>(n)) != 1) {
    return absl::InternalError(
        "OpenSSL's random generator (RAND_bytes) failed; no secret made");
  }
  return out;
}

absl::StatusOr<std::string> HashSecret(absl::string_view secret,
                                       int iterations) {
  StoredHash hash;
  hash.iterations = iterations;
  absl::StatusOr<std::string> salt = RandomBytes(kSaltBytes);
  if (!salt.ok()) return salt.status();
  hash.salt = *std::move(salt);
  absl::StatusOr<std::string> key =
      Pbkdf2Sha256(secret, hash.salt, iterations, kKeyBytes);
  if (!key.ok()) return key.status();
  hash.key = *std::move(key);
  return FormatStoredHash(hash);
}

bool VerifySecret(const StoredHash& hash, absl::string_view secret) {
  absl::StatusOr<std::string> key =
      Pbkdf2Sha256(secret, hash.salt, hash.iterations, hash.key.size());
  return key.ok() &&
         CRYPTO_memcmp(key->data(), hash.key.data(), hash.key.size()) == 0;
}

absl::StatusOr<NewToken> MakeToken() {
  absl::StatusOr<std::string> id = RandomBytes(kTokenIdBytes);
  if (!id.ok()) return id.status();
  absl::StatusOr<std::string> secret = RandomBytes(kTokenSecretBytes);
  if (!secret.ok()) return secret.status();
  NewToken token;
  token.id = absl::BytesToHexString(*id);
  token.token = absl::StrCat(kTokenPrefix, token.id, "_",
                             absl::BytesToHexString(*secret));
  return token;
}

std::optional<std::string> TokenId(absl::string_view token) {
  if (!absl::ConsumePrefix(&token, kTokenPrefix)) return std::nullopt;
  const std::vector<absl::string_view> parts = absl::StrSplit(token, '_');
  if (parts.size() != 2 || parts[0].size() != 2 * kTokenIdBytes ||
      parts[1].size() != 2 * kTokenSecretBytes || !IsLowerHex(parts[0]) ||
      !IsLowerHex(parts[1])) {
    return std::nullopt;
  }
  return std::string(parts[0]);
}

absl::StatusOr<std::unique_ptr<SecretCheck>> SecretCheck::Create(
    absl::string_view stored, SecretCheckOptions options) {
  absl::StatusOr<StoredHash> hash = ParseStoredHash(stored);
  if (!hash.ok()) return hash.status();
  if (hash->iterations < kMinHashIterations) {
    return absl::InvalidArgumentError(absl::StrCat(
        "stored hash: ", hash->iterations, " iterations is below the floor of ",
        kMinHashIterations, "; make a new one with plumbctl token new"));
  }
  absl::StatusOr<std::string> cache_key = RandomBytes(kKeyBytes);
  if (!cache_key.ok()) return cache_key.status();
  return std::unique_ptr<SecretCheck>(new SecretCheck(
      *std::move(hash), *std::move(cache_key), std::move(options)));
}

SecretCheck::SecretCheck(StoredHash hash, std::string cache_key,
                         SecretCheckOptions options)
    : hash_(std::move(hash)),
      cache_key_(std::move(cache_key)),
      options_(std::move(options)),
      credits_(std::max(options_.burst, 1)),
      refilled_at_(options_.now()) {}

std::string SecretCheck::CacheDigest(absl::string_view secret) const {
  unsigned char digest[EVP_MAX_MD_SIZE];
  unsigned int length = 0;
  if (HMAC(EVP_sha256(), cache_key_.data(), static_cast<int>(cache_key_.size()),
           reinterpret_cast<const unsigned char*>(secret.data()), secret.size(),
           digest, &length) == nullptr) {
    return std::string();  // no caching for this secret
  }
  return std::string(reinterpret_cast<const char*>(digest), length);
}

void SecretCheck::RefillLocked(absl::Time now) const {
  const int burst = std::max(options_.burst, 1);
  if (credits_ >= burst || options_.refill <= absl::ZeroDuration()) {
    refilled_at_ = now;
    if (options_.refill <= absl::ZeroDuration()) credits_ = burst;
    return;
  }
  if (now <= refilled_at_) return;
  absl::Duration remainder;
  const int64_t earned =
      absl::IDivDuration(now - refilled_at_, options_.refill, &remainder);
  if (earned <= 0) return;
  if (earned >= burst - credits_) {
    credits_ = burst;
    refilled_at_ = now;
  } else {
    credits_ += static_cast<int>(earned);
    refilled_at_ += options_.refill * earned;
  }
}

void SecretCheck::RememberRefusedLocked(std::string digest) const {
  if (options_.max_refused == 0) return;
  if (!refused_.insert(digest).second) return;
  refused_order_.push_back(std::move(digest));
  while (refused_order_.size() > options_.max_refused) {
    refused_.erase(refused_order_.front());
    refused_order_.pop_front();
  }
}

absl::Duration SecretCheck::RetryAfter() const {
  absl::MutexLock lock(&mu_);
  RefillLocked(options_.now());
  if (credits_ > 0) return absl::ZeroDuration();
  return std::max(refilled_at_ + options_.refill - options_.now(),
                  absl::ZeroDuration());
}

SecretVerdict SecretCheck::Check(absl::string_view secret, bool* hashed) const {
  if (hashed != nullptr) *hashed = false;
  const std::string digest = CacheDigest(secret);
  {
    absl::MutexLock lock(&mu_);
    if (!digest.empty()) {
      if (accepted_.size() == digest.size() &&
          CRYPTO_memcmp(accepted_.data(), digest.data(), digest.size()) == 0) {
        return SecretVerdict::kMatch;
      }
      // Found by hashing: the lookup's timing reveals only whether this
      // digest (under a key no caller knows) was refused before.
      if (refused_.contains(digest)) return SecretVerdict::kMismatch;
    }
    RefillLocked(options_.now());
    if (credits_ <= 0) return SecretVerdict::kThrottled;
    --credits_;  // taken before the slow hash, so concurrent calls count
  }
  hashes_.fetch_add(1, std::memory_order_relaxed);
  if (hashed != nullptr) *hashed = true;
  const bool match = VerifySecret(hash_, secret);
  absl::MutexLock lock(&mu_);
  if (match) {
    // The right secret costs nothing from the bucket.
    credits_ = std::min(credits_ + 1, std::max(options_.burst, 1));
    if (!digest.empty()) accepted_ = digest;
    return SecretVerdict::kMatch;
  }
  if (!digest.empty()) RememberRefusedLocked(digest);
  return SecretVerdict::kMismatch;
}

}  // namespace plumbline::daemon
