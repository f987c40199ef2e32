// File: tests/daemon/review/dossier_store_test.cc
//
// The dossier files of a set: Jobs lists the job numbers of DIR/SET/job-N.json
// and nothing else. The names are short (held inside the std::string) and
// long (on the heap), so a name read after its path is gone shows in the
// sanitizer tree either way.
#include "daemon/review/dossier_store.h"

#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "tests/testing/process.h"
#include "tests/testing/status_matchers.h"

namespace plumbline::daemon {
namespace {

using ::testing::ElementsAre;

TEST(DossierStoreTest, JobsListsTheJobNumbersOfTheSetsJsonFiles) {
  testing::TempDir dir;
  std::filesystem::create_directory(dir.File("courier"));
  for (const char* name :
       {"job-12.json", "job-3.json", "job-123456789012.json", "job-3.html",
        "job-x.json", "notes.txt", "job-.json"}) {
    std::ofstream(dir.File(std::string("courier/") + name)) << "{}";
  }
  DossierStore store(dir.path());
  ASSERT_OK_AND_ASSIGN(std::vector<int64_t> jobs, store.Jobs("courier"));
  EXPECT_THAT(jobs, ElementsAre(3, 12, 123456789012));
  // A set with no dossiers yet has no jobs.
  ASSERT_OK_AND_ASSIGN(jobs, store.Jobs("depot"));
  EXPECT_TRUE(jobs.empty());
}

}  // namespace
}  // namespace plumbline::daemon
