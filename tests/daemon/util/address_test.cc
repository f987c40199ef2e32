// File: tests/daemon/util/address_test.cc
#include "daemon/util/address.h"

#include "gtest/gtest.h"

namespace plumbline::daemon {
namespace {

TEST(BoundAddressTest, HostKeepsTheBoundPort) {
  EXPECT_EQ(BoundAddress("127.0.0.1:0", 41234), "127.0.0.1:41234");
  EXPECT_EQ(BoundAddress("[::1]:0", 41234), "[::1]:41234");
  EXPECT_EQ(BoundAddress("localhost:7390", 7390), "localhost:7390");
}

TEST(BoundAddressTest, UnixSocketsKeepTheirPath) {
  // gRPC reports port 1 for a Unix socket.
  EXPECT_EQ(BoundAddress("unix:/run/plumbline/plumbd.sock", 1),
            "unix:/run/plumbline/plumbd.sock");
  EXPECT_EQ(BoundAddress("unix:relative.sock", 1), "unix:relative.sock");
  EXPECT_EQ(BoundAddress("unix-abstract:plumbd", 1), "unix-abstract:plumbd");
}

}  // namespace
}  // namespace plumbline::daemon
