#pragma once
// Acquisition noise added to a noiseless image.

#include "phantoms/image.h"
#include "phantoms/random.h"
#include "phantoms/scenario.h"

namespace frugal {

// Magnitude of a complex signal with independent Gaussian noise of SD sigma in each channel:
// Rician for signal > 0, Rayleigh where the signal is 0 (Gudbjartsson & Patz 1995).
void add_rician_noise(FloatImage& image, double sigma, RandomStream& random);

// Additive Gaussian noise of SD sigma per voxel; with correlation_mm > 0 it is white noise passed
// through a Gaussian of that SD and rescaled, so the per-voxel SD stays sigma (CT-like texture).
void add_gaussian_noise(FloatImage& image, double sigma, double correlation_mm, RandomStream& random);

// Dispatches on options.model.
void add_noise(FloatImage& image, const NoiseOptions& options, RandomStream& random);

}  // namespace frugal
