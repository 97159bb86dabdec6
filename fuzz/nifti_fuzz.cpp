// The NIfTI reader (phantoms/nifti_io.h): the bytes are written to a scratch .nii file and read
// back both as an image and as labels. Gzip bytes get a .nii.gz name, as the NIfTI library
// decompresses by name.
#include "fuzz/fuzz_input.h"
#include "phantoms/nifti_io.h"
#include "phantoms/user_error.h"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const bool gzip = size >= 2 && data[0] == 0x1f && data[1] == 0x8b;
  const std::string path = frugal::fuzz::write_scratch(data, size, gzip ? ".nii.gz" : ".nii");
  try {
    frugal::read_nifti_image(path);
  } catch (const frugal::UserError&) {
  }
  try {
    frugal::read_nifti_labels(path);
  } catch (const frugal::UserError&) {
  }
  return 0;
}
