#pragma once
// A 2D or 3D image that owns contiguous voxels, x fastest (the NIfTI order), with its geometry.

#include <array>
#include <cstddef>
#include <cstdint>
#include <stdexcept>
#include <string>
#include <vector>

namespace frugal {

// Voxel grid extent; a 2D image has z == 1.
struct Shape {
  int x = 1;
  int y = 1;
  int z = 1;
  std::size_t voxel_count() const {
    return static_cast<std::size_t>(x) * static_cast<std::size_t>(y) * static_cast<std::size_t>(z);
  }
  int dims() const { return z > 1 ? 3 : 2; }
  bool operator==(const Shape& other) const { return x == other.x && y == other.y && z == other.z; }
  bool operator!=(const Shape& other) const { return !(*this == other); }
};

// Where the grid sits in scanner space: world_mm = origin + direction * (index * spacing).
struct Geometry {
  Shape shape;
  std::array<double, 3> spacing_mm{1.0, 1.0, 1.0};
  std::array<double, 3> origin_mm{0.0, 0.0, 0.0};
  // Row-major 3x3 rotation whose columns are the world directions of the x, y and z axes.
  std::array<double, 9> direction{1, 0, 0, 0, 1, 0, 0, 0, 1};

  double voxel_volume_mm3() const { return spacing_mm[0] * spacing_mm[1] * spacing_mm[2]; }
  std::array<double, 3> world_mm(double ix, double iy, double iz) const {
    const double local[3] = {ix * spacing_mm[0], iy * spacing_mm[1], iz * spacing_mm[2]};
    return {origin_mm[0] + direction[0] * local[0] + direction[1] * local[1] + direction[2] * local[2],
            origin_mm[1] + direction[3] * local[0] + direction[4] * local[1] + direction[5] * local[2],
            origin_mm[2] + direction[6] * local[0] + direction[7] * local[1] + direction[8] * local[2]};
  }
  // The inverse of world_mm: the direction matrix is a rotation, so its transpose inverts it.
  std::array<double, 3> continuous_index(const std::array<double, 3>& world) const {
    const double offset[3] = {world[0] - origin_mm[0], world[1] - origin_mm[1], world[2] - origin_mm[2]};
    std::array<double, 3> index{};
    for (int a = 0; a < 3; ++a)
      index[a] = (direction[a] * offset[0] + direction[3 + a] * offset[1] + direction[6 + a] * offset[2]) / spacing_mm[a];
    return index;
  }
};

// Aborts in every build: for broken internal invariants, never for user input.
[[noreturn]] void fail_invariant(const char* what, const char* file, int line);
#define FRUGAL_CHECK(condition)                                          \
  do {                                                                   \
    if (!(condition)) ::frugal::fail_invariant(#condition, __FILE__, __LINE__); \
  } while (false)

template <class Voxel>
class Image {
 public:
  using value_type = Voxel;

  Image() = default;
  explicit Image(const Geometry& geometry, Voxel fill = Voxel{})
      : geometry_(geometry), voxels_(geometry.shape.voxel_count(), fill) {}

  const Geometry& geometry() const { return geometry_; }
  Geometry& geometry() { return geometry_; }
  const Shape& shape() const { return geometry_.shape; }
  std::size_t size() const { return voxels_.size(); }
  bool empty() const { return voxels_.empty(); }

  Voxel* data() { return voxels_.data(); }
  const Voxel* data() const { return voxels_.data(); }
  std::vector<Voxel>& voxels() { return voxels_; }
  const std::vector<Voxel>& voxels() const { return voxels_; }

  std::size_t index(int x, int y, int z = 0) const {
    return (static_cast<std::size_t>(z) * static_cast<std::size_t>(geometry_.shape.y) +
            static_cast<std::size_t>(y)) * static_cast<std::size_t>(geometry_.shape.x) +
           static_cast<std::size_t>(x);
  }
  Voxel& at(int x, int y, int z = 0) { return voxels_[index(x, y, z)]; }
  const Voxel& at(int x, int y, int z = 0) const { return voxels_[index(x, y, z)]; }

  // Pointer to the first voxel of slice z (x fastest, then y).
  Voxel* slice(int z) { return voxels_.data() + index(0, 0, z); }
  const Voxel* slice(int z) const { return voxels_.data() + index(0, 0, z); }

 private:
  Geometry geometry_;
  std::vector<Voxel> voxels_;
};

using FloatImage = Image<float>;
using LabelImage = Image<std::uint8_t>;
using InstanceImage = Image<std::uint16_t>;

}  // namespace frugal
