#pragma once
// Peak memory of training frugal's own network, estimated before anything is allocated, so a
// network that cannot fit is refused with the numbers instead of dying in an allocation.

#include <cstddef>

#include "experiments/learn/learner.h"
#include "phantoms/image.h"

namespace frugal::learn {

// Estimated peak resident bytes of train() on `images` labelled images of `shape` with `options`
// (a batch holds at most min(batch_size, images)): the process with libtorch, plus per image of a
// batch k x the sum over levels of channels x voxels (floats kept for the backward pass), twice
// with consistency training (a second forward pass), plus the parameters with their gradients and
// Adam's moments. k from the peak RSS of frugal train on the target machine (2 threads): 8.7-10.1
// in 2D, 14-17.5 in 3D; 12 and 20 are used, and tests/python/train_memory_cli_test.py keeps the
// estimate above the measured peak.
double training_memory_bytes(const Shape& shape, const TrainOptions& options, std::size_t images);

// The machine's physical memory in bytes (sysconf); 0 when the system does not say.
double physical_memory_bytes();

// Throws UserError when training_memory_bytes exceeds 90% of physical memory, naming both and
// what to reduce. Networks from a TorchScript file (network_file) are not estimated.
void check_training_memory(const Shape& shape, const TrainOptions& options, std::size_t images);

}  // namespace frugal::learn
