#include "phantoms/nifti_io.h"

#include <gtest/gtest.h>

#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <string>

#include "phantoms/image_ops.h"
#include "phantoms/user_error.h"

namespace frugal {
namespace {

namespace fs = std::filesystem;

std::string temp_path(const std::string& name) { return ::testing::TempDir() + "/" + name; }

FloatImage ramp(const Shape& shape) {
  FloatImage image(centred_geometry(shape, {0.8, 1.25, 2.5}));
  for (int k = 0; k < shape.z; ++k)
    for (int j = 0; j < shape.y; ++j)
      for (int i = 0; i < shape.x; ++i) image.at(i, j, k) = static_cast<float>(i + 10 * j + 100 * k) + 0.25F;
  return image;
}

TEST(Nifti, RoundTripKeepsShapeSpacingOriginAndValues) {
  for (const char* name : {"ramp.nii", "ramp.nii.gz"}) {
    const FloatImage original = ramp({7, 5, 3});
    write_nifti(original, temp_path(name));
    const FloatImage back = read_nifti_image(temp_path(name));
    EXPECT_EQ(back.shape(), original.shape());
    for (std::size_t axis = 0; axis < 3; ++axis) {
      EXPECT_NEAR(back.geometry().spacing_mm[axis], original.geometry().spacing_mm[axis], 1e-6);
      EXPECT_NEAR(back.geometry().origin_mm[axis], original.geometry().origin_mm[axis], 1e-5);
    }
    EXPECT_EQ(back.voxels(), original.voxels());
    EXPECT_FALSE(fs::exists(temp_path(std::string(name).insert(4, ".partial")))) << "temporary file left behind";
  }
}

// nibabel is the field's reference reader: it must see the same shape, zooms, affine and values.
TEST(Nifti, NibabelReadsWhatFrugalWrites) {
  write_nifti(ramp({7, 5, 3}), temp_path("for-nibabel.nii.gz"));
  const std::string script =
      "import nibabel as nib, numpy as np, sys\n"
      "im = nib.load(sys.argv[1]); d = np.asarray(im.dataobj)\n"
      "assert d.shape == (7, 5, 3), d.shape\n"
      "assert np.allclose(im.header.get_zooms(), (0.8, 1.25, 2.5))\n"
      "i, j, k = np.indices(d.shape)\n"
      "assert np.array_equal(d, (i + 10*j + 100*k + 0.25).astype(np.float32))\n"
      "aff = np.diag([0.8, 1.25, 2.5, 1.0]); aff[:3, 3] = [-2.4, -2.5, -2.5]\n"
      "assert np.allclose(im.affine, aff, atol=1e-5), im.affine\n"
      "assert int(im.header['qform_code']) == 1 and int(im.header['sform_code']) == 1\n";
  const std::string script_path = temp_path("check_nibabel.py");
  std::ofstream(script_path) << script;
  const std::string command = std::string(FRUGAL_PYTHON) + " " + script_path + " " + temp_path("for-nibabel.nii.gz");
  EXPECT_EQ(std::system(command.c_str()), 0) << command;
}

// And frugal reads what nibabel writes, including int16 with a scale slope (NIfTI-1 standard).
TEST(Nifti, FrugalReadsScaledIntegersWrittenByNibabel) {
  const std::string path = temp_path("from-nibabel.nii.gz");
  const std::string command = std::string(FRUGAL_PYTHON) +
                              " -c \"import nibabel as nib, numpy as np; d = np.arange(24, dtype=np.int16).reshape(4,3,2);"
                              " im = nib.Nifti1Image(d, np.diag([2.0, 2.0, 3.0, 1.0])); im.header.set_slope_inter(0.5, -10);"
                              " nib.save(im, '" + path + "')\"";
  ASSERT_EQ(std::system(command.c_str()), 0) << command;
  const FloatImage image = read_nifti_image(path);
  ASSERT_EQ(image.shape(), (Shape{4, 3, 2}));
  EXPECT_NEAR(image.geometry().spacing_mm[2], 3.0, 1e-6);
  // nibabel stores array element d[i,j,k] = 6i + 2j + k at voxel (i, j, k).
  EXPECT_FLOAT_EQ(image.at(1, 2, 1), 0.5F * (6 + 4 + 1) - 10.0F);
}

TEST(Nifti, TruncatedAndCorruptFilesGiveClearErrors) {
  write_nifti(ramp({16, 16, 8}), temp_path("whole.nii"));
  write_nifti(ramp({16, 16, 8}), temp_path("whole.nii.gz"));
  for (const char* name : {"whole.nii", "whole.nii.gz"}) {
    const std::string cut = temp_path(std::string("cut-") + name);
    fs::copy_file(temp_path(name), cut, fs::copy_options::overwrite_existing);
    fs::resize_file(cut, fs::file_size(cut) / 2);
    try {
      read_nifti_image(cut);
      FAIL() << "accepted a truncated file " << cut;
    } catch (const UserError& error) {
      EXPECT_NE(std::string(error.what()).find(cut), std::string::npos) << error.what();
    }
  }
  const std::string junk = temp_path("junk.nii");
  std::ofstream(junk) << "this is not a NIfTI header";
  EXPECT_THROW(read_nifti_image(junk), UserError);
  EXPECT_THROW(read_nifti_image(temp_path("missing.nii.gz")), UserError);
  EXPECT_THROW(read_nifti_labels(temp_path("whole.nii")), UserError);  // floats are not labels
}

}  // namespace
}  // namespace frugal
