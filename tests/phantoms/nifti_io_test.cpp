#include "phantoms/nifti_io.h"

#include <gtest/gtest.h>
#include <sys/stat.h>
#include <zlib.h>

#include <cmath>
#include <cstdint>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <limits>
#include <string>
#include <vector>

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
  const std::string command =
      std::string(FRUGAL_PYTHON) +
      " -c \"import nibabel as nib, numpy as np; d = np.arange(24, dtype=np.int16).reshape(4,3,2);"
      " im = nib.Nifti1Image(d, np.diag([2.0, 2.0, 3.0, 1.0])); im.header.set_slope_inter(0.5, -10);"
      " nib.save(im, '" +
      path + "')\"";
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

std::vector<char> file_bytes(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  return {std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>()};
}

void write_bytes(const std::string& path, const std::vector<char>& bytes) {
  std::ofstream(path, std::ios::binary).write(bytes.data(), static_cast<std::streamsize>(bytes.size()));
}

std::string read_message(const std::string& path) {
  try {
    read_nifti_image(path);
  } catch (const UserError& error) {
    return error.what();
  }
  return "";
}

// One field of a NIfTI-1 header changed. Offsets and rules: the NIfTI-1 standard header nifti1.h
// (struct nifti_1_header and its comments on dim, pixdim, vox_offset and magic).
struct HeaderPatch {
  const char* name;
  std::size_t offset;
  enum { int16, int32, float32, text } type;
  double value;
  const char* text_value;
  const char* expected;
};

class BadHeaders : public ::testing::TestWithParam<HeaderPatch> {};

TEST_P(BadHeaders, AreRefusedWithTheFieldAndWhatIsAllowed) {
  const HeaderPatch& p = GetParam();
  // One file per case: ctest runs the cases in parallel processes.
  const std::string original = temp_path(std::string("header-original-") + p.name + ".nii");
  write_nifti(ramp({8, 6, 4}), original);
  std::vector<char> bytes = file_bytes(original);
  ASSERT_GT(bytes.size(), 352U);
  if (p.type == HeaderPatch::int16) {
    const auto v = static_cast<std::int16_t>(p.value);
    std::memcpy(&bytes[p.offset], &v, sizeof v);
  } else if (p.type == HeaderPatch::int32) {
    const auto v = static_cast<std::int32_t>(p.value);
    std::memcpy(&bytes[p.offset], &v, sizeof v);
  } else if (p.type == HeaderPatch::float32) {
    const auto v = static_cast<float>(p.value);
    std::memcpy(&bytes[p.offset], &v, sizeof v);
  } else {
    std::memcpy(&bytes[p.offset], p.text_value, 4);
  }
  const std::string path = temp_path(std::string("header-") + p.name + ".nii");
  write_bytes(path, bytes);
  const std::string message = read_message(path);
  ASSERT_FALSE(message.empty()) << "accepted " << p.name;
  EXPECT_NE(message.find(path), std::string::npos) << message;
  EXPECT_NE(message.find(p.expected), std::string::npos) << message << "\nexpected: " << p.expected;
  EXPECT_NE(message.find("allowed:"), std::string::npos) << message;
}

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

