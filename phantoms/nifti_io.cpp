#include "phantoms/nifti_io.h"

#include <nifti1_io.h>
#include <zlib.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <memory>
#include <vector>

#include "phantoms/regular_file.h"
#include "phantoms/user_error.h"

namespace frugal {

namespace {

struct NiftiDeleter {
  void operator()(nifti_image* image) const { nifti_image_free(image); }
};
using NiftiPointer = std::unique_ptr<nifti_image, NiftiDeleter>;

std::string partial_name(const std::string& path) {
  // Keep the extension last so that the library still picks the format (and compression).
  const std::string gz = ".nii.gz";
  if (path.size() > gz.size() && path.compare(path.size() - gz.size(), gz.size(), gz) == 0)
    return path.substr(0, path.size() - gz.size()) + ".partial" + gz;
  const std::string nii = ".nii";
  if (path.size() > nii.size() && path.compare(path.size() - nii.size(), nii.size(), nii) == 0)
    return path.substr(0, path.size() - nii.size()) + ".partial" + nii;
  throw UserError(path + ": NIfTI file names must end in .nii or .nii.gz");
}

std::uintmax_t decompressed_size(const std::string& path);
bool ends_with(const std::string& text, const std::string& suffix);

template <class Voxel>
void write_any(const Image<Voxel>& image, const std::string& path, int datatype) {
  const std::string temporary = partial_name(path);
  require_writable_output(path, OutputKind::file, "a new or regular NIfTI file");
  std::error_code examined;
  const auto temporary_type = std::filesystem::status(temporary, examined).type();
  if (temporary_type != std::filesystem::file_type::not_found && temporary_type != std::filesystem::file_type::regular)
    throw UserError(temporary + ": exists and is not a regular file; allowed: a regular file or none (frugal's "
                                "temporary name)");
  const Shape& shape = image.shape();
  int dims[8] = {shape.z > 1 ? 3 : 2, shape.x, shape.y, shape.z, 1, 1, 1, 1};
  NiftiPointer nim(nifti_make_new_nim(dims, datatype, 0));
  if (!nim) throw std::runtime_error(path + ": the NIfTI library could not allocate a header");
  const Geometry& g = image.geometry();
  nim->dx = nim->pixdim[1] = static_cast<float>(g.spacing_mm[0]);
  nim->dy = nim->pixdim[2] = static_cast<float>(g.spacing_mm[1]);
  nim->dz = nim->pixdim[3] = static_cast<float>(g.spacing_mm[2]);
  nim->xyz_units = NIFTI_UNITS_MM;
  mat44 affine{};
  for (int row = 0; row < 3; ++row) {
    for (int column = 0; column < 3; ++column)
      affine.m[row][column] = static_cast<float>(g.direction[static_cast<std::size_t>(row * 3 + column)] *
                                                 g.spacing_mm[static_cast<std::size_t>(column)]);
    affine.m[row][3] = static_cast<float>(g.origin_mm[static_cast<std::size_t>(row)]);
  }
  affine.m[3][3] = 1.0F;
  nim->sform_code = nim->qform_code = NIFTI_XFORM_SCANNER_ANAT;
  nim->sto_xyz = affine;
  nim->sto_ijk = nifti_mat44_inverse(affine);
  float dx = 0, dy = 0, dz = 0;
  nifti_mat44_to_quatern(affine, &nim->quatern_b, &nim->quatern_c, &nim->quatern_d, &nim->qoffset_x, &nim->qoffset_y,
                         &nim->qoffset_z, &dx, &dy, &dz, &nim->qfac);
  nim->qto_xyz = affine;
  nim->qto_ijk = nim->sto_ijk;
  std::snprintf(nim->descrip, sizeof(nim->descrip), "frugal phantom");
  if (nifti_set_filenames(nim.get(), temporary.c_str(), 0, 1) != 0)
    throw UserError(path + ": cannot name the NIfTI output file");
  nim->data = const_cast<Voxel*>(image.data());  // borrowed for the write only
  nifti_image_write(nim.get());
  nim->data = nullptr;
  // nifti_image_write returns nothing: a full disk leaves a short file, so count what was written.
  const std::uintmax_t expected = static_cast<std::uintmax_t>(nim->iname_offset) +
                                  static_cast<std::uintmax_t>(nim->nvox) * static_cast<std::uintmax_t>(nim->nbyper);
  std::error_code error;
  std::uintmax_t written = 0;
  try {
    if (std::filesystem::exists(temporary, error))
      written =
          ends_with(temporary, ".gz") ? decompressed_size(temporary) : std::filesystem::file_size(temporary, error);
  } catch (const UserError&) {
    written = 0;  // a cut gzip stream
  }
  if (written != expected) {
    std::filesystem::remove(temporary, error);
    throw UserError(path + ": writing the NIfTI file failed (the folder is not writable, the disk is full or the file "
                           "too large); nothing was replaced");
  }
  std::filesystem::rename(temporary, path, error);
  if (error) {
    std::filesystem::remove(temporary, error);
    throw UserError(path + ": cannot move the finished file into place: " + error.message());
  }
}

// Bytes a gzip file decompresses to; a damaged or cut stream is a UserError.
std::uintmax_t decompressed_size(const std::string& path) {
  gzFile file = gzopen(path.c_str(), "rb");
  if (file == nullptr) throw UserError(path + ": cannot open for reading");
  std::vector<char> buffer(1 << 16);
  std::uintmax_t total = 0;
  int got = 0;
  while ((got = gzread(file, buffer.data(), static_cast<unsigned>(buffer.size()))) > 0)
    total += static_cast<std::uintmax_t>(got);
  int status = Z_OK;
  const std::string reason = gzerror(file, &status);
  gzclose(file);
  if (got < 0 || (status != Z_OK && status != Z_STREAM_END))
    throw UserError(path + ": the compressed data is damaged or cut short after " + std::to_string(total) + " bytes (" +
                    reason + ")");
  return total;
}

bool ends_with(const std::string& text, const std::string& suffix) {
  return text.size() > suffix.size() && text.compare(text.size() - suffix.size(), suffix.size(), suffix) == 0;
}

const char* const kAllowedFile = "a NIfTI-1 file (.nii or .nii.gz)";

// The NIfTI-1 rules (nifti1.h) frugal relies on, checked on the raw header before the library
// derives anything from it: the library itself accepts a wrong magic, a bitpix that disagrees
// with the datatype, negative dims, NaN offsets and zero spacing.
void check_header(const nifti_1_header& header, const std::string& path) {
  const auto fail = [&path](const std::string& message) { throw UserError(path + ": NIfTI header: " + message); };
  if (header.sizeof_hdr != 348)
    fail("sizeof_hdr is " + std::to_string(header.sizeof_hdr) + "; allowed: 348 (NIfTI-1; NIfTI-2 is not read)");
  const std::string magic(header.magic, strnlen(header.magic, sizeof(header.magic)));
  if (magic != "n+1") {
    fail("magic is '" + magic + "'" + (magic == "ni1" ? " (the header of a .hdr/.img pair)" : std::string()) +
         "; allowed: 'n+1', a single .nii file");
  }
  if (header.dim[0] < 1 || header.dim[0] > 7)
    fail("dim[0] is " + std::to_string(header.dim[0]) + "; allowed: 1..7 dimensions");
  for (int axis = 1; axis <= header.dim[0]; ++axis)
    if (header.dim[axis] < 1)
      fail("dim[" + std::to_string(axis) + "] is " + std::to_string(header.dim[axis]) + "; allowed: a positive length");
  if (nifti_is_valid_datatype(header.datatype) == 0)
    fail("datatype " + std::to_string(header.datatype) +
         " is not a NIfTI-1 data type; allowed: " + "uint8, int8, int16, uint16, int32, float32, float64");
  int bytes_per_voxel = 0;
  int swap_size = 0;
  nifti_datatype_sizes(header.datatype, &bytes_per_voxel, &swap_size);
  if (header.bitpix != 8 * bytes_per_voxel)
    fail("bitpix is " + std::to_string(header.bitpix) + " but datatype " +
         std::string(nifti_datatype_string(header.datatype)) + " has " + std::to_string(8 * bytes_per_voxel) +
         " bits per voxel; allowed: bitpix matching the datatype");
  for (int axis = 1; axis <= std::min<int>(header.dim[0], 3); ++axis) {
    const float spacing = header.pixdim[axis];
    if (!std::isfinite(spacing) || spacing <= 0.0F)
      fail("pixdim[" + std::to_string(axis) + "] (voxel spacing) is " + std::to_string(spacing) +
           "; allowed: a finite spacing > 0");
  }
  // The library reads the data from byte 348 when vox_offset is below 352 or NaN, 4 bytes early.
  if (!std::isfinite(header.vox_offset) || header.vox_offset < 352.0F || header.vox_offset > 2147483647.0F)
    fail("vox_offset is " + std::to_string(header.vox_offset) +
         "; allowed: a byte offset of at least 352 (the data follows the 348-byte header and its 4-byte extension "
         "flag)");
}

// The voxel bytes as stored. The library's own loader replaces NaN and infinite floats with 0
// without a word, which would hide a broken image; frugal reads them itself and refuses them later.
void load_voxels(nifti_image& nim, const std::string& path) {
  const std::size_t bytes = nim.nvox * static_cast<std::size_t>(nim.nbyper);
  std::unique_ptr<void, decltype(&std::free)> data(std::malloc(bytes == 0 ? 1 : bytes), &std::free);
  if (!data) throw UserError(path + ": not enough memory for " + std::to_string(bytes) + " bytes of voxel data");
  znzFile file = znzopen(path.c_str(), "rb", ends_with(path, ".gz") ? 1 : 0);
  if (znz_isnull(file)) throw UserError(path + ": cannot open for reading");
  // fseek returns 0 and gzseek the new offset on success; both return -1 on failure.
  const bool read = znzseek(file, nim.iname_offset, SEEK_SET) >= 0 && znzread(data.get(), 1, bytes, file) == bytes;
  znzclose(file);
  if (!read) throw UserError(path + ": the image data cannot be read (truncated or corrupt file)");
  if (nim.byteorder != nifti_short_order() && nim.swapsize > 1)
    nifti_swap_Nbytes(bytes / static_cast<std::size_t>(nim.swapsize), nim.swapsize, data.get());
  std::free(nim.data);
  nim.data = data.release();  // owned by nim now: nifti_image_free releases it with free()
}

NiftiPointer read_checked(const std::string& path) {
  require_regular_file(path, kAllowedFile);
  if (!ends_with(path, ".nii") && !ends_with(path, ".nii.gz"))
    throw UserError(path + ": not a NIfTI file name; allowed: " + kAllowedFile);
  // frugal reports every problem itself; the library would also print its own lines on stderr.
  nifti_set_debug_level(0);
  int swapped = 0;
  const std::unique_ptr<nifti_1_header, decltype(&std::free)> raw(nifti_read_header(path.c_str(), &swapped, 0),
                                                                  &std::free);
  if (!raw)
    throw UserError(path + ": not a readable NIfTI-1 file (no complete 348-byte header); allowed: " + kAllowedFile);
  check_header(*raw, path);
  NiftiPointer header(nifti_image_read(path.c_str(), 0));
  if (!header) throw UserError(path + ": not a readable NIfTI-1 file (bad header); allowed: " + kAllowedFile);
  if (header->dim[0] < 2) throw UserError(path + ": has 1 dimension; allowed: 2D and 3D images");
  for (int axis = 4; axis <= header->dim[0]; ++axis)
    if (header->dim[axis] != 1)
      throw UserError(path + ": has " + std::to_string(header->dim[0]) + " dimensions (dim[" + std::to_string(axis) +
                      "] is " + std::to_string(header->dim[axis]) +
                      "); allowed: 2D and 3D images (later dimensions of length 1)");
  const mat44& affine = header->sform_code > 0 ? header->sto_xyz : header->qto_xyz;
  for (const auto& row : affine.m)
    for (const float value : row)
      if (!std::isfinite(value))
        throw UserError(path + ": NIfTI header: the " + std::string(header->sform_code > 0 ? "sform" : "qform") +
                        " voxel-to-mm transform is not finite; allowed: finite srow_x/y/z or quatern_b/c/d, "
                        "qoffset_x/y/z");
  const auto expected = static_cast<std::uintmax_t>(header->iname_offset) +
                        static_cast<std::uintmax_t>(header->nvox) * static_cast<std::uintmax_t>(header->nbyper);
  // The NIfTI library fills missing data with zeros and carries on, so check the length first; a
  // longer file usually means a datatype that disagrees with the data written.
  std::error_code error;
  const std::uintmax_t available =
      ends_with(path, ".gz") ? decompressed_size(path) : std::filesystem::file_size(path, error);
  if (available < expected)
    throw UserError(path + ": truncated: the header (dims and datatype " +
                    std::string(nifti_datatype_string(header->datatype)) + ") promises " + std::to_string(expected) +
                    " bytes, the file holds " + std::to_string(available) + "; allowed: a complete file");
  if (available > expected)
    throw UserError(path + ": holds " + std::to_string(available) + " bytes but the header (dims and datatype " +
                    std::string(nifti_datatype_string(header->datatype)) + ") accounts for " +
                    std::to_string(expected) + "; allowed: a file whose size matches its header");
  load_voxels(*header, path);
  return header;
}

Geometry geometry_of(const nifti_image& nim) {
  Geometry g;
  g.shape = {nim.nx, nim.ny, nim.dim[0] >= 3 ? std::max(nim.nz, 1) : 1};
  g.spacing_mm = {std::abs(nim.dx), std::abs(nim.dy), nim.dz > 0 ? std::abs(nim.dz) : 1.0};
  const mat44& m = nim.sform_code > 0 ? nim.sto_xyz : nim.qto_xyz;
  for (std::size_t row = 0; row < 3; ++row) {
    g.origin_mm[row] = m.m[row][3];
    for (std::size_t column = 0; column < 3; ++column)
      g.direction[row * 3 + column] = g.spacing_mm[column] > 0 ? m.m[row][column] / g.spacing_mm[column] : 0.0;
  }
  return g;
}

template <class Out>
void convert(const nifti_image& nim, Out* out, const std::string& path) {
  const double slope = (nim.scl_slope != 0.0F && std::isfinite(nim.scl_slope)) ? nim.scl_slope : 1.0;
  const double intercept = std::isfinite(nim.scl_inter) ? nim.scl_inter : 0.0;
  const auto scaled = [&](double v) { return static_cast<Out>(v * slope + intercept); };
  const std::size_t n = nim.nvox;
  switch (nim.datatype) {
    case DT_UINT8:
      for (std::size_t i = 0; i < n; ++i) out[i] = scaled(static_cast<const std::uint8_t*>(nim.data)[i]);
      break;
    case DT_INT8:
      for (std::size_t i = 0; i < n; ++i) out[i] = scaled(static_cast<const std::int8_t*>(nim.data)[i]);
      break;
    case DT_INT16:
      for (std::size_t i = 0; i < n; ++i) out[i] = scaled(static_cast<const std::int16_t*>(nim.data)[i]);
      break;
    case DT_UINT16:
      for (std::size_t i = 0; i < n; ++i) out[i] = scaled(static_cast<const std::uint16_t*>(nim.data)[i]);
      break;
    case DT_INT32:
      for (std::size_t i = 0; i < n; ++i) out[i] = scaled(static_cast<const std::int32_t*>(nim.data)[i]);
      break;
    case DT_FLOAT32:
      for (std::size_t i = 0; i < n; ++i) out[i] = scaled(static_cast<const float*>(nim.data)[i]);
      break;
    case DT_FLOAT64:
      for (std::size_t i = 0; i < n; ++i) out[i] = scaled(static_cast<const double*>(nim.data)[i]);
      break;
    default:
      throw UserError(path + ": NIfTI data type " + std::to_string(nim.datatype) +
                      " is not supported; allowed: uint8, int8, int16, uint16, int32, float32, float64");
  }
}

}  // namespace

void write_nifti(const FloatImage& image, const std::string& path) { write_any(image, path, DT_FLOAT32); }
void write_nifti(const LabelImage& image, const std::string& path) { write_any(image, path, DT_UINT8); }

FloatImage read_nifti_image(const std::string& path) {
  const NiftiPointer nim = read_checked(path);
  FloatImage image(geometry_of(*nim));
  convert(*nim, image.data(), path);
  // NaN or infinite intensities (stored, or from scaling) would poison every sum downstream.
  std::size_t bad = 0;
  std::size_t first = 0;
  const std::size_t n = image.voxels().size();
  for (std::size_t i = 0; i < n; ++i)
    if (!std::isfinite(image.data()[i]) && bad++ == 0) first = i;
  if (bad > 0) {
    const auto nx = static_cast<std::size_t>(image.shape().x);
    const auto ny = static_cast<std::size_t>(image.shape().y);
    throw UserError(path + ": " + std::to_string(bad) + " of " + std::to_string(n) +
                    " voxels are not finite (NaN or infinite), the first at voxel (" + std::to_string(first % nx) +
                    ", " + std::to_string(first / nx % ny) + ", " + std::to_string(first / (nx * ny)) +
                    "); allowed: finite intensities");
  }
  return image;
}

LabelImage read_nifti_labels(const std::string& path) {
  const NiftiPointer nim = read_checked(path);
  if (nim->datatype == DT_FLOAT32 || nim->datatype == DT_FLOAT64)
    throw UserError(path + ": a label image must hold integers (uint8, int8, int16, uint16, int32), not floats");
  std::vector<double> values(nim->nvox);
  convert(*nim, values.data(), path);
  LabelImage labels(geometry_of(*nim));
  for (std::size_t i = 0; i < values.size(); ++i) {
    if (values[i] < 0.0 || values[i] > 255.0 || values[i] != std::floor(values[i]))
      throw UserError(path + ": voxel " + std::to_string(i) + " holds " + std::to_string(values[i]) +
                      "; label values must be integers 0..255");
    labels.data()[i] = static_cast<std::uint8_t>(values[i]);
  }
  return labels;
}

}  // namespace frugal
