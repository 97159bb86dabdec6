#include "phantoms/object_rendering.h"

#include <algorithm>
#include <cmath>
#include <vector>

namespace frugal {

namespace {

using Vec = std::array<double, 3>;

double dot(const Vec& a, const Vec& b) { return a[0] * b[0] + a[1] * b[1] + a[2] * b[2]; }
Vec sub(const Vec& a, const Vec& b) { return {a[0] - b[0], a[1] - b[1], a[2] - b[2]}; }

// Point n of `samples` + 1 evenly spaced along a straight long axis, centre +- half * direction.
Vec straight_axis_point(const Vec& centre, const Vec& direction, double half, int n, int samples) {
  const double t = samples > 0 ? -half + 2.0 * half * n / samples : 0.0;
  return {centre[0] + t * direction[0], centre[1] + t * direction[1], centre[2] + t * direction[2]};
}

// A shape given by a level function (<= 0 inside) with a Lipschitz bound, so that one evaluation
// at the voxel centre tells whether the voxel can be partly covered.
struct SpheroidLevel {
  const Spheroid& s;
  double lipschitz() const { return 1.0 / s.semi_short_mm; }
  double operator()(const Vec& p) const {
    const Vec d = sub(p, s.centre_mm);
    const double along = dot(d, s.direction);
    const double across2 = std::max(dot(d, d) - along * along, 0.0);
    const double q = along * along / (s.semi_long_mm * s.semi_long_mm) + across2 / (s.semi_short_mm * s.semi_short_mm);
    return std::sqrt(q) - 1.0;  // a norm whose unit ball is the spheroid: Lipschitz 1/semi_short
  }
  double extent(std::size_t axis) const {
    const double u = s.direction[axis];
    return std::sqrt(s.semi_long_mm * s.semi_long_mm * u * u + s.semi_short_mm * s.semi_short_mm * (1.0 - u * u));
  }
  const Vec& centre() const { return s.centre_mm; }
  double axis_length() const { return 2.0 * s.semi_long_mm; }
  Vec axis_point(int n, int samples) const { return straight_axis_point(s.centre_mm, s.direction, s.semi_long_mm, n, samples); }
};

struct CapsuleLevel {
  const Capsule& c;
  double lipschitz() const { return 1.0; }
  double operator()(const Vec& p) const {
    const Vec d = sub(p, c.centre_mm);
    const double along = std::clamp(dot(d, c.direction), -c.half_length_mm, c.half_length_mm);
    const Vec nearest{along * c.direction[0], along * c.direction[1], along * c.direction[2]};
    const Vec off = sub(d, nearest);
    return std::sqrt(dot(off, off)) - c.radius_mm;
  }
  double extent(std::size_t axis) const { return c.half_length_mm * std::abs(c.direction[axis]) + c.radius_mm; }
  const Vec& centre() const { return c.centre_mm; }
  double axis_length() const { return 2.0 * c.half_length_mm; }
  Vec axis_point(int n, int samples) const { return straight_axis_point(c.centre_mm, c.direction, c.half_length_mm, n, samples); }
};

// A tube's level is the nearest of its pieces'; its box is the union of the pieces' boxes.
struct TubeLevel {
  const Tube& tube;
  Vec box_centre{}, box_half{};
  explicit TubeLevel(const Tube& t) : tube(t) {
    Vec low{}, high{};
    tube.bounds(low, high);
    for (std::size_t axis = 0; axis < 3; ++axis) {
      box_centre[axis] = 0.5 * (low[axis] + high[axis]);
      box_half[axis] = 0.5 * (high[axis] - low[axis]);
    }
  }
  double lipschitz() const { return tube.lipschitz(); }
  double operator()(const Vec& p) const { return tube.level(p); }
  double extent(std::size_t axis) const { return box_half[axis]; }
  const Vec& centre() const { return box_centre; }
  double axis_length() const { return tube.length_mm(); }
  Vec axis_point(int n, int samples) const { return tube.point(samples > 0 ? tube.length_mm() * n / samples : 0.0); }
};

// Whether the voxels labelled `id` inside the box [low, high] form exactly one component
// (26-connected in 3D, 8-connected in 2D).
bool is_one_component(const InstanceImage& instances, std::uint16_t id, const int low[3], const int high[3], bool flat) {
  const int nx = high[0] - low[0] + 1, ny = high[1] - low[1] + 1, nz = high[2] - low[2] + 1;
  std::vector<std::uint8_t> state(static_cast<std::size_t>(nx) * static_cast<std::size_t>(ny) * static_cast<std::size_t>(nz), 0);
  const auto local = [&](int i, int j, int k) {
    return (static_cast<std::size_t>(k - low[2]) * static_cast<std::size_t>(ny) + static_cast<std::size_t>(j - low[1])) *
               static_cast<std::size_t>(nx) + static_cast<std::size_t>(i - low[0]);
  };
  int components = 0;
  std::vector<std::array<int, 3>> stack;
  for (int k = low[2]; k <= high[2]; ++k)
    for (int j = low[1]; j <= high[1]; ++j)
      for (int i = low[0]; i <= high[0]; ++i) {
        if (instances.at(i, j, k) != id || state[local(i, j, k)] != 0) continue;
        if (++components > 1) return false;
        stack.push_back({i, j, k});
        state[local(i, j, k)] = 1;
        while (!stack.empty()) {
          const auto [ci, cj, ck] = stack.back();
          stack.pop_back();
          for (int dk = flat ? 0 : -1; dk <= (flat ? 0 : 1); ++dk)
            for (int dj = -1; dj <= 1; ++dj)
              for (int di = -1; di <= 1; ++di) {
                const int x = ci + di, y = cj + dj, z = ck + dk;
                if (x < low[0] || x > high[0] || y < low[1] || y > high[1] || z < low[2] || z > high[2]) continue;
                if (instances.at(x, y, z) != id || state[local(x, y, z)] != 0) continue;
                state[local(x, y, z)] = 1;
                stack.push_back({x, y, z});
              }
        }
      }
  return components == 1;
}

template <class Level>
RenderedObject render_level(const Level& level, float contrast, std::uint16_t id, FloatImage& image,
                            InstanceImage& instances, const LabelImage* allowed) {
  const Geometry& g = image.geometry();
  const Shape& s = g.shape;
  const bool flat = s.z == 1;
  const int sub = flat ? 4 : 3;  // supersampling per axis
  const double half_diagonal =
      0.5 * std::sqrt(g.spacing_mm[0] * g.spacing_mm[0] + g.spacing_mm[1] * g.spacing_mm[1] +
                      (flat ? 0.0 : g.spacing_mm[2] * g.spacing_mm[2]));
  const double margin = level.lipschitz() * half_diagonal;

  int low[3], high[3];
  const int extents[3] = {s.x, s.y, s.z};
  for (std::size_t axis = 0; axis < 3; ++axis) {
    const double centre = (level.centre()[axis] - g.origin_mm[axis]) / g.spacing_mm[axis];
    const double reach = level.extent(axis) / g.spacing_mm[axis] + 1.0;
    low[axis] = std::max(0, static_cast<int>(std::floor(centre - reach)));
    high[axis] = std::min(extents[axis] - 1, static_cast<int>(std::ceil(centre + reach)));
  }
  if (flat) low[2] = high[2] = 0;

  RenderedObject result;
  const auto label = [&](int i, int j, int k) {
    if (instances.at(i, j, k) != 0) return;
    instances.at(i, j, k) = id;
    ++result.labelled_voxels;
    if (result.lowest_slice < 0 || k < result.lowest_slice) result.lowest_slice = k;
    result.highest_slice = std::max(result.highest_slice, k);
  };
  for (int k = low[2]; k <= high[2]; ++k)
    for (int j = low[1]; j <= high[1]; ++j)
      for (int i = low[0]; i <= high[0]; ++i) {
        if (allowed != nullptr && allowed->at(i, j, k) == 0) continue;
        const Vec centre = g.world_mm(i, j, k);
        const double at_centre = level(centre);
        double coverage = 0.0;
        if (at_centre <= -margin) {
          coverage = 1.0;
        } else if (at_centre < margin) {
          int inside = 0;
          for (int c = 0; c < (flat ? 1 : sub); ++c)
            for (int b = 0; b < sub; ++b)
              for (int a = 0; a < sub; ++a) {
                const double oa = ((a + 0.5) / sub - 0.5), ob = ((b + 0.5) / sub - 0.5);
                const double oc = flat ? 0.0 : ((c + 0.5) / sub - 0.5);
                const Vec p{centre[0] + oa * g.spacing_mm[0], centre[1] + ob * g.spacing_mm[1],
                            centre[2] + oc * g.spacing_mm[2]};
                inside += level(p) <= 0.0 ? 1 : 0;
              }
          coverage = static_cast<double>(inside) / (flat ? sub * sub : sub * sub * sub);
        }
        if (coverage <= 0.0) continue;
        image.at(i, j, k) += contrast * static_cast<float>(coverage);
        result.covered_voxels += coverage;
        if (at_centre <= 0.0) label(i, j, k);
      }
  // A thin slanted object can fall apart between voxel centres, or miss every centre. Only then
  // the voxels its long axis (a tube's centreline) crosses join the label, so every object is one 26-connected (8 in
  // 2D) component while objects that are already whole keep the unbiased centre rule.
  if (!is_one_component(instances, id, low, high, flat)) {
    const double step = 0.25 * std::min({g.spacing_mm[0], g.spacing_mm[1], flat ? g.spacing_mm[0] : g.spacing_mm[2]});
    const int samples = static_cast<int>(std::ceil(level.axis_length() / step));
    for (int n = 0; n <= samples; ++n) {
      const Vec point = level.axis_point(n, samples);
      int index[3];
      for (std::size_t axis = 0; axis < 3; ++axis)
        index[axis] = static_cast<int>(std::lround((point[axis] - g.origin_mm[axis]) / g.spacing_mm[axis]));
      if (flat) index[2] = 0;
      if (index[0] < 0 || index[0] >= s.x || index[1] < 0 || index[1] >= s.y || index[2] < 0 || index[2] >= s.z) continue;
      if (allowed != nullptr && allowed->at(index[0], index[1], index[2]) == 0) continue;
      label(index[0], index[1], index[2]);
    }
  }
  return result;
}

}  // namespace

RenderedObject render(const Spheroid& object, float contrast, std::uint16_t id, FloatImage& image,
                      InstanceImage& instances, const LabelImage* allowed) {
  return render_level(SpheroidLevel{object}, contrast, id, image, instances, allowed);
}

RenderedObject render(const Capsule& object, float contrast, std::uint16_t id, FloatImage& image,
                      InstanceImage& instances, const LabelImage* allowed) {
  return render_level(CapsuleLevel{object}, contrast, id, image, instances, allowed);
}

RenderedObject render(const Tube& object, float contrast, std::uint16_t id, FloatImage& image, InstanceImage& instances,
                      const LabelImage* allowed) {
  return render_level(TubeLevel(object), contrast, id, image, instances, allowed);
}

double segment_distance(const Vec& a0, const Vec& a1, const Vec& b0, const Vec& b1) {
  // Closest points of two segments (the standard clamped parametric solution).
  const Vec d1 = sub(a1, a0), d2 = sub(b1, b0), r = sub(a0, b0);
  const double a = dot(d1, d1), e = dot(d2, d2), f = dot(d2, r);
  double s = 0.0, t = 0.0;
  if (a <= 1e-12 && e <= 1e-12) {
    s = t = 0.0;
  } else if (a <= 1e-12) {
    t = std::clamp(f / e, 0.0, 1.0);
  } else {
    const double c = dot(d1, r);
    if (e <= 1e-12) {
      s = std::clamp(-c / a, 0.0, 1.0);
    } else {
      const double b = dot(d1, d2), denominator = a * e - b * b;
      s = denominator > 1e-12 ? std::clamp((b * f - c * e) / denominator, 0.0, 1.0) : 0.0;
      t = (b * s + f) / e;
      if (t < 0.0) {
        t = 0.0;
        s = std::clamp(-c / a, 0.0, 1.0);
      } else if (t > 1.0) {
        t = 1.0;
        s = std::clamp((b - c) / a, 0.0, 1.0);
      }
    }
  }
  const Vec pa{a0[0] + d1[0] * s, a0[1] + d1[1] * s, a0[2] + d1[2] * s};
  const Vec pb{b0[0] + d2[0] * t, b0[1] + d2[1] * t, b0[2] + d2[2] * t};
  const Vec gap = sub(pa, pb);
  return std::sqrt(dot(gap, gap));
}

}  // namespace frugal
