#pragma once
// Losses of the strategies (internal: torch types). Each names its published source.

#include <torch/torch.h>

namespace frugal::learn::internal {

// Soft Dice loss 1 - (2 sum(p t) + eps) / (sum p + sum t + eps) over the whole batch (the
// "soft Dice" of Milletari et al. 2016, V-Net, in its squared-free form). `probability` and
// `target` have the same shape; eps = 1 keeps empty batches finite.
torch::Tensor soft_dice_loss(const torch::Tensor& probability, const torch::Tensor& target);

// Size-constraint penalty (Kervadec et al. 2019): (V - a)^2 where V < a, (V - b)^2 where V > b,
// 0 inside [a, b]; element-wise over V, a and b.
torch::Tensor size_constraint_penalty(const torch::Tensor& volume, const torch::Tensor& lower,
                                      const torch::Tensor& upper);

// Count loss of count-map: squared error between the density's sum and the count; a capped
// count ("more than cap") is a lower bound, penalised only when the sum falls below it.
torch::Tensor count_loss(const torch::Tensor& predicted, const torch::Tensor& count, const torch::Tensor& capped);

}  // namespace frugal::learn::internal
