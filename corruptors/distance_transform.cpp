#include "corruptors/distance_transform.h"

#include <cstddef>

namespace frugal {

namespace {

// One line of the transform: out[q] = min_p (h2 (q - p)^2 + in[p]), the lower envelope of
// parabolas rooted at every p (Felzenszwalb & Huttenlocher 2012, algorithm DT(f)). `vertex` and
// `boundary` are scratch of at least n and n + 1 entries.
void transform_line(const double* in, std::size_t n, double h2, double* out, std::vector<std::size_t>& vertex,
                    std::vector<double>& boundary) {
  // Parabola p intersects parabola v at s = ((in[p] + h2 p^2) - (in[v] + h2 v^2)) / (2 h2 (p - v)).
  const auto intersection = [&](std::size_t p, std::size_t v) {
    const double dp = static_cast<double>(p), dv = static_cast<double>(v);
    return ((in[p] + h2 * dp * dp) - (in[v] + h2 * dv * dv)) / (2.0 * h2 * (dp - dv));
  };
  std::size_t k = 0;
  vertex[0] = 0;
  boundary[0] = -1e300;
  boundary[1] = 1e300;
  for (std::size_t q = 1; q < n; ++q) {
    double s = intersection(q, vertex[k]);
    while (s <= boundary[k]) {
      --k;  // boundary[0] is -infinity, so k never passes 0
      s = intersection(q, vertex[k]);
    }
    ++k;
    vertex[k] = q;
    boundary[k] = s;
    boundary[k + 1] = 1e300;
  }
  k = 0;
  for (std::size_t q = 0; q < n; ++q) {
    while (boundary[k + 1] < static_cast<double>(q)) ++k;
    const double d = static_cast<double>(q) - static_cast<double>(vertex[k]);
    out[q] = h2 * d * d + in[vertex[k]];
  }
}

}  // namespace

std::vector<double> squared_distance_mm2(const std::vector<std::uint8_t>& feature, const Shape& shape,
                                         const std::array<double, 3>& spacing_mm) {
  FRUGAL_CHECK(feature.size() == shape.voxel_count());
  const auto nx = static_cast<std::size_t>(shape.x), ny = static_cast<std::size_t>(shape.y),
             nz = static_cast<std::size_t>(shape.z);
  std::vector<double> distance(feature.size());
  bool any = false;
  for (std::size_t i = 0; i < feature.size(); ++i) {
    distance[i] = feature[i] != 0 ? 0.0 : kNoFeatureDistance2;
    any = any || feature[i] != 0;
  }
  if (!any) return distance;

  const std::size_t longest = std::max(nx, std::max(ny, nz));
  std::vector<double> line(longest), result(longest), boundary(longest + 1);
  std::vector<std::size_t> vertex(longest);
  // The transform of a sum of squares separates into one pass per axis; each pass reads a line
  // into `line`, transforms it and writes it back.
  const auto pass = [&](std::size_t n, std::size_t stride, std::size_t lines, auto first_of_line, double h) {
    if (n <= 1) return;
    for (std::size_t l = 0; l < lines; ++l) {
      const std::size_t first = first_of_line(l);
      for (std::size_t i = 0; i < n; ++i) line[i] = distance[first + i * stride];
      transform_line(line.data(), n, h * h, result.data(), vertex, boundary);
      for (std::size_t i = 0; i < n; ++i) distance[first + i * stride] = std::min(result[i], kNoFeatureDistance2);
    }
  };
  pass(
      nx, 1, ny * nz, [&](std::size_t l) { return l * nx; }, spacing_mm[0]);
  pass(
      ny, nx, nx * nz, [&](std::size_t l) { return (l / nx) * nx * ny + l % nx; }, spacing_mm[1]);
  if (shape.z > 1)
    pass(
        nz, nx * ny, nx * ny, [&](std::size_t l) { return l; }, spacing_mm[2]);
  return distance;
}

}  // namespace frugal
