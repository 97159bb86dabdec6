#include "experiments/plan/target.h"

#include <gtest/gtest.h>

#include "phantoms/user_error.h"

namespace frugal::plan {
namespace {

TEST(Target, ReadsErrorAndAgreementTargets) {
  const Target mae = parse_target("count.mae<=0.8", "--target");
  EXPECT_EQ(mae.test_set, "test");
  EXPECT_EQ(mae.quantity, "count");
  EXPECT_EQ(mae.metric, "mae");
  EXPECT_FALSE(mae.at_least);
  EXPECT_DOUBLE_EQ(mae.value, 0.8);
  EXPECT_DOUBLE_EQ(mae.error_target(), 0.8);
  EXPECT_TRUE(mae.met_by(0.8));
  EXPECT_FALSE(mae.met_by(0.81));

  const Target icc = parse_target("decorrelated:affected_fraction.icc_a1>=0.9", "--target");
  EXPECT_EQ(icc.test_set, "decorrelated");
  EXPECT_EQ(icc.quantity, "affected_fraction");
  EXPECT_TRUE(icc.at_least);
  EXPECT_NEAR(icc.error_target(), 0.1, 1e-15);  // the shortfall 1 − ICC
  EXPECT_NEAR(icc.error_of(0.75), 0.25, 1e-15);
  EXPECT_TRUE(icc.met_by(0.95));
}

TEST(Target, RefusesWhatItCannotMean) {
  for (const char* text : {"count.mae>=0.8", "count.icc_a1<=0.9", "count.mae<0.8", "count.mae", "mae<=0.8",
                           "count.mae<=abc", "count.mae<=", "count.mae<=0", "count.mae<=nan", "count.icc_a1>=1.5",
                           "count.hours<=3", "train:count.mae<=1", "count.mae<=1>=2", ".mae<=1", "count.<=1"}) {
    try {
      parse_target(text, "--target");
      ADD_FAILURE() << text << " was accepted";
    } catch (const UserError& error) {
      const std::string message = error.what();
      EXPECT_NE(message.find("--target \"" + std::string(text) + "\""), std::string::npos) << message;
      EXPECT_NE(message.find("allowed:"), std::string::npos) << message;
    }
  }
}

}  // namespace
}  // namespace frugal::plan
