#pragma once
// NIfTI-1 files (.nii and .nii.gz) through the NIfTI reference C library. Spacing, origin and
// orientation travel as both qform and sform (scanner-anatomical, mm). Files are written under a
// temporary name and renamed, so a killed run never leaves a half-written file behind.

#include <string>

#include "phantoms/image.h"

namespace frugal {

void write_nifti(const FloatImage& image, const std::string& path);
void write_nifti(const LabelImage& image, const std::string& path);

// Any numeric NIfTI data type, scaled by scl_slope/scl_inter when set. Throws UserError naming
// the file for missing, truncated or unsupported files.
FloatImage read_nifti_image(const std::string& path);
// Integer data types only, values 0..255.
LabelImage read_nifti_labels(const std::string& path);

}  // namespace frugal
