#include "experiments/measure/overlap.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <sstream>
#include <vector>

#include "phantoms/distance_transform.h"
#include "phantoms/user_error.h"

namespace frugal::measure {
namespace {

constexpr double kInfinity = std::numeric_limits<double>::infinity();

void check_same_grid(const Image<std::uint8_t>& reference, const Image<std::uint8_t>& test) {
  const Shape& a = reference.shape();
  const Shape& b = test.shape();
  if (a != b) {
    std::ostringstream message;
    message << "masks differ in shape: " << a.x << "x" << a.y << "x" << a.z << " versus " << b.x
            << "x" << b.y << "x" << b.z << "; overlap needs masks on the same grid";
    throw UserError(message.str());
  }
  const auto& sa = reference.geometry().spacing_mm;
  const auto& sb = test.geometry().spacing_mm;
  for (int axis = 0; axis < 3; ++axis) {
    if (std::fabs(sa[axis] - sb[axis]) > 1e-6 * std::max(1.0, std::fabs(sa[axis]))) {
      std::ostringstream message;
      message << "masks differ in voxel spacing along axis " << axis << ": " << sa[axis] << " mm versus "
              << sb[axis] << " mm; overlap needs masks on the same grid";
      throw UserError(message.str());
    }
  }
}

// Percentile with linear interpolation between order statistics (numpy's default).
double percentile(std::vector<double> values, double percent) {
  std::sort(values.begin(), values.end());
  const double position = percent / 100.0 * static_cast<double>(values.size() - 1);
  const auto below = static_cast<std::size_t>(std::floor(position));
  const std::size_t above = std::min(below + 1, values.size() - 1);
  const double fraction = position - static_cast<double>(below);
  return values[below] + fraction * (values[above] - values[below]);
}

// Distances (mm) from every surface voxel of `from` to the nearest surface voxel of `to`.
std::vector<double> directed_surface_distances(const Image<std::uint8_t>& from_surface,
                                               const Image<std::uint8_t>& to_surface) {
  const std::vector<double> squared = squared_distance_to_features_mm2(to_surface);
  std::vector<double> distances;
  for (std::size_t i = 0; i < from_surface.size(); ++i) {
    if (from_surface.voxels()[i] != 0) distances.push_back(std::sqrt(squared[i]));
  }
  return distances;
}

}  // namespace

std::string OverlapOptions::validate() const {
  if (!(distance_percentile >= 0.0 && distance_percentile <= 100.0)) {
    std::ostringstream message;
    message << "distance percentile is " << distance_percentile << "; allowed: 0 to 100, usually 95";
    return message.str();
  }
  return {};
}

double dice(std::size_t intersection, std::size_t first_size, std::size_t second_size) {
  if (first_size + second_size == 0) return 1.0;
  return 2.0 * static_cast<double>(intersection) / static_cast<double>(first_size + second_size);
}

double jaccard(std::size_t intersection, std::size_t first_size, std::size_t second_size) {
  const std::size_t union_size = first_size + second_size - intersection;
  if (union_size == 0) return 1.0;
  return static_cast<double>(intersection) / static_cast<double>(union_size);
}

Image<std::uint8_t> surface_voxels(const Image<std::uint8_t>& mask) {
  const Shape& shape = mask.shape();
  Image<std::uint8_t> surface(mask.geometry(), 0);
  const bool volume = shape.z > 1;
  const auto inside_and_set = [&mask, &shape](int x, int y, int z) {
    return x >= 0 && y >= 0 && z >= 0 && x < shape.x && y < shape.y && z < shape.z &&
           mask.at(x, y, z) != 0;
  };
  for (int z = 0; z < shape.z; ++z) {
    for (int y = 0; y < shape.y; ++y) {
      for (int x = 0; x < shape.x; ++x) {
        if (mask.at(x, y, z) == 0) continue;
        bool interior = inside_and_set(x - 1, y, z) && inside_and_set(x + 1, y, z) &&
                        inside_and_set(x, y - 1, z) && inside_and_set(x, y + 1, z);
        if (volume) interior = interior && inside_and_set(x, y, z - 1) && inside_and_set(x, y, z + 1);
        if (!interior) surface.at(x, y, z) = 1;
      }
    }
  }
  return surface;
}

OverlapResult overlap(const Image<std::uint8_t>& reference, const Image<std::uint8_t>& test,
                      const OverlapOptions& options) {
  if (const std::string problem = options.validate(); !problem.empty()) throw UserError(problem);
  check_same_grid(reference, test);
  OverlapResult result;
  for (std::size_t i = 0; i < reference.size(); ++i) {
    const bool in_reference = reference.voxels()[i] != 0;
    const bool in_test = test.voxels()[i] != 0;
    result.reference_voxels += in_reference ? 1 : 0;
    result.test_voxels += in_test ? 1 : 0;
    result.intersection_voxels += in_reference && in_test ? 1 : 0;
  }
  result.dice = dice(result.intersection_voxels, result.reference_voxels, result.test_voxels);
  result.jaccard = jaccard(result.intersection_voxels, result.reference_voxels, result.test_voxels);
  if (result.reference_voxels == 0 || result.test_voxels == 0) {
    const bool both_empty = result.reference_voxels == result.test_voxels;
    result.hausdorff_mm = result.percentile_hausdorff_mm = both_empty ? 0.0 : kInfinity;
    return result;
  }
  const Image<std::uint8_t> reference_surface = surface_voxels(reference);
  const Image<std::uint8_t> test_surface = surface_voxels(test);
  const std::vector<double> forward = directed_surface_distances(reference_surface, test_surface);
  const std::vector<double> backward = directed_surface_distances(test_surface, reference_surface);
  result.hausdorff_mm = std::max(*std::max_element(forward.begin(), forward.end()),
                                 *std::max_element(backward.begin(), backward.end()));
  result.percentile_hausdorff_mm = std::max(percentile(forward, options.distance_percentile),
                                            percentile(backward, options.distance_percentile));
  return result;
}

}  // namespace frugal::measure