INSTANTIATE_TEST_SUITE_P(
    Nifti1Standard, BadHeaders,
    ::testing::Values(
        HeaderPatch{"sizeof_hdr", 0, HeaderPatch::int32, 540, "", "sizeof_hdr is 540; allowed: 348"},
        HeaderPatch{"magic", 344, HeaderPatch::text, 0, "xyz\0", "magic is 'xyz'; allowed: 'n+1'"},
        HeaderPatch{"magic_pair", 344, HeaderPatch::text, 0, "ni1\0",
                    "magic is 'ni1' (the header of a .hdr/.img pair)"},
        HeaderPatch{"dim0_high", 40, HeaderPatch::int16, 9, "", "dim[0] is 9; allowed: 1..7"},
        HeaderPatch{"dim0_zero", 40, HeaderPatch::int16, 0, "", "dim[0] is 0; allowed: 1..7"},
        HeaderPatch{"dim_negative", 44, HeaderPatch::int16, -3, "", "dim[2] is -3; allowed: a positive length"},
        HeaderPatch{"datatype_unknown", 70, HeaderPatch::int16, 999, "", "datatype 999 is not a NIfTI-1 data type"},
        HeaderPatch{"bitpix_wrong", 72, HeaderPatch::int16, 64, "",
                    "bitpix is 64 but datatype FLOAT32 has 32 bits per voxel"},
        HeaderPatch{"pixdim_nan", 80, HeaderPatch::float32, kNaN, "", "pixdim[1] (voxel spacing) is nan"},
        HeaderPatch{"pixdim_zero", 84, HeaderPatch::float32, 0.0, "", "pixdim[2] (voxel spacing) is 0"},
        HeaderPatch{"pixdim_negative", 88, HeaderPatch::float32, -1.0, "", "pixdim[3] (voxel spacing) is -1"},
        // The library would read the data from byte 348 (4 bytes early) for these two.
        HeaderPatch{"vox_offset_nan", 108, HeaderPatch::float32, kNaN, "",
                    "vox_offset is nan; allowed: a byte offset of at least 352"},
        HeaderPatch{"vox_offset_small", 108, HeaderPatch::float32, 0.0, "", "vox_offset is 0"},
        HeaderPatch{"vox_offset_huge", 108, HeaderPatch::float32, 1e30, "", "vox_offset is"},
        // A datatype smaller than the data written: the file holds more bytes than the header says.
        // frugal writes sform_code 1, so srow_x (offset 280) is the transform in use.
        HeaderPatch{"sform_nan", 280, HeaderPatch::float32, kNaN, "", "the sform voxel-to-mm transform is not finite"},
        HeaderPatch{"datatype_too_small", 70, HeaderPatch::int16, 2, "", "bitpix is 32 but datatype UINT8"}),
    [](const ::testing::TestParamInfo<HeaderPatch>& param_info) { return std::string(param_info.param.name); });

TEST(Nifti, SizeMustMatchTheHeader) {
  // datatype and bitpix both changed to uint8: consistent, but 4x fewer bytes than the file holds.
  const std::string original = temp_path("size-original.nii");
  write_nifti(ramp({8, 6, 4}), original);
  std::vector<char> bytes = file_bytes(original);
  const std::int16_t datatype = 2;
  const std::int16_t bitpix = 8;
  std::memcpy(&bytes[70], &datatype, 2);
  std::memcpy(&bytes[72], &bitpix, 2);
  write_bytes(temp_path("size-uint8.nii"), bytes);
  const std::string message = read_message(temp_path("size-uint8.nii"));
  EXPECT_NE(
      message.find("holds " + std::to_string(bytes.size()) +
                   " bytes but the header (dims and datatype UINT8) accounts for " + std::to_string(352 + 8 * 6 * 4)),
      std::string::npos)
      << message;
  // A 4th dimension of length 1 is read as 3D (NIfTI-1 allows trailing dimensions of 1).
  bytes = file_bytes(original);
  const std::int16_t four = 4;
  const std::int16_t one = 1;
  std::memcpy(&bytes[40], &four, 2);
  std::memcpy(&bytes[48], &one, 2);
  write_bytes(temp_path("size-4d.nii"), bytes);
  EXPECT_EQ(read_nifti_image(temp_path("size-4d.nii")).shape(), (Shape{8, 6, 4}));
  // frugal reads 2D and 3D images only (common practice, no source).
  const std::int16_t two = 2;
  std::memcpy(&bytes[48], &two, 2);
  write_bytes(temp_path("size-4d-long.nii"), bytes);
  EXPECT_NE(
      read_message(temp_path("size-4d-long.nii")).find("has 4 dimensions (dim[4] is 2); allowed: 2D and 3D images"),
      std::string::npos)
      << read_message(temp_path("size-4d-long.nii"));
}

