#pragma once
// What each strategy learns from (internal: torch types): one subject turned into a Sample, a
// batch of samples, and the strategy's loss on a batch. docs/learning.md states each loss.

#include <torch/torch.h>

#include <vector>

#include "experiments/learn/model_internal.h"

namespace frugal::learn::internal {

// One labelled subject, ready for batching.
struct Sample {
  std::vector<float> image;   // normalised voxels
  std::vector<float> target;  // per voxel: outline (mask, mask-robust, mixed), marked (partial), clicked (points)
  std::vector<float> field;   // per voxel: the field estimate (grade-bounds, mixed on grades)
  float has_mask = 0.0F;      // mixed: 1 when this subject's label is an outline
  float value = 0.0F;         // count, standardised scalar target, presence, or number of clicks
  float capped = 0.0F;        // count-map: the count is a lower bound
  float lower = 0.0F;         // grade-bounds: the grade's fraction interval
  float upper = 1.0F;
};

// Samples gathered for one optimiser step; per-voxel arrays are empty when no member has them.
struct Batch {
  int size = 0;
  std::vector<float> images, targets, fields;
  std::vector<float> has_mask, values, capped, lower, upper;
};

Sample make_sample(const FloatImage& image, const Label& label, const TrainedModel::Impl& model,
                   const TrainOptions& options);

// The strategy's loss on one batch (a mean over the batch's subjects).
torch::Tensor batch_loss(Network& network, const TrainedModel::Impl& model, Batch& batch, const TrainOptions& options);

// Log-sum-exp pooling of a map's logits to one logit per image, (1/r) log(mean exp(r z)): a
// smooth maximum (r -> infinity) that tends to the mean as r -> 0 (Pinheiro & Collobert 2015).
torch::Tensor log_sum_exp_pool(const torch::Tensor& logits, double sharpness);

}  // namespace frugal::learn::internal
