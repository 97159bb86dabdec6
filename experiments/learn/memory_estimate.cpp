#include "experiments/learn/memory_estimate.h"

#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <string>

#include "phantoms/text_format.h"
#include "phantoms/user_error.h"

namespace frugal::learn {

namespace {

constexpr double kProcessBytes = 256.0 * 1024 * 1024;  // frugal with libtorch loaded: 185 MB measured
constexpr double kFloatsPerActivation2d = 12.0;
constexpr double kFloatsPerActivation3d = 20.0;
constexpr double kFitShare = 0.9;

std::string gigabytes(double bytes) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.1f GB", bytes / 1e9);
  return buffer;
}

// A batch holds at most every labelled image.
double batch_of(const TrainOptions& options, std::size_t images) {
  return static_cast<double>(std::min<std::size_t>(static_cast<std::size_t>(options.batch_size), images));
}

}  // namespace

double training_memory_bytes(const Shape& shape, const TrainOptions& options, std::size_t images) {
  const int dims = shape.dims();
  double activations = 0.0;  // sum over levels of channels x voxels
  double parameters = 0.0;
  const double kernel = dims == 2 ? 9.0 : 27.0;
  for (int level = 0; level < options.depth; ++level) {
    const double channels = options.width * std::pow(2.0, level);
    const double voxels = static_cast<double>(shape.voxel_count()) / std::pow(2.0, dims * level);
    activations += channels * voxels;
    // Two 3x3(x3) convolutions down and, below the bottleneck, two up after the skip concatenation.
    parameters += kernel * channels * (channels + (level == 0 ? 1.0 : channels / 2.0));
    if (level + 1 < options.depth) parameters += kernel * channels * (3.0 * channels + channels);
  }
  const double per_float = (dims == 2 ? kFloatsPerActivation2d : kFloatsPerActivation3d) * 4.0;
  const double passes = options.consistency_weight > 0.0 ? 2.0 : 1.0;
  // Parameters: weights, gradients and Adam's two moments, 4 bytes each.
  return kProcessBytes + passes * batch_of(options, images) * activations * per_float + 16.0 * parameters;
}

double physical_memory_bytes() {
  const long pages = sysconf(_SC_PHYS_PAGES);
  const long page_size = sysconf(_SC_PAGE_SIZE);
  if (pages <= 0 || page_size <= 0) return 0.0;
  return static_cast<double>(pages) * static_cast<double>(page_size);
}

void check_training_memory(const Shape& shape, const TrainOptions& options, std::size_t images) {
  if (!options.network_file.empty()) return;
  const double needed = training_memory_bytes(shape, options, images);
  const double machine = physical_memory_bytes();
  if (machine <= 0.0 || needed <= kFitShare * machine) return;
  throw UserError("training needs about " + gigabytes(needed) + " of memory (batch size " +
                  format_number(batch_of(options, images)) + ", width " + std::to_string(options.width) + ", depth " +
                  std::to_string(options.depth) + ", images of " + std::to_string(shape.x) + " x " +
                  std::to_string(shape.y) + (shape.z > 1 ? " x " + std::to_string(shape.z) : std::string()) +
                  " voxels), more than 90% of this machine's " + gigabytes(machine) +
                  "; allowed: a smaller batch size, width or depth, or smaller images");
}

}  // namespace frugal::learn
