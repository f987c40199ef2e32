// File: tests/daemon/scoring/set_registry_test.cc
#include "daemon/scoring/set_registry.h"

#include <filesystem>

#include "gmock/gmock.h"
#include "gtest/gtest.h"
#include "tests/testing/process.h"
#include "tests/testing/test_sets.h"

namespace plumbline::daemon {
namespace {

using testing::CourierSetJson;
using testing::DepotSetJson;
using ::testing::ElementsAre;
using ::testing::HasSubstr;
using testing::InvalidSetJson;
using testing::TempDir;
using testing::WriteTextFile;

class SetRegistryTest : public ::testing::Test {
 protected:
  void Write(const std::string& file, const std::string& json) {
    ASSERT_TRUE(WriteTextFile(dir_.File(file), json).ok());
  }
  // Reloads and returns the report; the log lines land in `log_`.
  ReloadReport Reload() {
    ::testing::internal::CaptureStderr();
    absl::StatusOr<ReloadReport> report = registry_.Reload();
    log_ = ::testing::internal::GetCapturedStderr();
    EXPECT_TRUE(report.ok()) << report.status();
    return report.ok() ? *report : ReloadReport();
  }
  std::string Version(const std::string& name) {
    PlanPtr plan = registry_.Find(name);
    return plan == nullptr ? "<not loaded>" : plan->version();
  }

