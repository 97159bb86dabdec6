#pragma once
// Zero-copy views of an Image as OpenCV matrices and Eigen maps. Kept apart from image.h so
// that code which only needs the value type does not pull in OpenCV or Eigen.

#include <Eigen/Core>
#include <opencv2/core.hpp>

#include "phantoms/image.h"

namespace frugal {

namespace internal {
template <class Voxel> constexpr int cv_type();
template <> constexpr int cv_type<float>() { return CV_32F; }
template <> constexpr int cv_type<std::uint8_t>() { return CV_8U; }
template <> constexpr int cv_type<std::uint16_t>() { return CV_16U; }
}  // namespace internal

// Slice z as a rows = y, cols = x matrix that shares the image's memory.
template <class Voxel>
cv::Mat slice_view(Image<Voxel>& image, int z = 0) {
  return cv::Mat(image.shape().y, image.shape().x, internal::cv_type<Voxel>(), image.slice(z));
}
template <class Voxel>
cv::Mat slice_view(const Image<Voxel>& image, int z = 0) {
  // OpenCV has no const Mat; callers must not write through it.
  return cv::Mat(image.shape().y, image.shape().x, internal::cv_type<Voxel>(),
                 const_cast<Voxel*>(image.slice(z)));
}

// Slice z as a row-major y-by-x Eigen matrix map.
template <class Voxel>
using SliceMap = Eigen::Map<Eigen::Matrix<Voxel, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>>;
template <class Voxel>
SliceMap<Voxel> slice_map(Image<Voxel>& image, int z = 0) {
  return SliceMap<Voxel>(image.slice(z), image.shape().y, image.shape().x);
}

// All voxels as one Eigen column vector.
template <class Voxel>
Eigen::Map<const Eigen::Matrix<Voxel, Eigen::Dynamic, 1>> voxel_vector(const Image<Voxel>& image) {
  return Eigen::Map<const Eigen::Matrix<Voxel, Eigen::Dynamic, 1>>(
      image.data(), static_cast<Eigen::Index>(image.size()));
}

}  // namespace frugal
