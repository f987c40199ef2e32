// File: tests/daemon/security/token_hash_test.cc
//
// The secrets of access control: PBKDF2-HMAC-SHA256 against published test
// vectors, the stored-hash format, verification, token shape and the
// masking of secrets in log text.
#include "daemon/security/token_hash.h"

#include <functional>
#include <string>
#include <thread>
#include <vector>

#include "absl/strings/ascii.h"
#include "absl/strings/escaping.h"
#include "absl/strings/match.h"
#include "absl/strings/str_cat.h"
#include "absl/time/time.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"

namespace plumbline::daemon {
namespace {

using ::testing::HasSubstr;
using ::testing::MatchesRegex;
using ::testing::Not;

TEST(Pbkdf2Sha256Test, MatchesRfc7914Vectors) {
  // RFC 7914 section 11, PBKDF2-HMAC-SHA256 test vectors (P="passwd",
  // S="salt", c=1 and P="Password", S="NaCl", c=80000, dkLen=64); the same
  // bytes from Python 3.11 hashlib.pbkdf2_hmac("sha256", ...).
  absl::StatusOr<std::string> one = Pbkdf2Sha256("passwd", "salt", 1, 64);
  ASSERT_TRUE(one.ok()) << one.status();
  EXPECT_EQ(absl::BytesToHexString(*one),
            "55ac046e56e3089fec1691c22544b605f94185216dde0465e68b9d57c20dacbc"
            "49ca9cccf179b645991664b39d77ef317c71b845b1e30bd509112041d3a19783");
  absl::StatusOr<std::string> many =
      Pbkdf2Sha256("Password", "NaCl", 80000, 64);
  ASSERT_TRUE(many.ok()) << many.status();
  EXPECT_EQ(absl::BytesToHexString(*many),
            "4ddcd8f60b98be21830cee5ef22701f9641a4418d04c0414aeff08876b34ab56"
            "a1d425a1225833549adb841b51c9b3176a272bdebba1d078478f62b397f33c8d");
}

TEST(StoredHashTest, VerifiesAHandBuiltVector) {
  // Salt "NaCl" (base64 TmFDbA==), 80000 iterations, the first 32 bytes of
  // the RFC 7914 vector above, base64 from Python 3.11 base64.b64encode.
  const std::string stored =
      "pbkdf2-sha256$80000$TmFDbA==$TdzY9guYviGDDO5e8icB+"
      "WQaRBjQTAQUrv8Ih2s0q1Y=";
  absl::StatusOr<StoredHash> hash = ParseStoredHash(stored);
  ASSERT_TRUE(hash.ok()) << hash.status();
  EXPECT_EQ(hash->iterations, 80000);
  EXPECT_EQ(hash->salt, "NaCl");
  EXPECT_TRUE(VerifySecret(*hash, "Password"));
  EXPECT_FALSE(VerifySecret(*hash, "password"));
  EXPECT_FALSE(VerifySecret(*hash, ""));
  EXPECT_EQ(FormatStoredHash(*hash), stored);
}

TEST(StoredHashTest, HashSecretRoundTripsWithFreshSalts) {
  absl::StatusOr<std::string> a = HashSecret("s3cret", kMinHashIterations);
  absl::StatusOr<std::string> b = HashSecret("s3cret", kMinHashIterations);
  ASSERT_TRUE(a.ok() && b.ok());
  EXPECT_THAT(*a, MatchesRegex("pbkdf2-sha256\\$10000\\$[A-Za-z0-9+/=]+\\$"
                               "[A-Za-z0-9+/=]+"));
  EXPECT_NE(*a, *b);  // different salts
  EXPECT_THAT(*a, Not(HasSubstr("s3cret")));
  absl::StatusOr<StoredHash> parsed = ParseStoredHash(*a);
  ASSERT_TRUE(parsed.ok());
  EXPECT_EQ(parsed->salt.size(), 16u);
  EXPECT_EQ(parsed->key.size(), 32u);
  EXPECT_TRUE(VerifySecret(*parsed, "s3cret"));
  EXPECT_FALSE(VerifySecret(*parsed, "s3cret "));
}

TEST(StoredHashTest, BadFormsAreRefusedWithoutEchoingThem) {
  for (const std::string text :
       {"", "s3cret", "sha256$1$c2FsdA==$a2V5", "pbkdf2-sha256$x$c2FsdA==$a2V5",
        "pbkdf2-sha256$0$c2FsdA==$a2V5", "pbkdf2-sha256$10$!!$a2V5",
        "pbkdf2-sha256$10$c2FsdA==$", "pbkdf2-sha256$10$c2FsdA==$a2V5$more"}) {
    absl::StatusOr<StoredHash> hash = ParseStoredHash(text);
    ASSERT_FALSE(hash.ok()) << text;
    EXPECT_EQ(hash.status().code(), absl::StatusCode::kInvalidArgument);
    if (!text.empty()) {
      EXPECT_THAT(std::string(hash.status().message()), Not(HasSubstr(text)));
    }
  }
}

TEST(SecretCheckTest, RefusesWeakHashesAndCachesAnswers) {
  absl::StatusOr<std::string> weak = HashSecret("pw", kMinHashIterations - 1);
  ASSERT_TRUE(weak.ok());
  absl::StatusOr<std::unique_ptr<SecretCheck>> refused =
      SecretCheck::Create(*weak);
  ASSERT_FALSE(refused.ok());
  EXPECT_THAT(std::string(refused.status().message()),
              HasSubstr("below the floor"));

  absl::StatusOr<std::string> stored = HashSecret("pw", kMinHashIterations);
  ASSERT_TRUE(stored.ok());
  absl::StatusOr<std::unique_ptr<SecretCheck>> check =
      SecretCheck::Create(*stored);
  ASSERT_TRUE(check.ok()) << check.status();
  // Twice each: the second answer comes from the cache and must agree.
  for (int i = 0; i < 2; ++i) {
    EXPECT_TRUE((*check)->Matches("pw"));
    EXPECT_FALSE((*check)->Matches("pw2"));
    EXPECT_FALSE((*check)->Matches(""));
  }
}

// A clock the test moves by hand.
struct FakeClock {
  absl::Time now = absl::FromUnixSeconds(1764577800);
  std::function<absl::Time()> Fn() {
    return [this] { return now; };
  }
};

TEST(SecretCheckTest, FreshWrongSecretsCostAtMostTheBurstThenOnePerRefill) {
  absl::StatusOr<std::string> stored = HashSecret("pw", kMinHashIterations);
  ASSERT_TRUE(stored.ok());
  FakeClock clock;
  SecretCheckOptions options;
  options.burst = 3;
  options.refill = absl::Seconds(5);
  options.now = clock.Fn();
  absl::StatusOr<std::unique_ptr<SecretCheck>> check =
      SecretCheck::Create(*stored, options);
  ASSERT_TRUE(check.ok()) << check.status();
  const SecretCheck& c = **check;

  // 100 different wrong secrets with the clock standing still: the burst
  // (3) is hashed and refused, every later one is refused unhashed.
  int throttled = 0;
  for (int i = 0; i < 100; ++i) {
    bool hashed = true;
    const SecretVerdict v = c.Check(absl::StrCat("guess-", i), &hashed);
    ASSERT_NE(v, SecretVerdict::kMatch);
    if (v == SecretVerdict::kThrottled) {
      ++throttled;
      EXPECT_FALSE(hashed);
    }
  }
  EXPECT_EQ(c.hashes(), 3);
  EXPECT_EQ(throttled, 97);
  EXPECT_EQ(c.RetryAfter(), absl::Seconds(5));

  // A guess already refused is refused again from the cache, unthrottled.
  EXPECT_EQ(c.Check("guess-0"), SecretVerdict::kMismatch);
  EXPECT_EQ(c.hashes(), 3);

  // 12 s later: two more runs were earned (one per 5 s), no more.
  clock.now += absl::Seconds(12);
  EXPECT_EQ(c.Check("later-1"), SecretVerdict::kMismatch);
  EXPECT_EQ(c.Check("later-2"), SecretVerdict::kMismatch);
  EXPECT_EQ(c.Check("later-3"), SecretVerdict::kThrottled);
  EXPECT_EQ(c.hashes(), 5);
  EXPECT_EQ(c.RetryAfter(), absl::Seconds(3));  // 15 s after the flood

  // The right secret, new to this object, waits for the bucket like any
  // other unverified secret; once it has been verified it is never
  // throttled, and costs no further run.
  EXPECT_EQ(c.Check("pw"), SecretVerdict::kThrottled);
  clock.now += absl::Seconds(3);
  EXPECT_EQ(c.Check("pw"), SecretVerdict::kMatch);
  EXPECT_EQ(c.hashes(), 6);
  // The right secret gave its unit back: one more guess is hashed, then
  // the bucket is empty again.
  EXPECT_EQ(c.Check("another-guess"), SecretVerdict::kMismatch);
  EXPECT_EQ(c.Check("yet-another-guess"), SecretVerdict::kThrottled);
  for (int i = 0; i < 10; ++i) EXPECT_EQ(c.Check("pw"), SecretVerdict::kMatch);
  EXPECT_EQ(c.hashes(), 7);
}

TEST(SecretCheckTest, RefusedCacheForgetsTheOldestFirst) {
  absl::StatusOr<std::string> stored = HashSecret("pw", kMinHashIterations);
  ASSERT_TRUE(stored.ok());
  FakeClock clock;
  SecretCheckOptions options;
  options.burst = 1;
  options.refill = absl::Seconds(1);
  options.max_refused = 2;
  options.now = clock.Fn();
  absl::StatusOr<std::unique_ptr<SecretCheck>> check =
      SecretCheck::Create(*stored, options);
  ASSERT_TRUE(check.ok());
  const SecretCheck& c = **check;
  for (const char* guess : {"a", "b", "c"}) {
    EXPECT_EQ(c.Check(guess), SecretVerdict::kMismatch);
    clock.now += absl::Seconds(1);
  }
  EXPECT_EQ(c.hashes(), 3);
  // "b" and "c" are remembered; "a" was forgotten and costs a run again.
  EXPECT_EQ(c.Check("c"), SecretVerdict::kMismatch);
  EXPECT_EQ(c.Check("b"), SecretVerdict::kMismatch);
  EXPECT_EQ(c.hashes(), 3);
  EXPECT_EQ(c.Check("a"), SecretVerdict::kMismatch);
  EXPECT_EQ(c.hashes(), 4);
}

TEST(SecretCheckTest, ConcurrentFreshSecretsNeverExceedTheBurst) {
  absl::StatusOr<std::string> stored = HashSecret("pw", kMinHashIterations);
  ASSERT_TRUE(stored.ok());
  FakeClock clock;  // never moves: no refill during the test
  SecretCheckOptions options;
  options.burst = 4;
  options.now = clock.Fn();
  absl::StatusOr<std::unique_ptr<SecretCheck>> check =
      SecretCheck::Create(*stored, options);
  ASSERT_TRUE(check.ok());
  std::vector<std::thread> threads;
  for (int t = 0; t < 8; ++t) {
    threads.emplace_back([&, t] {
      for (int i = 0; i < 25; ++i) {
        (*check)->Check(absl::StrCat("thread-", t, "-guess-", i));
      }
    });
  }
  for (std::thread& thread : threads) thread.join();
  EXPECT_EQ((*check)->hashes(), 4);
}

TEST(TokenTest, FreshTokensHaveTheDocumentedShape) {
  absl::StatusOr<NewToken> a = MakeToken();
  absl::StatusOr<NewToken> b = MakeToken();
  ASSERT_TRUE(a.ok() && b.ok());
  EXPECT_THAT(a->token, MatchesRegex("plb_[0-9a-f]{12}_[0-9a-f]{64}"));
  EXPECT_EQ(a->token.substr(4, 12), a->id);
  EXPECT_NE(a->token, b->token);
  EXPECT_EQ(TokenId(a->token), a->id);
  EXPECT_EQ(TokenId("plb_short_abc"), std::nullopt);
  EXPECT_EQ(TokenId(a->token.substr(1)), std::nullopt);
  EXPECT_EQ(TokenId(absl::StrCat(a->token, "0")), std::nullopt);
  EXPECT_EQ(TokenId(absl::AsciiStrToUpper(a->token)), std::nullopt);
}

TEST(MaskSecretsTest, TokensKeepTheirIdAndLoseTheirSecret) {
  absl::StatusOr<NewToken> token = MakeToken();
  ASSERT_TRUE(token.ok());
  const std::string secret = token->token.substr(17);
  const std::string text = absl::StrCat("sent ", token->token, " twice");
  ASSERT_TRUE(MayHoldSecret(text));
  const std::string masked = MaskSecrets(text);
  EXPECT_EQ(masked, absl::StrCat("sent plb_", token->id, "_[masked] twice"));
  EXPECT_THAT(masked, Not(HasSubstr(secret)));
}

}  // namespace
}  // namespace plumbline::daemon
