#include "phantoms/distance_transform.h"

#include <limits>

namespace frugal {
namespace {

constexpr double kInfinity = std::numeric_limits<double>::infinity();

// One pass along a line of `count` samples `stride` apart: replaces squared distances f by
// min_q (f[q] + ((p - q) * spacing)^2). Scratch vectors are reused across lines.
void transform_line(double* values, int count, std::ptrdiff_t stride, double spacing,
                    std::vector<double>& input, std::vector<int>& parabola,
                    std::vector<double>& boundary) {
  input.resize(static_cast<std::size_t>(count));
  parabola.resize(static_cast<std::size_t>(count));
  boundary.resize(static_cast<std::size_t>(count) + 1);
  int hull = -1;  // index of the last parabola in the lower envelope
  for (int q = 0; q < count; ++q) {
    const double f = values[q * stride];
    input[static_cast<std::size_t>(q)] = f;
    if (f == kInfinity) continue;  // an infinite parabola never reaches the envelope
    const double position = q * spacing;
    double crossing = -kInfinity;
    while (hull >= 0) {
      const int v = parabola[static_cast<std::size_t>(hull)];
      const double position_v = v * spacing;
      crossing = ((f + position * position) - (input[static_cast<std::size_t>(v)] + position_v * position_v)) /
                 (2.0 * (position - position_v));
      if (crossing > boundary[static_cast<std::size_t>(hull)]) break;
      --hull;
    }
    ++hull;
    parabola[static_cast<std::size_t>(hull)] = q;
    boundary[static_cast<std::size_t>(hull)] = hull == 0 ? -kInfinity : crossing;
  }
  if (hull < 0) return;  // no feature on this line: stays infinite
  boundary[static_cast<std::size_t>(hull) + 1] = kInfinity;
  int k = 0;
  for (int q = 0; q < count; ++q) {
    const double position = q * spacing;
    while (boundary[static_cast<std::size_t>(k) + 1] < position) ++k;
    const int v = parabola[static_cast<std::size_t>(k)];
    const double offset = position - v * spacing;
    values[q * stride] = offset * offset + input[static_cast<std::size_t>(v)];
  }
}

}  // namespace

std::vector<double> squared_distance_to_features_mm2(const Image<std::uint8_t>& features) {
  return squared_distance_to_features_mm2(features.voxels(), features.shape(), features.geometry().spacing_mm);
}

std::vector<double> squared_distance_to_features_mm2(const std::vector<std::uint8_t>& features, const Shape& shape,
                                                     const std::array<double, 3>& spacing) {
  FRUGAL_CHECK(features.size() == shape.voxel_count());
  std::vector<double> distance(features.size(), kInfinity);
  for (std::size_t i = 0; i < features.size(); ++i) {
    if (features[i] != 0) distance[i] = 0.0;
  }
  std::vector<double> input;
  std::vector<int> parabola;
  std::vector<double> boundary;
  const std::ptrdiff_t row = shape.x;
  const std::ptrdiff_t plane = static_cast<std::ptrdiff_t>(shape.x) * shape.y;
  for (int z = 0; z < shape.z; ++z) {
    for (int y = 0; y < shape.y; ++y) {
      transform_line(distance.data() + z * plane + y * row, shape.x, 1, spacing[0], input, parabola, boundary);
    }
  }
  for (int z = 0; z < shape.z; ++z) {
    for (int x = 0; x < shape.x; ++x) {
      transform_line(distance.data() + z * plane + x, shape.y, row, spacing[1], input, parabola, boundary);
    }
  }
  if (shape.z > 1) {
    for (int y = 0; y < shape.y; ++y) {
      for (int x = 0; x < shape.x; ++x) {
        transform_line(distance.data() + y * row + x, shape.z, plane, spacing[2], input, parabola, boundary);
      }
    }
  }
  return distance;
}

}  // namespace frugal
