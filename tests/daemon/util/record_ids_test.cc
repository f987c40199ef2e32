// File: tests/daemon/util/record_ids_test.cc
//
// Made-up record ids: the prefix, the microsecond, the process tag and a
// count; two generators (two processes) in the same microsecond differ.
#include "daemon/util/record_ids.h"

#include <string>

#include "absl/container/flat_hash_set.h"
#include "absl/time/time.h"
#include "gmock/gmock.h"
#include "gtest/gtest.h"

namespace plumbline::daemon {
namespace {

using ::testing::MatchesRegex;

TEST(RecordIdGeneratorTest, IdsNameThePrefixTheTimeTheTagAndCountUp) {
  RecordIdGenerator ids(0x9f3a01c2);
  const absl::Time t = absl::FromUnixMicros(1764577800123456);
  EXPECT_EQ(ids.Next("courier", t), "courier-1764577800123456-9f3a01c2-1");
  EXPECT_EQ(ids.Next("courier", t), "courier-1764577800123456-9f3a01c2-2");
  absl::flat_hash_set<std::string> seen;
  for (int i = 0; i < 1000; ++i) {
    const std::string id = ids.Next("depot", t);
    EXPECT_THAT(id, MatchesRegex("depot-1764577800123456-9f3a01c2-[0-9]+"));
    EXPECT_TRUE(seen.insert(id).second) << id;
  }
}

TEST(RecordIdGeneratorTest, TwoGeneratorsInOneMicrosecondDoNotCollide) {
  // The situation of two plumbd (or two plumbctl runs) started in the same
  // microsecond: each draws its own tag. Equal tags have probability 2^-32
  // per pair; 20 generators make a collision about 1 in 2^24 runs.
  const absl::Time t = absl::FromUnixMicros(1764577800123456);
  absl::flat_hash_set<std::string> seen;
  for (int g = 0; g < 20; ++g) {
    RecordIdGenerator ids;
    EXPECT_TRUE(seen.insert(ids.Next("courier", t)).second);
  }
}

}  // namespace
}  // namespace plumbline::daemon