  TempDir dir_;
  SetRegistry registry_{dir_.path()};
  std::string log_;
};

TEST_F(SetRegistryTest, LoadsEveryJsonFileAndIgnoresOthers) {
  Write("courier.json", CourierSetJson("courier", "v1"));
  Write("depot.json", DepotSetJson("depot", "d1"));
  Write("notes.txt", "not a set");
  const ReloadReport report = Reload();
  EXPECT_THAT(report.loaded, ElementsAre("courier", "depot"));
  EXPECT_THAT(registry_.Names(), ElementsAre("courier", "depot"));
  EXPECT_EQ(Version("courier"), "v1");
  EXPECT_EQ(registry_.Find("courier")->source(), dir_.File("courier.json"));
  EXPECT_EQ(registry_.Find("nope"), nullptr);
  EXPECT_THAT(log_, HasSubstr("level=info event=set_loaded set=courier "
                              "version=v1 file=" +
                              dir_.File("courier.json")));
}

TEST_F(SetRegistryTest, EntriesThatAreNotReadableFilesAreLoggedByName) {
  Write("courier.json", CourierSetJson("courier", "v1"));
  std::filesystem::create_directory(dir_.File("folder.json"));
  std::filesystem::create_symlink(dir_.File("missing-target"),
                                  dir_.File("dangling.json"));
  const ReloadReport report = Reload();
  EXPECT_THAT(registry_.Names(), ElementsAre("courier"));
  EXPECT_THAT(report.rejected_files, ElementsAre(dir_.File("dangling.json"),
                                                 dir_.File("folder.json")));
  EXPECT_THAT(log_, HasSubstr("level=error event=set_file_skipped file=" +
                              dir_.File("folder.json") +
                              " error=\"a directory, not a file\""));
  EXPECT_THAT(log_, HasSubstr("level=error event=set_file_skipped file=" +
                              dir_.File("dangling.json")));
}

TEST_F(SetRegistryTest, AFileReplacedByABrokenLinkKeepsItsSet) {
  Write("courier.json", CourierSetJson("courier", "v1"));
  Reload();
  std::filesystem::remove(dir_.File("courier.json"));
  std::filesystem::create_symlink(dir_.File("missing-target"),
                                  dir_.File("courier.json"));
  const ReloadReport report = Reload();
  EXPECT_EQ(Version("courier"), "v1");
  EXPECT_THAT(report.kept, ElementsAre("courier"));
}

TEST_F(SetRegistryTest, FileThatFailsValidationKeepsThePreviousVersion) {
  Write("courier.json", CourierSetJson("courier", "v1"));
  Reload();
  Write("courier.json", InvalidSetJson("courier", "v2"));
  const ReloadReport report = Reload();
  EXPECT_EQ(Version("courier"), "v1");
  EXPECT_THAT(report.kept, ElementsAre("courier"));
  EXPECT_THAT(report.rejected_files, ElementsAre(dir_.File("courier.json")));
  EXPECT_TRUE(report.unloaded.empty());
  EXPECT_THAT(log_, HasSubstr("level=error event=set_rejected file=" +
                              dir_.File("courier.json")));
  EXPECT_THAT(log_, HasSubstr("scale"));  // the validation error itself
}

TEST_F(SetRegistryTest, FileThatIsNotJsonKeepsThePreviousVersion) {
  Write("courier.json", CourierSetJson("courier", "v1"));
  Reload();
  Write("courier.json", "{\"name\": \"courier\", ");
  Reload();
  EXPECT_EQ(Version("courier"), "v1");
  EXPECT_THAT(
      log_, HasSubstr("event=set_rejected file=" + dir_.File("courier.json")));
}

TEST_F(SetRegistryTest, NewVersionReplacesTheOld) {
  Write("courier.json", CourierSetJson("courier", "v1"));
  Reload();
  Write("courier.json", CourierSetJson("courier", "v2"));
  const ReloadReport report = Reload();
  EXPECT_EQ(Version("courier"), "v2");
  EXPECT_THAT(report.loaded, ElementsAre("courier"));
  EXPECT_THAT(log_, HasSubstr("version=v2 previous_version=v1"));
}

TEST_F(SetRegistryTest, RemovedFileUnloadsItsSet) {
  Write("courier.json", CourierSetJson("courier", "v1"));
  Write("depot.json", DepotSetJson("depot", "d1"));
  Reload();
  std::filesystem::remove(dir_.File("depot.json"));
  const ReloadReport report = Reload();
  EXPECT_THAT(report.unloaded, ElementsAre("depot"));
  EXPECT_EQ(registry_.Find("depot"), nullptr);
  EXPECT_THAT(registry_.Names(), ElementsAre("courier"));
  EXPECT_THAT(log_, HasSubstr("level=info event=set_unloaded set=depot"));
}

TEST_F(SetRegistryTest, DuplicateNameRejectsTheSecondFile) {
  Write("a.json", CourierSetJson("courier", "v1"));
  Write("b.json", CourierSetJson("courier", "v2"));
  const ReloadReport report = Reload();
  EXPECT_EQ(Version("courier"), "v1");
  EXPECT_THAT(report.rejected_files, ElementsAre(dir_.File("b.json")));
  EXPECT_THAT(log_, HasSubstr("event=set_rejected file=" + dir_.File("b.json") +
                              " set=courier"));
  EXPECT_THAT(log_, HasSubstr("already provided by " + dir_.File("a.json")));
}

TEST_F(SetRegistryTest, DuplicateNameLeavesTheServingFileInPlace) {
  Write("b.json", CourierSetJson("courier", "v1"));
  Reload();
  // A new file that sorts first does not take the name from b.json.
  Write("a.json", CourierSetJson("courier", "v2"));
  const ReloadReport report = Reload();
  EXPECT_EQ(Version("courier"), "v1");
  EXPECT_EQ(registry_.Find("courier")->source(), dir_.File("b.json"));
  EXPECT_THAT(report.rejected_files, ElementsAre(dir_.File("a.json")));
  // Once b.json is gone, a.json provides the set.
  std::filesystem::remove(dir_.File("b.json"));
  Reload();
  EXPECT_EQ(Version("courier"), "v2");
}

TEST_F(SetRegistryTest, SnapshotTakenBeforeReloadStaysUsable) {
  Write("courier.json", CourierSetJson("courier", "v1", -1.5));
  Reload();
  PlanPtr before = registry_.Find("courier");
  Write("courier.json", CourierSetJson("courier", "v2", 0.5));
  Reload();
  EXPECT_EQ(Version("courier"), "v2");
  ASSERT_NE(before, nullptr);
  EXPECT_EQ(before->version(), "v1");
  EXPECT_EQ(before->intercept(), -1.5);
}

TEST_F(SetRegistryTest, UnreadableDirectoryFailsAndChangesNothing) {
  Write("courier.json", CourierSetJson("courier", "v1"));
  Reload();
  SetRegistry missing(dir_.File("no-such-dir"));
  ::testing::internal::CaptureStderr();
  absl::StatusOr<ReloadReport> report = missing.Reload();
  const std::string log = ::testing::internal::GetCapturedStderr();
  ASSERT_FALSE(report.ok());
  EXPECT_THAT(report.status().message(), HasSubstr("no-such-dir"));
  EXPECT_THAT(log, HasSubstr("event=reload_failed"));
  EXPECT_TRUE(missing.Names().empty());
}

}  // namespace
}  // namespace plumbline::daemon
