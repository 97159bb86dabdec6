#include "phantoms/nifti_io.h"

#include <nifti1_io.h>
#include <zlib.h>

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <memory>
#include <vector>

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

template <class Voxel>
void write_any(const Image<Voxel>& image, const std::string& path, int datatype) {
  const std::string temporary = partial_name(path);
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
  nifti_mat44_to_quatern(affine, &nim->quatern_b, &nim->quatern_c, &nim->quatern_d, &nim->qoffset_x,
                         &nim->qoffset_y, &nim->qoffset_z, &dx, &dy, &dz, &nim->qfac);
  nim->qto_xyz = affine;
  nim->qto_ijk = nim->sto_ijk;
  std::snprintf(nim->descrip, sizeof(nim->descrip), "frugal phantom");
  if (nifti_set_filenames(nim.get(), temporary.c_str(), 0, 1) != 0)
    throw UserError(path + ": cannot name the NIfTI output file");
  nim->data = const_cast<Voxel*>(image.data());  // borrowed for the write only
  nifti_image_write(nim.get());
  nim->data = nullptr;
  std::error_code error;
  if (!std::filesystem::exists(temporary, error) || std::filesystem::file_size(temporary, error) == 0)
    throw UserError(path + ": writing the NIfTI file failed (is the folder writable and the disk not full?)");
  std::filesystem::rename(temporary, path, error);
  if (error) throw UserError(path + ": cannot move the finished file into place: " + error.message());
}

// Bytes a gzip file decompresses to; a damaged or cut stream is a UserError.
std::uintmax_t decompressed_size(const std::string& path) {
  gzFile file = gzopen(path.c_str(), "rb");
  if (file == nullptr) throw UserError(path + ": cannot open for reading");
  std::vector<char> buffer(1 << 16);
  std::uintmax_t total = 0;
  int got = 0;
  while ((got = gzread(file, buffer.data(), static_cast<unsigned>(buffer.size()))) > 0) total += static_cast<std::uintmax_t>(got);
  int status = Z_OK;
  const std::string reason = gzerror(file, &status);
  gzclose(file);
  if (got < 0 || (status != Z_OK && status != Z_STREAM_END))
    throw UserError(path + ": the compressed data is damaged or cut short after " + std::to_string(total) +
                    " bytes (" + reason + ")");
  return total;
}

NiftiPointer read_checked(const std::string& path) {
  std::error_code error;
  if (!std::filesystem::is_regular_file(path, error)) throw UserError(path + ": no such NIfTI file");
  if (nifti_is_complete_filename(path.c_str()) == 0)
    throw UserError(path + ": not a NIfTI file name (expected .nii or .nii.gz)");
  NiftiPointer header(nifti_image_read(path.c_str(), 0));
  if (!header) throw UserError(path + ": not a readable NIfTI-1 file (bad or truncated header)");
  if (header->dim[0] < 2 || header->dim[0] > 3 || header->nt > 1)
    throw UserError(path + ": has " + std::to_string(header->dim[0]) +
                    " dimensions; frugal reads 2D and 3D images (a 4th dimension of 1 at most)");
  const auto expected = static_cast<std::uintmax_t>(header->iname_offset) +
                        static_cast<std::uintmax_t>(header->nvox) * static_cast<std::uintmax_t>(header->nbyper);
  const bool compressed = path.size() > 3 && path.compare(path.size() - 3, 3, ".gz") == 0;
  // The NIfTI library fills missing data with zeros and carries on, so check the length first.
  const std::uintmax_t available = compressed ? decompressed_size(path) : std::filesystem::file_size(path, error);
  if (available < expected)
    throw UserError(path + ": truncated: the header promises " + std::to_string(expected) + " bytes, the file holds " +
                    std::to_string(available));
  NiftiPointer full(nifti_image_read(path.c_str(), 1));
  if (!full || full->data == nullptr)
    throw UserError(path + ": the image data cannot be read (truncated or corrupt file)");
  return full;
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
    case DT_UINT8: for (std::size_t i = 0; i < n; ++i) out[i] = scaled(static_cast<const std::uint8_t*>(nim.data)[i]); break;
    case DT_INT8: for (std::size_t i = 0; i < n; ++i) out[i] = scaled(static_cast<const std::int8_t*>(nim.data)[i]); break;
    case DT_INT16: for (std::size_t i = 0; i < n; ++i) out[i] = scaled(static_cast<const std::int16_t*>(nim.data)[i]); break;
    case DT_UINT16: for (std::size_t i = 0; i < n; ++i) out[i] = scaled(static_cast<const std::uint16_t*>(nim.data)[i]); break;
    case DT_INT32: for (std::size_t i = 0; i < n; ++i) out[i] = scaled(static_cast<const std::int32_t*>(nim.data)[i]); break;
    case DT_FLOAT32: for (std::size_t i = 0; i < n; ++i) out[i] = scaled(static_cast<const float*>(nim.data)[i]); break;
    case DT_FLOAT64: for (std::size_t i = 0; i < n; ++i) out[i] = scaled(static_cast<const double*>(nim.data)[i]); break;
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
