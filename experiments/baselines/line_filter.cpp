#include "experiments/baselines/line_filter.h"

#include <Eigen/Eigenvalues>
#include <algorithm>
#include <array>
#include <cmath>
#include <cstdint>
#include <sstream>
#include <utility>
#include <vector>

#include "experiments/measure/connected_components.h"
#include "phantoms/key_path.h"
#include "phantoms/user_error.h"

namespace frugal::baselines {
namespace {

// The parts of the vesselness that do not depend on c: the shape factor (0 when the signs rule
// the voxel out) and S^2.
struct VesselTerms {
  double shape = 0.0;
  double norm2 = 0.0;
};

// a / b, with 0 for a zero denominator (the numerator is then 0 too, since |l1| <= |l2| <= |l3|).
double ratio(double a, double b) { return b != 0.0 ? a / b : 0.0; }

VesselTerms terms_2d(double a, double b, double beta) {
  if (std::abs(a) > std::abs(b)) std::swap(a, b);
  VesselTerms terms;
  terms.norm2 = a * a + b * b;
  if (b > 0.0) return terms;  // a dark line (or a bright line when the image is negated)
  const double rb = ratio(a, b);
  terms.shape = std::exp(-rb * rb / (2.0 * beta * beta));
  return terms;
}

VesselTerms terms_3d(double a, double b, double c, double alpha, double beta) {
  // Sort by magnitude: |a| <= |b| <= |c|.
  if (std::abs(a) > std::abs(b)) std::swap(a, b);
  if (std::abs(b) > std::abs(c)) std::swap(b, c);
  if (std::abs(a) > std::abs(b)) std::swap(a, b);
  VesselTerms terms;
  terms.norm2 = a * a + b * b + c * c;
  if (b > 0.0 || c > 0.0) return terms;
  const double ra = ratio(std::abs(b), std::abs(c));
  const double rb = ratio(std::abs(a), std::sqrt(std::abs(b * c)));
  terms.shape = (1.0 - std::exp(-ra * ra / (2.0 * alpha * alpha))) * std::exp(-rb * rb / (2.0 * beta * beta));
  return terms;
}

double structure_factor(double norm2, double c) { return 1.0 - std::exp(-norm2 / (2.0 * c * c)); }

// One axis of the grid as a family of lines: `length` samples `stride` apart, `blocks` groups of
// `stride` interleaved lines, each group `length * stride` long.
struct AxisLayout {
  std::size_t length = 0, stride = 1, blocks = 1;
};

AxisLayout axis_layout(const Shape& shape, int axis) {
  const auto nx = static_cast<std::size_t>(shape.x), ny = static_cast<std::size_t>(shape.y),
             nz = static_cast<std::size_t>(shape.z);
  if (axis == 0) return {nx, 1, ny * nz};
  if (axis == 1) return {ny, nx, nz};
  return {nz, nx * ny, 1};
}

// Gaussian smoothing along one axis with scipy.ndimage's discrete kernel (radius
// int(4 sigma + 0.5), sampled exp(-x^2 / 2 sigma^2), normalised) and its 'reflect' border
// (d c b a | a b c d | d c b a, repeated for short axes). Hand-written because no library
// function here filters 3D grids in double with this border; phantoms' gaussian_filter is float
// with OpenCV's reflect-101 border and would move the response near the edges.
void smooth_along_axis(std::vector<double>& data, const Shape& shape, int axis, double sigma_voxels,
                       std::vector<double>& scratch) {
  const AxisLayout layout = axis_layout(shape, axis);
  const int radius = static_cast<int>(4.0 * sigma_voxels + 0.5);
  std::vector<double> weights(static_cast<std::size_t>(2 * radius + 1));
  double total = 0.0;
  for (int t = -radius; t <= radius; ++t) {
    const double w = std::exp(-0.5 * static_cast<double>(t) * static_cast<double>(t) / (sigma_voxels * sigma_voxels));
    weights[static_cast<std::size_t>(t + radius)] = w;
    total += w;
  }
  for (double& w : weights) w /= total;
  const auto n = static_cast<std::int64_t>(layout.length);
  std::vector<std::size_t> source(layout.length + 2 * static_cast<std::size_t>(radius));
  for (std::int64_t m = -radius; m < n + radius; ++m) {
    std::int64_t q = ((m % (2 * n)) + 2 * n) % (2 * n);
    if (q >= n) q = 2 * n - 1 - q;
    source[static_cast<std::size_t>(m + radius)] = static_cast<std::size_t>(q);
  }
  const std::size_t line_span = layout.length * layout.stride;
  if (layout.stride == 1) {
    // Contiguous lines: pad each once, then a plain dot product per sample.
    scratch.resize(source.size());
    for (std::size_t block = 0; block < layout.blocks; ++block) {
      double* line = data.data() + block * line_span;
      for (std::size_t m = 0; m < source.size(); ++m) scratch[m] = line[source[m]];
      for (std::size_t j = 0; j < layout.length; ++j) {
        double total_j = 0.0;
        for (std::size_t t = 0; t < weights.size(); ++t) total_j += weights[t] * scratch[j + t];
        line[j] = total_j;
      }
    }
    return;
  }
  scratch.resize(line_span);
  const std::vector<double>& in = scratch;
  for (std::size_t block = 0; block < layout.blocks; ++block) {
    double* out = data.data() + block * line_span;
    std::copy(out, out + line_span, scratch.begin());
    for (std::size_t j = 0; j < layout.length; ++j) {
      double* row = out + j * layout.stride;
      std::fill(row, row + layout.stride, 0.0);
      for (std::size_t t = 0; t < weights.size(); ++t) {
        const double w = weights[t];
        const double* from = in.data() + source[j + t] * layout.stride;
        for (std::size_t k = 0; k < layout.stride; ++k) row[k] += w * from[k];
      }
    }
  }
}

// numpy.gradient along one axis (central differences, one-sided at both ends), divided by the
// spacing in mm.
void gradient_along_axis(const std::vector<double>& data, const Shape& shape, int axis, double spacing_mm,
                         std::vector<double>& out) {
  const AxisLayout layout = axis_layout(shape, axis);
  out.resize(data.size());
  const std::size_t line_span = layout.length * layout.stride, s = layout.stride, n = layout.length;
  for (std::size_t block = 0; block < layout.blocks; ++block) {
    const double* f = data.data() + block * line_span;
    double* g = out.data() + block * line_span;
    for (std::size_t k = 0; k < s; ++k) {
      g[k] = (f[s + k] - f[k]) / spacing_mm;
      g[(n - 1) * s + k] = (f[(n - 1) * s + k] - f[(n - 2) * s + k]) / spacing_mm;
    }
    for (std::size_t j = 1; j + 1 < n; ++j)
      for (std::size_t k = 0; k < s; ++k) g[j * s + k] = (f[(j + 1) * s + k] - f[(j - 1) * s + k]) / (2.0 * spacing_mm);
  }
}

// Buffers reused across scales: fresh multi-megabyte vectors per scale cost more in page faults
// than the filtering itself.
struct Workspace {
  std::vector<double> smoothed, first, scratch;
  std::array<std::vector<double>, 6> hessian;
};

// The scale-normalised Hessian (sigma_mm^2 times second derivatives in mm^-2) into
// workspace.hessian, upper triangle in the order xx, xy, (xz,) yy, (yz,) zz.
void hessian(const std::vector<double>& image, const Geometry& geometry, double sigma_mm, Workspace& workspace) {
  const Shape& shape = geometry.shape;
  const int dims = shape.dims();
  workspace.smoothed.assign(image.begin(), image.end());
  for (int axis = 0; axis < dims; ++axis)
    smooth_along_axis(workspace.smoothed, shape, axis, sigma_mm / geometry.spacing_mm[static_cast<std::size_t>(axis)],
                      workspace.scratch);
  std::size_t element = 0;
  for (int a = 0; a < dims; ++a) {
    gradient_along_axis(workspace.smoothed, shape, a, geometry.spacing_mm[static_cast<std::size_t>(a)],
                        workspace.first);
    for (int b = a; b < dims; ++b) {
      std::vector<double>& h = workspace.hessian[element++];
      gradient_along_axis(workspace.first, shape, b, geometry.spacing_mm[static_cast<std::size_t>(b)], h);
      for (double& v : h) v *= sigma_mm * sigma_mm;
    }
  }
}

void scale_terms(const std::array<std::vector<double>, 6>& h, int dims, const LineFilterOptions& options,
                 std::vector<VesselTerms>& terms) {
  const std::size_t count = h[0].size();
  terms.resize(count);
  if (dims == 2) {
    const std::vector<double>&xx = h[0], &xy = h[1], &yy = h[2];
    for (std::size_t v = 0; v < count; ++v) {
      // Closed form for a symmetric 2x2 matrix.
      const double mean = 0.5 * (xx[v] + yy[v]);
      const double radius = std::hypot(0.5 * (xx[v] - yy[v]), xy[v]);
      terms[v] = terms_2d(mean - radius, mean + radius, options.beta);
    }
    return;
  }
  const std::vector<double>&xx = h[0], &xy = h[1], &xz = h[2], &yy = h[3], &yz = h[4], &zz = h[5];
  Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d> solver;
  Eigen::Matrix3d m;
  for (std::size_t v = 0; v < count; ++v) {
    m << xx[v], xy[v], xz[v], xy[v], yy[v], yz[v], xz[v], yz[v], zz[v];
    solver.computeDirect(m, Eigen::EigenvaluesOnly);
    const Eigen::Vector3d& l = solver.eigenvalues();
    terms[v] = terms_3d(l[0], l[1], l[2], options.alpha, options.beta);
  }
}

std::string shape_text(const Shape& shape) {
  std::ostringstream text;
  text << shape.x << "x" << shape.y << "x" << shape.z;
  return text.str();
}

}  // namespace

double vesselness_2d(double lambda_a, double lambda_b, double beta, double c) {
  FRUGAL_CHECK(c > 0.0 && beta > 0.0);
  const VesselTerms terms = terms_2d(lambda_a, lambda_b, beta);
  return terms.shape * structure_factor(terms.norm2, c);
}

double vesselness_3d(double lambda_a, double lambda_b, double lambda_c, double alpha, double beta, double c) {
  FRUGAL_CHECK(c > 0.0 && alpha > 0.0 && beta > 0.0);
  const VesselTerms terms = terms_3d(lambda_a, lambda_b, lambda_c, alpha, beta);
  return terms.shape * structure_factor(terms.norm2, c);
}

std::string LineFilterOptions::validate() const {
  std::ostringstream message;
  if (sigmas_mm.empty()) return "sigmas_mm: empty; give at least one scale in mm (e.g. [1, 1.5, 2])";
  for (std::size_t i = 0; i < sigmas_mm.size(); ++i)
    if (!(sigmas_mm[i] > 0.0) || !std::isfinite(sigmas_mm[i])) {
      message << "sigmas_mm[" << i << "]: " << sigmas_mm[i] << " is not allowed; scales must be > 0 mm";
      return message.str();
    }
  if (!(alpha > 0.0) || !std::isfinite(alpha))
    message << "alpha: " << alpha << " is not allowed; use a value > 0 (Frangi: 0.5)";
  else if (!(beta > 0.0) || !std::isfinite(beta))
    message << "beta: " << beta << " is not allowed; use a value > 0 (Frangi: 0.5)";
  else if (!(c >= 0.0) || !std::isfinite(c))
    message << "c: " << c << " is not allowed; use a value > 0 in image units, or 0 for half the largest Hessian norm";
  return message.str();
}

LineFilterResult line_filter(const FloatImage& image, const LineFilterOptions& options) {
  const std::string problem = options.validate();
  if (!problem.empty()) throw UserError(key_path_under("line_filter", problem));
  const Shape& shape = image.shape();
  const int dims = shape.dims();
  if (shape.x < 3 || shape.y < 3 || (dims == 3 && shape.z < 3))
    throw UserError("line_filter: the image is " + shape_text(shape) +
                    " voxels; every axis the filter uses needs at least 3 voxels");
  for (int axis = 0; axis < dims; ++axis)
    if (!(image.geometry().spacing_mm[static_cast<std::size_t>(axis)] > 0.0))
      throw UserError("line_filter: the image spacing must be > 0 mm on every axis");

  std::vector<double> signal(image.voxels().begin(), image.voxels().end());
  if (options.dark_structures)
    for (double& v : signal) v = -v;

  LineFilterResult result;
  result.response = FloatImage(image.geometry(), 0.0F);
  std::vector<double> best(image.size(), 0.0);
  auto fold = [&best](const std::vector<VesselTerms>& terms, double c) {
    for (std::size_t v = 0; v < terms.size(); ++v)
      best[v] = std::max(best[v], terms[v].shape * structure_factor(terms[v].norm2, c));
  };
  Workspace workspace;
  if (options.c > 0.0) {
    // A fixed c: fold each scale in as soon as it is computed.
    result.c_used = options.c;
    std::vector<VesselTerms> terms;
    for (double sigma : options.sigmas_mm) {
      hessian(signal, image.geometry(), sigma, workspace);
      scale_terms(workspace.hessian, dims, options, terms);
      fold(terms, options.c);
    }
  } else {
    // Half the largest Hessian norm over every voxel and scale, so that every scale is weighed
    // with the same c: all scales are kept until it is known.
    std::vector<std::vector<VesselTerms>> scales(options.sigmas_mm.size());
    double largest_norm2 = 0.0;
    for (std::size_t s = 0; s < scales.size(); ++s) {
      hessian(signal, image.geometry(), options.sigmas_mm[s], workspace);
      scale_terms(workspace.hessian, dims, options, scales[s]);
      for (const VesselTerms& t : scales[s]) largest_norm2 = std::max(largest_norm2, t.norm2);
    }
    result.c_used = 0.5 * std::sqrt(largest_norm2);
    if (result.c_used > 0.0)
      for (const auto& terms : scales) fold(terms, result.c_used);
  }
  for (std::size_t v = 0; v < best.size(); ++v) result.response.data()[v] = static_cast<float>(best[v]);
  return result;
}

std::string LineCountOptions::validate() const {
  if (std::string problem = key_path_under("filter", filter.validate()); !problem.empty()) return problem;
  std::ostringstream message;
  if (!std::isfinite(threshold) || threshold < 0.0 ||
      (threshold_kind == ResponseThreshold::relative && (threshold <= 0.0 || threshold > 1.0)))
    message << "threshold: " << threshold
            << " is not allowed; relative thresholds lie in (0, 1], absolute ones are >= 0";
  else if (connectivity != 0 && connectivity != 4 && connectivity != 8 && connectivity != 6 && connectivity != 18 &&
           connectivity != 26)
    message << "connectivity: " << connectivity << " is not allowed; use 0, 4 or 8 (2D), 6, 18 or 26 (3D)";
  else if (min_voxels < 1)
    message << "min_voxels: " << min_voxels << " is not allowed; use 1 or more";
  else if (!(min_length_mm >= 0.0) || !(max_length_mm >= min_length_mm) || !std::isfinite(max_length_mm))
    message << "min_length_mm/max_length_mm: " << min_length_mm << "/" << max_length_mm
            << " is not allowed; use 0 <= min_length_mm <= max_length_mm, both finite";
  else if (!(min_elongation >= 1.0) || !std::isfinite(min_elongation))
    message << "min_elongation: " << min_elongation << " is not allowed; use a ratio >= 1";
  return message.str();
}

LineCountResult count_lines(const FloatImage& image, const LineCountOptions& options, const LabelImage* field) {
  const std::string problem = options.validate();
  if (!problem.empty()) throw UserError(key_path_under("line_count", problem));
  const Shape& shape = image.shape();
  const int dims = shape.dims();
  const measure::ConnectivityOptions connectivity{options.connectivity};
  const std::string connectivity_problem = connectivity.validate(dims);
  if (!connectivity_problem.empty()) throw UserError("line_count: " + connectivity_problem);
  if (field != nullptr && field->shape() != shape)
    throw UserError("line_count: the field mask is " + shape_text(field->shape()) + " voxels but the image is " +
                    shape_text(shape) + "; the mask must have the image's grid");

  LineFilterResult filtered = line_filter(image, options.filter);
  LineCountResult result;
  result.c_used = filtered.c_used;
  const std::vector<float>& response = filtered.response.voxels();
  const double peak = response.empty() ? 0.0 : *std::max_element(response.begin(), response.end());
  result.threshold_used =
      options.threshold_kind == ResponseThreshold::relative ? options.threshold * peak : options.threshold;

  LabelImage candidates(image.geometry(), 0);
  for (std::size_t v = 0; v < response.size(); ++v)
    candidates.data()[v] = response[v] > 0.0F && response[v] >= result.threshold_used ? 1 : 0;
  const measure::ComponentLabels labels = measure::label_components(candidates, connectivity);

  // Two passes over the labels: voxel-centre means, then second moments about them (mm).
  const Geometry& geometry = image.geometry();
  const std::array<double, 3>& spacing = geometry.spacing_mm;
  const auto components = static_cast<std::size_t>(labels.count);
  std::vector<Eigen::Vector3d> sum(components, Eigen::Vector3d::Zero());
  std::vector<Eigen::Matrix3d> moment(components, Eigen::Matrix3d::Zero());
  std::vector<double> peaks(components, 0.0);
  auto for_each_voxel = [&](auto&& visit) {
    for (int z = 0; z < shape.z; ++z)
      for (int y = 0; y < shape.y; ++y)
        for (int x = 0; x < shape.x; ++x) {
          const std::size_t v = labels.labels.index(x, y, z);
          const std::int32_t label = labels.labels.data()[v];
          if (label > 0) visit(static_cast<std::size_t>(label - 1), Eigen::Vector3d(x, y, z), v);
        }
  };
  for_each_voxel([&](std::size_t c, const Eigen::Vector3d& index, std::size_t v) {
    sum[c] += index;
    peaks[c] = std::max(peaks[c], static_cast<double>(response[v]));
  });
  const Eigen::Vector3d to_mm(spacing[0], spacing[1], spacing[2]);
  for_each_voxel([&](std::size_t c, const Eigen::Vector3d& index, std::size_t) {
    const Eigen::Vector3d d = (index - sum[c] / static_cast<double>(labels.sizes[c])).cwiseProduct(to_mm);
    moment[c] += d * d.transpose();
  });

  const double voxel_mm3 = geometry.voxel_volume_mm3();
  for (std::size_t c = 0; c < components; ++c) {
    LineComponent component;
    component.voxels = labels.sizes[c];
    const auto n = static_cast<double>(component.voxels);
    const Eigen::Vector3d mean = sum[c] / n;
    component.centre_mm = geometry.world_mm(mean[0], mean[1], mean[2]);
    component.volume_mm3 = n * voxel_mm3;
    component.peak_response = peaks[c];
    Eigen::Matrix3d covariance = moment[c] / n;
    for (int axis = 0; axis < dims; ++axis)
      covariance(axis, axis) +=
          spacing[static_cast<std::size_t>(axis)] * spacing[static_cast<std::size_t>(axis)] / 12.0;
    Eigen::SelfAdjointEigenSolver<Eigen::Matrix3d> solver(covariance, Eigen::EigenvaluesOnly);
    const Eigen::Vector3d& l = solver.eigenvalues();  // ascending
    component.length_mm = 4.0 * std::sqrt(std::max(l[2], 0.0));
    component.width_mm = 4.0 * std::sqrt(std::max(l[1], 0.0));
    bool in_field = true;
    if (field != nullptr) {
      const int cx = std::clamp(static_cast<int>(std::lround(mean[0])), 0, shape.x - 1);
      const int cy = std::clamp(static_cast<int>(std::lround(mean[1])), 0, shape.y - 1);
      const int cz = std::clamp(static_cast<int>(std::lround(mean[2])), 0, shape.z - 1);
      in_field = field->at(cx, cy, cz) != 0;
    }
    component.counted = in_field && component.voxels >= static_cast<std::size_t>(options.min_voxels) &&
                        component.length_mm >= options.min_length_mm && component.length_mm <= options.max_length_mm &&
                        component.length_mm >= options.min_elongation * component.width_mm;
    result.count += component.counted ? 1 : 0;
    result.components.push_back(component);
  }
  result.response = std::move(filtered.response);
  return result;
}

}  // namespace frugal::baselines
