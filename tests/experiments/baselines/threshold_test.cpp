#include "experiments/baselines/threshold.h"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdlib>
#include <fstream>
#include <string>

#include "phantoms/image_ops.h"
#include "phantoms/nifti_io.h"
#include "phantoms/phantom.h"
#include "phantoms/random.h"
#include "phantoms/user_error.h"
#include "phantoms/voids.h"

namespace frugal::baselines {
namespace {

std::string temp_path(const std::string& name) { return ::testing::TempDir() + "/" + name; }

// A lung-like test image in HU with a quarter of its field set exactly to -950, so that the strict
// < of the threshold is tested (software packages differ: common practice, no source), the rest
// drawn around it.
struct Lung {
  FloatImage image;
  LabelImage mask;
};
Lung random_lung(const Shape& shape, std::uint64_t seed) {
  Lung lung{FloatImage(centred_geometry(shape, {0.7, 0.7, 1.5})), LabelImage(centred_geometry(shape, {0.7, 0.7, 1.5}))};
  RandomStream random(seed);
  for (std::size_t v = 0; v < lung.image.size(); ++v) {
    const double u = random.uniform();
    lung.image.data()[v] = u < 0.25 ? -950.0F : static_cast<float>(random.uniform(-1010.0, -880.0));
    lung.mask.data()[v] = random.uniform() < 0.7 ? (random.uniform() < 0.5 ? 1 : 2) : 0;
  }
  return lung;
}

// RA-950 = 100 * #{lung voxels with HU < -950} / #{lung voxels} (Gevenois et al. 1995, Am J Respir
// Crit Care Med 152: 653-657), computed by NumPy (Debian python3-numpy, nibabel) on the same NIfTI
// files. The counts must be equal, not close.
TEST(Threshold, EqualsNumpyCountOnNiftiFiles) {
  const Lung lung = random_lung({37, 29, 11}, 5);
  const std::string image_path = temp_path("lung.nii.gz"), mask_path = temp_path("lung_mask.nii.gz"),
                    out_path = temp_path("lung_counts.txt");
  write_nifti(lung.image, image_path);
  write_nifti(lung.mask, mask_path);
  const std::string command = std::string(FRUGAL_PYTHON) +
                              " -c \"import sys, numpy as np, nibabel as nib;"
                              " img = np.asarray(nib.load(sys.argv[1]).dataobj);"
                              " field = np.asarray(nib.load(sys.argv[2]).dataobj) != 0;"
                              " below = (img < -950.0) & field;"
                              " at = (img == -950.0) & field;"
                              " open(sys.argv[3], 'w').write('%d %d %d' % (below.sum(), field.sum(), at.sum()))\" " +
                              image_path + " " + mask_path + " " + out_path;
  ASSERT_EQ(std::system(command.c_str()), 0) << command;
  std::size_t below = 0, field = 0, at_threshold = 0;
  std::ifstream(out_path) >> below >> field >> at_threshold;
  EXPECT_GT(at_threshold, 500U) << "the file must hold voxels exactly at -950 HU";

  // Read back through frugal's own reader, as a user's files would be.
  const ThresholdResult result = threshold_densitometry(read_nifti_image(image_path), read_nifti_labels(mask_path));
  EXPECT_EQ(result.below_count, below);
  EXPECT_EQ(result.field_count, field);
  EXPECT_DOUBLE_EQ(result.fraction, static_cast<double>(below) / static_cast<double>(field));
  std::size_t mapped = 0;
  for (std::uint8_t v : result.below.voxels()) mapped += v;
  EXPECT_EQ(mapped, below);
}

// Strictly below: a voxel at exactly the threshold does not count (frugal's choice of strict <,
// as in the definition "HU < -950" of Gevenois et al. 1995; packages differ, no source).
TEST(Threshold, VoxelsAtTheThresholdDoNotCount) {
  FloatImage image(centred_geometry({4, 1, 1}, {1.0, 1.0, 1.0}));
  image.voxels() = {-951.0F, -950.0F, -949.0F, -1000.0F};
  const ThresholdResult result = threshold_densitometry(image);
  EXPECT_EQ(result.below_count, 2U);
  EXPECT_EQ(result.field_count, 4U);
  EXPECT_DOUBLE_EQ(result.fraction, 0.5);
  ThresholdOptions options;
  options.threshold_hu = -949.0;
  EXPECT_EQ(threshold_densitometry(image, options).below_count, 3U);
}

// The voids generator records densitometry() of each subject as truth; the baseline, given the
// subject's label image as the field, must reproduce it exactly (same rule, same precision).
TEST(Threshold, EqualsVoidsTruthOnVoidsSubjects) {
  for (int dims : {2, 3}) {
    ScenarioOptions scenario = default_scenario(Family::voids);
    scenario.geometry.dims = dims;
    scenario.geometry.size_3d = {40, 40, 24};
    for (int subject = 0; subject < 6; ++subject) {
      const Subject s = generate_subject(scenario, 3, subject);
      const ThresholdResult result = threshold_densitometry(s.image, s.labels);
      EXPECT_EQ(result.fraction, s.truth.densitometry) << dims << "D subject " << subject;
      EXPECT_EQ(result.fraction, densitometry(s.image, s.labels, scenario.voids.threshold_hu));
    }
  }
}

TEST(Threshold, RejectsMismatchedMaskAndBadThreshold) {
  const FloatImage image(centred_geometry({8, 8, 4}, {1.0, 1.0, 1.0}), -900.0F);
  const LabelImage mask(centred_geometry({8, 8, 3}, {1.0, 1.0, 1.0}), 1);
  EXPECT_THROW(threshold_densitometry(image, mask), UserError);
  ThresholdOptions options;
  options.threshold_hu = std::nan("");
  EXPECT_THROW(threshold_densitometry(image, options), UserError);
  EXPECT_NE(options.validate().find("threshold_hu"), std::string::npos);
  // An empty field gives a fraction of 0, not a division by zero.
  EXPECT_EQ(threshold_densitometry(image, LabelImage(image.geometry(), 0)).fraction, 0.0);
}

}  // namespace
}  // namespace frugal::baselines
