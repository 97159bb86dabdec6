// Sampling grids for geometric augmentation. Convention, with c = ((n - 1) / 2 per axis) the image
// centre in voxels, s the voxel spacing in mm and p an output voxel:
//   input position = c + (R * (F(p) - c) * s + d(p)) / s
// F mirrors the chosen axes (x -> n - 1 - x), R rotates about the centre in mm, and d is the
// smooth displacement in mm evaluated at the output voxel. Positions are in input voxel
// coordinates and may fall outside the image; the warps clamp them.
#include "experiments/learn/augmentation.h"

#include <algorithm>
#include <array>
#include <cmath>
#include <cstddef>
#include <string>
#include <vector>

#include "phantoms/text_format.h"

namespace frugal::learn {
namespace {

constexpr double kPi = 3.14159265358979323846;

std::string check_range(const char* key, double value, double low, double high) {
  if (std::isfinite(value) && value >= low && value <= high) return {};
  return std::string(key) + " = " + format_number(value) + ": allowed [" + format_number(low) + ", " +
         format_number(high) + "]";
}

std::array<int, 3> extent_of(const Shape& shape) { return {shape.x, shape.y, shape.z}; }

// input = offset + matrix * output, in voxel coordinates. Kept in double so that the identity
// and pure flips stay exact integers.
struct AffineMap {
  double matrix[3][3] = {{1, 0, 0}, {0, 1, 0}, {0, 0, 1}};
  double offset[3] = {0, 0, 0};
};

using Matrix3 = std::array<std::array<double, 3>, 3>;

Matrix3 multiply(const Matrix3& a, const Matrix3& b) {
  Matrix3 product{};
  for (int i = 0; i < 3; ++i)
    for (int j = 0; j < 3; ++j)
      for (int k = 0; k < 3; ++k) product[i][j] += a[i][k] * b[k][j];
  return product;
}

// Rotation by `degrees` in the plane of axes (first, second), from first towards second.
Matrix3 plane_rotation(int first, int second, double degrees) {
  Matrix3 rotation{{{1, 0, 0}, {0, 1, 0}, {0, 0, 1}}};
  const double radians = degrees * kPi / 180.0;
  rotation[first][first] = std::cos(radians);
  rotation[first][second] = -std::sin(radians);
  rotation[second][first] = std::sin(radians);
  rotation[second][second] = std::cos(radians);
  return rotation;
}

// Draws the rotation (in mm space) and folds it into `map`, which holds the flips so far:
// input = c + S^-1 R S (F(p) - c), with S = diag(spacing).
void apply_rotation(const Geometry& geometry, double max_degrees, RandomStream& random, AffineMap& map) {
  const int dims = geometry.shape.dims();
  Matrix3 rotation{};
  if (dims == 2) {
    rotation = plane_rotation(0, 1, random.uniform(-max_degrees, max_degrees));
  } else {
    // About x, then y, then z: R = Rz Ry Rx.
    const double about_x = random.uniform(-max_degrees, max_degrees);
    const double about_y = random.uniform(-max_degrees, max_degrees);
    const double about_z = random.uniform(-max_degrees, max_degrees);
    rotation =
        multiply(plane_rotation(0, 1, about_z), multiply(plane_rotation(2, 0, about_y), plane_rotation(1, 2, about_x)));
  }
  const std::array<int, 3> extent = extent_of(geometry.shape);
  double in_voxels[3][3];  // S^-1 R S
  for (int a = 0; a < 3; ++a)
    for (int b = 0; b < 3; ++b) in_voxels[a][b] = rotation[a][b] * geometry.spacing_mm[b] / geometry.spacing_mm[a];
  double centre[3];
  for (int a = 0; a < 3; ++a) centre[a] = a < dims ? 0.5 * (extent[a] - 1) : 0.0;
  AffineMap rotated;
  for (int a = 0; a < dims; ++a) {
    rotated.offset[a] = centre[a];
    for (int b = 0; b < dims; ++b) {
      rotated.offset[a] += in_voxels[a][b] * (map.offset[b] - centre[b]);
      rotated.matrix[a][b] = 0.0;
      for (int k = 0; k < dims; ++k) rotated.matrix[a][b] += in_voxels[a][k] * map.matrix[k][b];
    }
  }
  map = rotated;
}

// Interpolation weights of one axis: voxel i combines the 4 node values from node first[i] on.
// Cubic B-spline weights rather than linear upsampling, whose kinks at the nodes would show as
// creases in the warped image and whose variance drops to half between nodes. Each voxel's
// weights are rescaled to unit sum of squares, so that with independent node values of SD sigma
// every voxel's displacement has SD sigma exactly (plain B-spline weights give 0.68-0.71 sigma per
// axis, varying within a cell). The rescaling factor has zero slope at the nodes, so the field
// stays once differentiable everywhere.
struct AxisSpline {
  int nodes = 1;  // a 2D image's z axis keeps this default and is never evaluated
  std::vector<int> first;
  std::vector<std::array<float, 4>> weights;
};

AxisSpline axis_spline(int voxels, double spacing_mm, double node_spacing_mm) {
  AxisSpline spline;
  spline.first.assign(static_cast<std::size_t>(voxels), 0);
  spline.weights.assign(static_cast<std::size_t>(voxels), {1.0F, 0.0F, 0.0F, 0.0F});
  // Cells of node_spacing_mm centred on the image and covering it, plus one node beyond each end
  // for the cubic's support: at least 4 nodes.
  const double extent_mm = (voxels - 1) * spacing_mm;
  const int cells = std::max(1, static_cast<int>(std::ceil(extent_mm / node_spacing_mm - 1e-9)));
  const double start_mm = 0.5 * (extent_mm - cells * node_spacing_mm);
  spline.nodes = cells + 3;
  for (int i = 0; i < voxels; ++i) {
    const double t = (i * spacing_mm - start_mm) / node_spacing_mm;  // in [0, cells]
    const int cell = std::min(std::max(static_cast<int>(std::floor(t)), 0), cells - 1);
    const double u = t - cell;
    const double w[4] = {(1 - u) * (1 - u) * (1 - u) / 6.0, (3 * u * u * u - 6 * u * u + 4) / 6.0,
                         (-3 * u * u * u + 3 * u * u + 3 * u + 1) / 6.0, u * u * u / 6.0};
    const double norm = std::sqrt(w[0] * w[0] + w[1] * w[1] + w[2] * w[2] + w[3] * w[3]);
    const auto index = static_cast<std::size_t>(i);
    spline.first[index] = cell;  // node k sits at lattice coordinate k - 1
    for (int m = 0; m < 4; ++m) spline.weights[index][static_cast<std::size_t>(m)] = static_cast<float>(w[m] / norm);
  }
  return spline;
}

// Draws normal(0, deformation_mm) node values (x component for every node, then y, then z; nodes
// x fastest), interpolates each component to every voxel and adds it to the positions in voxels.
void add_displacement(const Geometry& geometry, const AugmentationOptions& options, RandomStream& random,
                      std::vector<float>& positions) {
  const Shape& shape = geometry.shape;
  const int dims = shape.dims();
  const std::array<int, 3> extent = extent_of(shape);
  std::array<AxisSpline, 3> splines;
  for (int a = 0; a < dims; ++a)
    splines[static_cast<std::size_t>(a)] =
        axis_spline(extent[static_cast<std::size_t>(a)], geometry.spacing_mm[static_cast<std::size_t>(a)],
                    options.deformation_spacing_mm);
  const AxisSpline& sx = splines[0];
  const AxisSpline& sy = splines[1];
  const AxisSpline& sz = splines[2];

  const auto nx = static_cast<std::size_t>(shape.x), ny = static_cast<std::size_t>(shape.y);
  const auto nodes_x = static_cast<std::size_t>(sx.nodes), nodes_y = static_cast<std::size_t>(sy.nodes),
             nodes_z = static_cast<std::size_t>(sz.nodes);
  std::vector<double> node_values(nodes_x * nodes_y * nodes_z);
  std::vector<float> along_x(nx * nodes_y * nodes_z);
  std::vector<float> along_y(nx * ny * nodes_z);
  std::vector<float> field(dims == 3 ? shape.voxel_count() : 0);
  const auto ndims = static_cast<std::size_t>(dims);

  for (std::size_t component = 0; component < ndims; ++component) {
    for (double& value : node_values) value = random.normal(0.0, options.deformation_mm);
    // Separable evaluation: along x for every node row, then y, then z.
    for (std::size_t row = 0; row < nodes_y * nodes_z; ++row) {
      const double* in = node_values.data() + row * nodes_x;
      float* out = along_x.data() + row * nx;
      for (std::size_t i = 0; i < nx; ++i) {
        const double* node = in + sx.first[i];
        const std::array<float, 4>& w = sx.weights[i];
        out[i] = static_cast<float>(w[0] * node[0] + w[1] * node[1] + w[2] * node[2] + w[3] * node[3]);
      }
    }
    for (std::size_t k = 0; k < nodes_z; ++k) {
      for (std::size_t j = 0; j < ny; ++j) {
        const float* node = along_x.data() + (k * nodes_y + static_cast<std::size_t>(sy.first[j])) * nx;
        const std::array<float, 4>& w = sy.weights[j];
        float* out = along_y.data() + (k * ny + j) * nx;
        for (std::size_t i = 0; i < nx; ++i)
          out[i] = w[0] * node[i] + w[1] * node[i + nx] + w[2] * node[i + 2 * nx] + w[3] * node[i + 3 * nx];
      }
    }
    const float* displacement = along_y.data();
    if (dims == 3) {
      const std::size_t plane = nx * ny;
      for (std::size_t k = 0; k < static_cast<std::size_t>(shape.z); ++k) {
        const float* node = along_y.data() + static_cast<std::size_t>(sz.first[k]) * plane;
        const std::array<float, 4>& w = sz.weights[k];
        float* out = field.data() + k * plane;
        for (std::size_t i = 0; i < plane; ++i)
          out[i] = w[0] * node[i] + w[1] * node[i + plane] + w[2] * node[i + 2 * plane] + w[3] * node[i + 3 * plane];
      }
      displacement = field.data();
    }
    const auto to_voxels = static_cast<float>(1.0 / geometry.spacing_mm[component]);
    float* position = positions.data() + component;
    for (std::size_t v = 0; v < shape.voxel_count(); ++v) position[v * ndims] += displacement[v] * to_voxels;
  }
}

void fill_affine(const Shape& shape, const AffineMap& map, std::vector<float>& positions) {
  const auto dims = static_cast<std::size_t>(shape.dims());
  positions.resize(shape.voxel_count() * dims);
  float* out = positions.data();
  for (int z = 0; z < shape.z; ++z) {
    for (int y = 0; y < shape.y; ++y) {
      double row[3];
      for (std::size_t a = 0; a < dims; ++a) row[a] = map.offset[a] + map.matrix[a][1] * y + map.matrix[a][2] * z;
      for (int x = 0; x < shape.x; ++x)
        for (std::size_t a = 0; a < dims; ++a) *out++ = static_cast<float>(row[a] + map.matrix[a][0] * x);
    }
  }
}

// Clamped coordinate of one axis: the lower neighbour, the step to the upper one and the upper
// neighbour's weight. On the last voxel the step and weight are 0, so that integer positions
// return voxel values exactly. `!(x > 0)` also sends NaN to the edge.
struct AxisSample {
  int lower;
  int step;
  float weight;
};

inline AxisSample clamped(float x, int n) {
  const auto last = static_cast<float>(n - 1);
  if (!(x > 0.0F)) x = 0.0F;
  if (x > last) x = last;
  const int lower = static_cast<int>(x);
  return {lower, lower < n - 1 ? 1 : 0, x - static_cast<float>(lower)};
}

// floor(x + 0.5), clamped to [0, n - 1] before any cast; in double so that a float just below
// a half never rounds up.
inline int nearest(float x, int n) {
  if (!(x > 0.0F)) return 0;
  if (x >= static_cast<float>(n - 1)) return n - 1;
  return static_cast<int>(std::floor(static_cast<double>(x) + 0.5));
}

}  // namespace

std::string AugmentationOptions::validate() const {
  if (std::string message = check_range("rotation_degrees", rotation_degrees, 0.0, 45.0); !message.empty())
    return message;
  if (std::string message = check_range("deformation_mm", deformation_mm, 0.0, 20.0); !message.empty()) return message;
  return check_range("deformation_spacing_mm", deformation_spacing_mm, 2.0, 1000.0);
}

SamplingGrid identity_grid(const Shape& shape) {
  SamplingGrid grid;
  grid.shape = shape;
  fill_affine(shape, AffineMap{}, grid.positions);
  return grid;
}

void draw_flips(const Shape& shape, RandomStream& random, bool flip[3]) {
  flip[0] = flip[1] = flip[2] = false;
  for (int axis = 0; axis < shape.dims(); ++axis) flip[axis] = random.uniform() < 0.5;
}

SamplingGrid random_grid(const Geometry& geometry, const AugmentationOptions& options, RandomStream& random) {
  const Shape& shape = geometry.shape;
  AffineMap map;
  if (options.flips) {
    bool flip[3];
    draw_flips(shape, random, flip);
    const std::array<int, 3> extent = extent_of(shape);
    for (int a = 0; a < 3; ++a) {
      if (!flip[a]) continue;
      map.matrix[a][a] = -1.0;
      map.offset[a] = extent[static_cast<std::size_t>(a)] - 1;
    }
  }
  if (options.rotation_degrees > 0.0) apply_rotation(geometry, options.rotation_degrees, random, map);
  SamplingGrid grid;
  grid.shape = shape;
  fill_affine(shape, map, grid.positions);
  if (options.deformation_mm > 0.0) add_displacement(geometry, options, random, grid.positions);
  return grid;
}

void warp_linear(const float* source, float* destination, const SamplingGrid& grid) {
  const Shape& shape = grid.shape;
  FRUGAL_CHECK(grid.positions.size() == shape.voxel_count() * static_cast<std::size_t>(shape.dims()));
  const float* position = grid.positions.data();
  const auto nx = static_cast<std::size_t>(shape.x);
  const std::size_t plane = nx * static_cast<std::size_t>(shape.y);
  if (shape.dims() == 2) {
    for (std::size_t v = 0; v < shape.voxel_count(); ++v, position += 2) {
      const AxisSample x = clamped(position[0], shape.x);
      const AxisSample y = clamped(position[1], shape.y);
      const float* row = source + static_cast<std::size_t>(y.lower) * nx + static_cast<std::size_t>(x.lower);
      const float* next_row = row + static_cast<std::size_t>(y.step) * nx;
      const float low = row[0] + x.weight * (row[x.step] - row[0]);
      const float high = next_row[0] + x.weight * (next_row[x.step] - next_row[0]);
      destination[v] = low + y.weight * (high - low);
    }
    return;
  }
  for (std::size_t v = 0; v < shape.voxel_count(); ++v, position += 3) {
    const AxisSample x = clamped(position[0], shape.x);
    const AxisSample y = clamped(position[1], shape.y);
    const AxisSample z = clamped(position[2], shape.z);
    const float* corner = source + static_cast<std::size_t>(z.lower) * plane + static_cast<std::size_t>(y.lower) * nx +
                          static_cast<std::size_t>(x.lower);
    const std::size_t dy = static_cast<std::size_t>(y.step) * nx;
    const std::size_t dz = static_cast<std::size_t>(z.step) * plane;
    const auto along_x = [&](const float* row) { return row[0] + x.weight * (row[x.step] - row[0]); };
    const float front_low = along_x(corner), front_high = along_x(corner + dy);
    const float back_low = along_x(corner + dz), back_high = along_x(corner + dz + dy);
    const float front = front_low + y.weight * (front_high - front_low);
    const float back = back_low + y.weight * (back_high - back_low);
    destination[v] = front + z.weight * (back - front);
  }
}

void warp_nearest(const float* source, float* destination, const SamplingGrid& grid) {
  const Shape& shape = grid.shape;
  const auto dims = static_cast<std::size_t>(shape.dims());
  FRUGAL_CHECK(grid.positions.size() == shape.voxel_count() * dims);
  const float* position = grid.positions.data();
  const auto nx = static_cast<std::size_t>(shape.x), ny = static_cast<std::size_t>(shape.y);
  for (std::size_t v = 0; v < shape.voxel_count(); ++v, position += dims) {
    const auto x = static_cast<std::size_t>(nearest(position[0], shape.x));
    const auto y = static_cast<std::size_t>(nearest(position[1], shape.y));
    const auto z = dims == 3 ? static_cast<std::size_t>(nearest(position[2], shape.z)) : 0;
    destination[v] = source[(z * ny + y) * nx + x];
  }
}

void copy_flipped(const float* source, float* destination, const Shape& shape, const bool flip[3]) {
  const auto nx = static_cast<std::size_t>(shape.x), ny = static_cast<std::size_t>(shape.y);
  for (int z = 0; z < shape.z; ++z) {
    const auto from_z = static_cast<std::size_t>(flip[2] ? shape.z - 1 - z : z);
    for (int y = 0; y < shape.y; ++y) {
      const auto from_y = static_cast<std::size_t>(flip[1] ? shape.y - 1 - y : y);
      const float* row = source + (from_z * ny + from_y) * nx;
      float* out = destination + (static_cast<std::size_t>(z) * ny + static_cast<std::size_t>(y)) * nx;
      if (flip[0])
        std::reverse_copy(row, row + nx, out);
      else
        std::copy(row, row + nx, out);
    }
  }
}

}  // namespace frugal::learn
