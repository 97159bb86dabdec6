#include "phantoms/phantom_set_reader.h"

#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <string>

#include "phantoms/nifti_io.h"
#include "phantoms/phantom.h"
#include "phantoms/phantom_set.h"
#include "phantoms/scenario.h"
#include "phantoms/user_error.h"

namespace frugal {
namespace {

namespace fs = std::filesystem;

ScenarioOptions small_scenario() {
  ScenarioOptions scenario = default_scenario(Family::streaks);
  scenario.name = "reader-test";
  scenario.geometry.dims = 2;
  scenario.geometry.size_2d = {32, 32};
  return scenario;
}

std::string write_set(const std::string& name, int rescans) {
  PhantomSetOptions options;
  options.out_dir = ::testing::TempDir() + "/" + name;
  fs::remove_all(options.out_dir);
  options.count = 3;
  options.first = 10;
  options.seed = 9;
  options.rescans = rescans;
  options.preview_tiles = 0;
  write_phantom_set(small_scenario(), "reader-test.yaml", options);
  return options.out_dir;
}

TEST(PhantomSetReader, ReadsTheTruthOfEverySubjectAndRescan) {
  const std::string folder = write_set("with-rescans", 1);
  const PhantomSetIndex set = read_phantom_set(folder);
  ASSERT_EQ(set.rows().size(), 6U);
  EXPECT_TRUE(set.origin().known);
  EXPECT_EQ(set.origin().seed, 9U);
  for (int s = 10; s < 13; ++s)
    for (int rescan = 0; rescan <= 1; ++rescan) {
      const TruthRow* row = set.find(s, rescan);
      ASSERT_NE(row, nullptr);
      const Subject subject = generate_subject(small_scenario(), 9, s, rescan);
      // truth.csv writes the shortest decimals that read back exactly (text_format.h).
      EXPECT_EQ(row->count, subject.truth.count);
      EXPECT_EQ(row->burden_mm3, subject.truth.burden_mm3);
      EXPECT_EQ(row->affected_fraction, subject.truth.affected_fraction);
      EXPECT_EQ(row->family, "streaks");
      EXPECT_TRUE(std::isnan(row->densitometry));  // NA for streaks
      EXPECT_EQ(read_nifti_image(row->image_path).voxels(), subject.image.voxels());
      EXPECT_EQ(read_nifti_labels(row->labels_path).voxels(), subject.labels.voxels());
    }
  EXPECT_EQ(set.find(13, 0), nullptr);
  EXPECT_EQ(set.find(10, 2), nullptr);
}

TEST(PhantomSetReader, BadInputNamesTheFileAndLine) {
  try {
    read_phantom_set(::testing::TempDir() + "/no-such-set");
    FAIL();
  } catch (const UserError& error) {
    EXPECT_NE(std::string(error.what()).find("no such phantom set folder"), std::string::npos);
  }
  const std::string folder = write_set("broken", 0);
  std::ofstream(folder + "/truth.csv", std::ios::app)
      << "10,0,streaks,none,1,x,1,0,1,0.1,NA,1,10,0,NA,NA,a.nii.gz,b.nii.gz\n";
  try {
    read_phantom_set(folder);
    FAIL() << "a non-numeric count was accepted";
  } catch (const UserError& error) {
    // Line 1 is the version comment, 2 the header, 3-5 the subjects.
    EXPECT_NE(std::string(error.what()).find("truth.csv line 6, column count"), std::string::npos) << error.what();
  }
}

}  // namespace
}  // namespace frugal