TEST(Nifti, NonFiniteVoxelsAreRefusedWithTheirCountAndFirstPlace) {
  // The NIfTI C library's loader turns NaN into 0 silently; frugal must see the stored values.
  FloatImage image = ramp({8, 6, 4});
  image.at(3, 2, 1) = std::numeric_limits<float>::quiet_NaN();
  image.at(7, 5, 3) = std::numeric_limits<float>::infinity();
  for (const char* name : {"non-finite.nii", "non-finite.nii.gz"}) {
    write_nifti(image, temp_path(name));
    const std::string message = read_message(temp_path(name));
    // Common practice, no source: 2 of 192 voxels, the first in x-fastest order at (3, 2, 1).
    EXPECT_NE(message.find("2 of 192 voxels are not finite (NaN or infinite), the first at voxel (3, 2, 1); allowed: "
                           "finite intensities"),
              std::string::npos)
        << message;
  }
  FloatImage all_nan = ramp({4, 4, 1});
  for (float& value : all_nan.voxels()) value = std::numeric_limits<float>::quiet_NaN();
  write_nifti(all_nan, temp_path("all-nan.nii.gz"));
  EXPECT_NE(read_message(temp_path("all-nan.nii.gz")).find("16 of 16 voxels"), std::string::npos);
}

// frugal reads the voxel bytes itself, so byte order must follow the header (NIfTI-1 standard:
// readers detect a swapped file from sizeof_hdr); nibabel writes a big-endian file here.
TEST(Nifti, BigEndianFilesReadTheSameValues) {
  const std::string path = temp_path("big-endian.nii");
  const std::string command = std::string(FRUGAL_PYTHON) +
                              " -c \"import nibabel as nib, numpy as np; d = np.arange(24, dtype='>i2').reshape(4,3,2);"
                              " h = nib.Nifti1Header(endianness='>'); h.set_data_dtype('>i2');"
                              " nib.save(nib.Nifti1Image(d, np.eye(4), h), '" +
                              path + "')\"";
  ASSERT_EQ(std::system(command.c_str()), 0) << command;
  const std::vector<char> bytes = file_bytes(path);
  ASSERT_EQ(bytes[0], 0) << "nibabel did not write a big-endian header";  // 348 big-endian starts with 0
  const FloatImage image = read_nifti_image(path);
  ASSERT_EQ(image.shape(), (Shape{4, 3, 2}));
  EXPECT_FLOAT_EQ(image.at(1, 2, 1), 6 + 4 + 1);  // d[i,j,k] = 6i + 2j + k, as nibabel stores it
}

TEST(Nifti, OnlyRegularFilesWithNiftiNamesAreOpened) {
  const std::string pipe = temp_path("pipe.nii");
  fs::remove(pipe);
  ASSERT_EQ(mkfifo(pipe.c_str(), 0600), 0);
  // Common practice, no source.
  EXPECT_NE(read_message(pipe).find("pipe.nii: not a regular file (a pipe, device or socket); allowed: a NIfTI-1 file"),
            std::string::npos)
      << read_message(pipe);
  fs::remove(pipe);
  fs::create_directories(temp_path("folder.nii"));
  EXPECT_NE(read_message(temp_path("folder.nii")).find("is a folder, not a file"), std::string::npos);
  EXPECT_NE(read_message(temp_path("missing.nii")).find("missing.nii: no such file; allowed: a NIfTI-1 file"),
            std::string::npos);
  write_nifti(ramp({4, 4, 1}), temp_path("named.nii"));
  fs::copy_file(temp_path("named.nii"), temp_path("named.img"), fs::copy_options::overwrite_existing);
  EXPECT_NE(
      read_message(temp_path("named.img")).find("not a NIfTI file name; allowed: a NIfTI-1 file (.nii or .nii.gz)"),
      std::string::npos);
}

}  // namespace
}  // namespace frugal
