#include "phantoms/image_ops.h"

#include <opencv2/imgproc.hpp>

#include <cmath>
#include <cstdint>

#include "phantoms/image_views.h"

namespace frugal {

Geometry centred_geometry(const Shape& shape, const std::array<double, 3>& spacing_mm) {
  Geometry geometry;
  geometry.shape = shape;
  geometry.spacing_mm = spacing_mm;
  const int extents[3] = {shape.x, shape.y, shape.z};
  for (std::size_t axis = 0; axis < 3; ++axis)
    geometry.origin_mm[axis] = -0.5 * (extents[axis] - 1) * spacing_mm[axis];
  return geometry;
}

Shape coarse_extent(const Shape& fine, int step) {
  const auto nodes = [step](int n) { return n <= 1 ? 1 : (n - 2) / step + 2; };
  return {nodes(fine.x), nodes(fine.y), nodes(fine.z)};
}

namespace {

struct AxisWeights {
  std::vector<int> lower;
  std::vector<float> upper_weight;
};

AxisWeights axis_weights(int fine, int coarse, int step) {
  AxisWeights weights;
  weights.lower.resize(static_cast<std::size_t>(fine));
  weights.upper_weight.resize(static_cast<std::size_t>(fine));
  for (int i = 0; i < fine; ++i) {
    const int lower = std::min(i / step, std::max(coarse - 2, 0));
    weights.lower[static_cast<std::size_t>(i)] = lower;
    weights.upper_weight[static_cast<std::size_t>(i)] =
        coarse > 1 ? static_cast<float>(i - lower * step) / static_cast<float>(step) : 0.0F;
  }
  return weights;
}

}  // namespace

FloatImage upsample(const CoarseGrid& grid, const Geometry& geometry) {
  const Shape& fine = geometry.shape;
  const Shape& coarse = grid.shape;
  FRUGAL_CHECK(coarse == coarse_extent(fine, grid.step));
  FRUGAL_CHECK(grid.values.size() == coarse.voxel_count());
  const AxisWeights wx = axis_weights(fine.x, coarse.x, grid.step);
  const AxisWeights wy = axis_weights(fine.y, coarse.y, grid.step);
  const AxisWeights wz = axis_weights(fine.z, coarse.z, grid.step);
  const auto cx = static_cast<std::size_t>(coarse.x), cy = static_cast<std::size_t>(coarse.y);
  const auto fx = static_cast<std::size_t>(fine.x), fy = static_cast<std::size_t>(fine.y);

  // Pass 1: along x for every coarse row -> (fine.x, coarse.y, coarse.z).
  std::vector<float> along_x(fx * cy * static_cast<std::size_t>(coarse.z));
  for (std::size_t row = 0; row < cy * static_cast<std::size_t>(coarse.z); ++row) {
    const float* in = grid.values.data() + row * cx;
    float* out = along_x.data() + row * fx;
    for (std::size_t i = 0; i < fx; ++i) {
      const auto lower = static_cast<std::size_t>(wx.lower[i]);
      const float w = wx.upper_weight[i];
      out[i] = coarse.x > 1 ? in[lower] + w * (in[lower + 1] - in[lower]) : in[0];
    }
  }
  // Pass 2: along y -> (fine.x, fine.y, coarse.z).
  std::vector<float> along_y(fx * fy * static_cast<std::size_t>(coarse.z));
  for (std::size_t k = 0; k < static_cast<std::size_t>(coarse.z); ++k) {
    for (std::size_t j = 0; j < fy; ++j) {
      const auto lower = static_cast<std::size_t>(wy.lower[j]);
      const float w = wy.upper_weight[j];
      const float* a = along_x.data() + (k * cy + lower) * fx;
      const float* b = coarse.y > 1 ? a + fx : a;
      float* out = along_y.data() + (k * fy + j) * fx;
      for (std::size_t i = 0; i < fx; ++i) out[i] = a[i] + w * (b[i] - a[i]);
    }
  }
  // Pass 3: along z.
  FloatImage result(geometry);
  const std::size_t plane = fx * fy;
  for (int k = 0; k < fine.z; ++k) {
    const auto lower = static_cast<std::size_t>(wz.lower[static_cast<std::size_t>(k)]);
    const float w = wz.upper_weight[static_cast<std::size_t>(k)];
    const float* a = along_y.data() + lower * plane;
    const float* b = coarse.z > 1 ? a + plane : a;
    float* out = result.slice(k);
    for (std::size_t i = 0; i < plane; ++i) out[i] = a[i] + w * (b[i] - a[i]);
  }
  return result;
}

namespace {

double sigma_voxels(const FloatImage& image, const std::array<double, 3>& sigma_mm, std::size_t axis) {
  return sigma_mm[axis] / image.geometry().spacing_mm[axis];
}

// OpenCV's own kernel size rule for float images: about +-4 sigma.
int kernel_size(double sigma) { return std::max(3, (static_cast<int>(std::lround(sigma * 4.0)) * 2 + 1)); }

void filter_along_z(FloatImage& image, double sigma) {
  const int nz = image.shape().z;
  const cv::Mat kernel = cv::getGaussianKernel(kernel_size(sigma), sigma, CV_32F);
  const int radius = kernel.rows / 2;
  const std::size_t plane = static_cast<std::size_t>(image.shape().x) * static_cast<std::size_t>(image.shape().y);
  std::vector<float> source(image.voxels());
  for (int k = 0; k < nz; ++k) {
    float* out = image.slice(k);
    std::fill(out, out + plane, 0.0F);
    for (int t = -radius; t <= radius; ++t) {
      // Reflect without repeating the edge (OpenCV's BORDER_REFLECT_101).
      int source_k = k + t;
      while (source_k < 0 || source_k >= nz) source_k = source_k < 0 ? -source_k : 2 * (nz - 1) - source_k;
      if (nz == 1) source_k = 0;
      const float weight = kernel.at<float>(t + radius);
      const float* in = source.data() + static_cast<std::size_t>(source_k) * plane;
      for (std::size_t i = 0; i < plane; ++i) out[i] += weight * in[i];
    }
  }
}

}  // namespace

void gaussian_filter(FloatImage& image, const std::array<double, 3>& sigma_mm) {
  const double sx = sigma_voxels(image, sigma_mm, 0), sy = sigma_voxels(image, sigma_mm, 1);
  if (sx > 0.0 || sy > 0.0) {
    const cv::Size size(sx > 0.0 ? kernel_size(sx) : 1, sy > 0.0 ? kernel_size(sy) : 1);
    for (int k = 0; k < image.shape().z; ++k) {
      cv::Mat slice = slice_view(image, k);
      cv::GaussianBlur(slice, slice, size, std::max(sx, 1e-9), std::max(sy, 1e-9), cv::BORDER_REFLECT_101);
    }
  }
  const double sz = sigma_voxels(image, sigma_mm, 2);
  if (image.shape().z > 1 && sz > 0.0) filter_along_z(image, sz);
}

double gaussian_filter_noise_gain(const FloatImage& image, const std::array<double, 3>& sigma_mm) {
  double gain = 1.0;
  for (std::size_t axis = 0; axis < 3; ++axis) {
    if (axis == 2 && image.shape().z == 1) continue;
    const double sigma = sigma_voxels(image, sigma_mm, axis);
    if (sigma <= 0.0) continue;
    const cv::Mat kernel = cv::getGaussianKernel(kernel_size(sigma), sigma, CV_64F);
    gain *= kernel.dot(kernel);
  }
  return gain;
}

namespace {

// Continuous voxel coordinates in the rest image of the world point seen by output voxel (i,j,k).
struct PoseSampler {
  const Geometry& geometry;
  const RigidPose& pose;
  std::array<double, 3> rest_index(int i, int j, int k) const {
    const auto world = geometry.world_mm(i, j, k);
    const auto rest = pose.inverse(world);
    return {(rest[0] - geometry.origin_mm[0]) / geometry.spacing_mm[0],
            (rest[1] - geometry.origin_mm[1]) / geometry.spacing_mm[1],
            (rest[2] - geometry.origin_mm[2]) / geometry.spacing_mm[2]};
  }
};

}  // namespace

FloatImage resample_linear(const FloatImage& rest, const RigidPose& pose, float outside_value) {
  FloatImage out(rest.geometry());
  const Shape& s = rest.shape();
  const PoseSampler sampler{rest.geometry(), pose};
  for (int k = 0; k < s.z; ++k)
    for (int j = 0; j < s.y; ++j)
      for (int i = 0; i < s.x; ++i) {
        auto p = sampler.rest_index(i, j, k);
        if (s.z == 1) p[2] = 0.0;
        const int x0 = static_cast<int>(std::floor(p[0])), y0 = static_cast<int>(std::floor(p[1])),
                  z0 = static_cast<int>(std::floor(p[2]));
        const double fx = p[0] - x0, fy = p[1] - y0, fz = p[2] - z0;
        double value = 0.0;
        for (int dz = 0; dz <= (s.z > 1 ? 1 : 0); ++dz)
          for (int dy = 0; dy <= 1; ++dy)
            for (int dx = 0; dx <= 1; ++dx) {
              const int x = x0 + dx, y = y0 + dy, z = z0 + dz;
              const double w = (dx ? fx : 1.0 - fx) * (dy ? fy : 1.0 - fy) * (s.z > 1 ? (dz ? fz : 1.0 - fz) : 1.0);
              const bool inside = x >= 0 && x < s.x && y >= 0 && y < s.y && z >= 0 && z < s.z;
              value += w * (inside ? rest.at(x, y, z) : outside_value);
            }
        out.at(i, j, k) = static_cast<float>(value);
      }
  return out;
}

template <class Label>
Image<Label> resample_nearest(const Image<Label>& rest, const RigidPose& pose) {
  Image<Label> out(rest.geometry());
  const Shape& s = rest.shape();
  const PoseSampler sampler{rest.geometry(), pose};
  for (int k = 0; k < s.z; ++k)
    for (int j = 0; j < s.y; ++j)
      for (int i = 0; i < s.x; ++i) {
        const auto p = sampler.rest_index(i, j, k);
        const int x = static_cast<int>(std::lround(p[0])), y = static_cast<int>(std::lround(p[1]));
        const int z = s.z == 1 ? 0 : static_cast<int>(std::lround(p[2]));
        if (x >= 0 && x < s.x && y >= 0 && y < s.y && z >= 0 && z < s.z) out.at(i, j, k) = rest.at(x, y, z);
      }
  return out;
}

template Image<std::uint8_t> resample_nearest(const Image<std::uint8_t>&, const RigidPose&);
template Image<std::uint16_t> resample_nearest(const Image<std::uint16_t>&, const RigidPose&);

}  // namespace frugal
