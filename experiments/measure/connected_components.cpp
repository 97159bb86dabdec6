#include "experiments/measure/connected_components.h"

#include <array>
#include <cstdlib>
#include <numeric>
#include <sstream>
#include <vector>

#include <opencv2/imgproc.hpp>

#include "phantoms/user_error.h"

namespace frugal::measure {
namespace {

// Union-find over voxel indices with path halving; parents always point to a smaller index so
// the root of a component is its first voxel in memory order.
struct DisjointSets {
  std::vector<std::int64_t> parent;
  std::int64_t find(std::int64_t i) {
    while (parent[static_cast<std::size_t>(i)] != i) {
      parent[static_cast<std::size_t>(i)] = parent[static_cast<std::size_t>(parent[static_cast<std::size_t>(i)])];
      i = parent[static_cast<std::size_t>(i)];
    }
    return i;
  }
  void join(std::int64_t a, std::int64_t b) {
    a = find(a);
    b = find(b);
    if (a == b) return;
    if (a < b) {
      parent[static_cast<std::size_t>(b)] = a;
    } else {
      parent[static_cast<std::size_t>(a)] = b;
    }
  }
};

// Renumbers arbitrary positive labels to 1..count by first appearance in memory order.
void renumber_by_first_voxel(ComponentLabels& result, const std::vector<std::int64_t>& raw) {
  std::vector<std::int32_t> mapping;
  std::vector<std::int32_t>& out = result.labels.voxels();
  // raw labels are voxel indices (3D) or OpenCV labels (2D); both fit a dense map of size raw.size()+1.
  mapping.assign(raw.size() + 1, 0);
  for (std::size_t i = 0; i < raw.size(); ++i) {
    if (raw[i] < 0) continue;
    std::int32_t& label = mapping[static_cast<std::size_t>(raw[i])];
    if (label == 0) {
      label = ++result.count;
      result.sizes.push_back(0);
    }
    out[i] = label;
    ++result.sizes[static_cast<std::size_t>(label) - 1];
  }
}

void label_2d(const Image<std::uint8_t>& mask, int connectivity, ComponentLabels& result) {
  const Shape& shape = mask.shape();
  // OpenCV reads the mask in place: rows are y, columns x, matching x-fastest memory.
  const cv::Mat binary(shape.y, shape.x, CV_8U, const_cast<std::uint8_t*>(mask.data()));
  cv::Mat foreground = binary != 0;
  cv::Mat labels;
  cv::connectedComponents(foreground, labels, connectivity, CV_32S);
  std::vector<std::int64_t> raw(mask.size(), -1);
  for (int y = 0; y < shape.y; ++y) {
    const std::int32_t* row = labels.ptr<std::int32_t>(y);
    for (int x = 0; x < shape.x; ++x) {
      if (row[x] > 0) raw[mask.index(x, y)] = row[x];
    }
  }
  renumber_by_first_voxel(result, raw);
}

void label_3d(const Image<std::uint8_t>& mask, int connectivity, ComponentLabels& result) {
  const Shape& shape = mask.shape();
  // Backward half of the neighbourhood: offsets already visited in a raster scan.
  std::vector<std::array<int, 3>> offsets;
  for (int dz = -1; dz <= 0; ++dz) {
    for (int dy = -1; dy <= 1; ++dy) {
      for (int dx = -1; dx <= 1; ++dx) {
        const bool backward = dz < 0 || (dz == 0 && (dy < 0 || (dy == 0 && dx < 0)));
        const int order = std::abs(dx) + std::abs(dy) + std::abs(dz);  // 1 face, 2 edge, 3 corner
        const int reach = connectivity == 6 ? 1 : connectivity == 18 ? 2 : 3;
        if (backward && order <= reach) offsets.push_back({dx, dy, dz});
      }
    }
  }
  DisjointSets sets;
  sets.parent.resize(mask.size());
  std::iota(sets.parent.begin(), sets.parent.end(), std::int64_t{0});
  for (int z = 0; z < shape.z; ++z) {
    for (int y = 0; y < shape.y; ++y) {
      for (int x = 0; x < shape.x; ++x) {
        if (mask.at(x, y, z) == 0) continue;
        const auto here = static_cast<std::int64_t>(mask.index(x, y, z));
        for (const auto& offset : offsets) {
          const int nx = x + offset[0];
          const int ny = y + offset[1];
          const int nz = z + offset[2];
          if (nx < 0 || ny < 0 || nz < 0 || nx >= shape.x || ny >= shape.y) continue;
          if (mask.at(nx, ny, nz) != 0) sets.join(here, static_cast<std::int64_t>(mask.index(nx, ny, nz)));
        }
      }
    }
  }
  std::vector<std::int64_t> raw(mask.size(), -1);
  for (std::size_t i = 0; i < mask.size(); ++i) {
    if (mask.voxels()[i] != 0) raw[i] = sets.find(static_cast<std::int64_t>(i));
  }
  renumber_by_first_voxel(result, raw);
}

}  // namespace

std::string ConnectivityOptions::validate(int dims) const {
  const bool ok = connectivity == 0 || (dims == 2 && (connectivity == 4 || connectivity == 8)) ||
                  (dims == 3 && (connectivity == 6 || connectivity == 18 || connectivity == 26));
  if (ok) return {};
  std::ostringstream message;
  message << "connectivity " << connectivity << " is not allowed for a " << dims << "D mask; allowed: "
          << (dims == 2 ? "4 or 8" : "6, 18 or 26") << " (0 = full)";
  return message.str();
}

int ConnectivityOptions::resolved(int dims) const {
  if (connectivity != 0) return connectivity;
  return dims == 2 ? 8 : 26;
}

ComponentLabels label_components(const Image<std::uint8_t>& mask, const ConnectivityOptions& options) {
  const int dims = mask.shape().dims();
  if (const std::string problem = options.validate(dims); !problem.empty()) throw UserError(problem);
  ComponentLabels result;
  result.labels = Image<std::int32_t>(mask.geometry(), 0);
  if (mask.empty()) return result;
  if (dims == 2) {
    label_2d(mask, options.resolved(dims), result);
  } else {
    label_3d(mask, options.resolved(dims), result);
  }
  return result;
}

void clear_border_components(Image<std::uint8_t>& mask, const ConnectivityOptions& options) {
  const ComponentLabels components = label_components(mask, options);
  const Shape& shape = mask.shape();
  std::vector<bool> touches(static_cast<std::size_t>(components.count) + 1, false);
  for (int z = 0; z < shape.z; ++z)
    for (int y = 0; y < shape.y; ++y)
      for (int x = 0; x < shape.x; ++x) {
        const bool border =
            x == 0 || y == 0 || x == shape.x - 1 || y == shape.y - 1 || (shape.z > 1 && (z == 0 || z == shape.z - 1));
        if (border) touches[static_cast<std::size_t>(components.labels.at(x, y, z))] = true;
      }
  for (std::size_t v = 0; v < mask.size(); ++v)
    if (touches[static_cast<std::size_t>(components.labels.data()[v])]) mask.data()[v] = 0;
}

}  // namespace frugal::measure
