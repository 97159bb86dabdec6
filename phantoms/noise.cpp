#include "phantoms/noise.h"

#include <cmath>

#include "phantoms/image_ops.h"

namespace frugal {

void add_rician_noise(FloatImage& image, double sigma, RandomStream& random) {
  const auto s = static_cast<float>(sigma);
  float* voxels = image.data();
  const std::size_t count = image.size();
  for (std::size_t i = 0; i < count; ++i) {
    float real_noise = 0.0F, imaginary_noise = 0.0F;
    random.normal_pair(real_noise, imaginary_noise);
    const float real = voxels[i] + s * real_noise;
    const float imaginary = s * imaginary_noise;
    voxels[i] = std::sqrt(real * real + imaginary * imaginary);
  }
}

void add_gaussian_noise(FloatImage& image, double sigma, double correlation_mm, RandomStream& random) {
  FloatImage noise(image.geometry());
  float* values = noise.data();
  const std::size_t count = noise.size();
  std::size_t i = 0;
  for (; i + 1 < count; i += 2) random.normal_pair(values[i], values[i + 1]);
  if (i < count) {
    float spare = 0.0F;
    random.normal_pair(values[i], spare);
  }
  double scale = sigma;
  if (correlation_mm > 0.0) {
    const std::array<double, 3> kernel{correlation_mm, correlation_mm, correlation_mm};
    scale /= std::sqrt(gaussian_filter_noise_gain(noise, kernel));
    gaussian_filter(noise, kernel);
  }
  const auto factor = static_cast<float>(scale);
  float* voxels = image.data();
  for (std::size_t v = 0; v < count; ++v) voxels[v] += factor * values[v];
}

void add_noise(FloatImage& image, const NoiseOptions& options, RandomStream& random) {
  switch (options.model) {
    case NoiseModel::none: return;
    case NoiseModel::gaussian: add_gaussian_noise(image, options.sigma, options.correlation_mm, random); return;
    case NoiseModel::rician: add_rician_noise(image, options.sigma, random); return;
  }
}

}  // namespace frugal
