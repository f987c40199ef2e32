// File: tests/daemon/util/files_test.cc
//
// WriteFileAtomically: the whole new file or the old one, no .tmp left
// behind, errors naming the path.
#include "daemon/util/files.h"

#include <filesystem>
#include <string>

#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "tests/testing/process.h"
#include "tests/testing/status_matchers.h"

namespace plumbline::daemon {
namespace {

using ::plumbline::testing::StatusIs;
using ::testing::HasSubstr;
using testing::TempDir;

TEST(WriteFileAtomicallyTest, ReplacesTheFileAndLeavesNoTemporary) {
  TempDir dir;
  const std::string path = dir.File("out.csv");
  ASSERT_OK(WriteFileAtomically(path, "old\n"));
  ASSERT_OK(WriteFileAtomically(path, "new contents\n"));
  ASSERT_OK_AND_ASSIGN(std::string read, ReadFileToString(path));
  EXPECT_EQ(read, "new contents\n");
  EXPECT_FALSE(std::filesystem::exists(path + ".tmp"));
}

TEST(WriteFileAtomicallyTest, AMissingDirectoryIsAnErrorNamingThePath) {
  TempDir dir;
  const std::string path = dir.File("no/such/dir/out.csv");
  EXPECT_THAT(WriteFileAtomically(path, "x"),
              StatusIs(absl::StatusCode::kNotFound, HasSubstr(path + ".tmp")));
}

TEST(WriteFileAtomicallyTest, AFileWithoutADirectoryPartLandsHere) {
  TempDir dir;
  const std::filesystem::path before = std::filesystem::current_path();
  std::filesystem::current_path(dir.path());
  absl::Status written = WriteFileAtomically("plain.txt", "x");
  std::filesystem::current_path(before);
  ASSERT_OK(written);
  EXPECT_TRUE(std::filesystem::exists(dir.File("plain.txt")));
}

}  // namespace
}  // namespace plumbline::daemon
