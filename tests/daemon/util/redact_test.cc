// File: tests/daemon/util/redact_test.cc
//
// Masking of secrets in log text (daemon/util/redact.h). Tokens made by the
// real token code are tested in tests/daemon/security/token_hash_test.cc.
#include "daemon/util/redact.h"

#include <string>

#include "absl/strings/str_cat.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"

namespace plumbline::daemon {
namespace {

using ::testing::HasSubstr;
using ::testing::Not;

TEST(MaskSecretsTest, BearerCredentialsAreMasked) {
  EXPECT_EQ(MaskSecrets("authorization: Bearer abc.def-123 rest"),
            "authorization: Bearer [masked] rest");
  EXPECT_EQ(MaskSecrets("BEARER   xyz"), "BEARER   [masked]");
  EXPECT_EQ(MaskSecrets("no secret here"), "no secret here");
  EXPECT_FALSE(MayHoldSecret("set=courier version=2026-11"));
}

TEST(MaskSecretsTest, TokenShapedTextKeepsItsIdOnly) {
  // The token shape of daemon/security/token_hash.h: plb_<12 hex>_<64 hex>.
  const std::string secret(64, 'e');
  const std::string text =
      absl::StrCat("token=", kTokenPrefix, "0123456789ab_", secret, ",");
  ASSERT_TRUE(MayHoldSecret(text));
  EXPECT_EQ(MaskSecrets(text), "token=plb_0123456789ab_[masked],");
  EXPECT_THAT(MaskSecrets(text), Not(HasSubstr(secret)));
}

}  // namespace
}  // namespace plumbline::daemon
