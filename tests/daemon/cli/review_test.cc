// File: tests/daemon/cli/review_test.cc
//
// plumbctl's review commands before anything is sent (usage errors) and
// their text forms of ShowVersion's and DiffVersions' messages.
#include "daemon/cli/review.h"

#include <sstream>

#include "gmock/gmock.h"
#include "gtest/gtest.h"

namespace plumbline::daemon {
namespace {

using ::testing::HasSubstr;

TEST(ReviewCommandTest, UsageErrorsBeforeAnythingIsSent) {
  EXPECT_TRUE(IsReviewCommand("diff"));
  EXPECT_FALSE(IsReviewCommand("audit"));
  ReviewCommand show;
  show.name = "show";
  EXPECT_EQ(CheckReviewFlags(show).code(), absl::StatusCode::kInvalidArgument);
  ReviewCommand dossier;
  dossier.name = "dossier";
  dossier.set = "courier";
  EXPECT_THAT(CheckReviewFlags(dossier).message(), HasSubstr("--out"));
  dossier.out = "d.html";
  EXPECT_TRUE(CheckReviewFlags(dossier).ok());
}

TEST(ReviewCommandTest, DiffPrintsEveryCoefficientAndFeature) {
  v1::VersionDiff d;
  d.mutable_from()->set_version("v1");
  d.mutable_to()->set_set("courier");
  d.mutable_to()->set_version("v2");
  v1::CoefficientChange* c = d.add_coefficients();
  c->set_label("distance_km");
  c->set_from_estimate(0.4);
  c->set_to_estimate(0.5);
  c->set_change(0.1);
  c->set_from_standard_error(0.05);
  c->set_change_in_standard_errors(2);
  c->set_status("changed");
  v1::FeatureChange* f = d.add_features();
  f->set_feature("building");
  f->set_status("changed");
  f->add_changes("levels added: locker");
  std::ostringstream out;
  PrintVersionDiff(d, out);
  EXPECT_THAT(out.str(), HasSubstr("set courier: v1 -> v2"));
  EXPECT_THAT(out.str(), HasSubstr("distance_km  0.4   0.05  0.5"));
  EXPECT_THAT(out.str(), HasSubstr("building: changed; levels added: locker"));
  EXPECT_THAT(out.str(), HasSubstr("score baseline PSI - (different bins)"));
}

}  // namespace
}  // namespace plumbline::daemon
