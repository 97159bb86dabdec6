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

// Generalized cross entropy (Zhang & Sabuncu, "Generalized cross entropy loss for training deep
// neural networks with noisy labels", NeurIPS 2018) for a binary map: mean of (1 - p_y^q) / q,
// where p_y is the probability given to the labelled class. q -> 0 is cross-entropy, q = 1 the
// noise-tolerant mean absolute error.
torch::Tensor generalized_cross_entropy(const torch::Tensor& logits, const torch::Tensor& target, double q);

// Hard bootstrapping (Reed et al., "Training deep neural networks on noisy labels with
// bootstrapping", ICLR 2015 workshop): the target becomes beta * label + (1 - beta) * the
// network's own current decision (p > 0.5, not differentiated).
torch::Tensor bootstrapped_target(const torch::Tensor& logits, const torch::Tensor& target, double beta);

// Cross-entropy on marked voxels only (mean over marked voxels of the batch) plus a weak prior
// that unmarked voxels are background (weight times the mean cross-entropy towards 0 over
// unmarked voxels): partial labels say where lesions are, not where they are not.
torch::Tensor marked_voxel_loss(const torch::Tensor& logits, const torch::Tensor& marked, double prior_weight);

// partial's loss: positive-unlabelled learning by weighted logistic regression (Lee & Liu,
// "Learning with positive and unlabeled examples using weighted logistic regression", ICML 2003;
// from memory): marked voxels are positives with weight 1, unmarked (unlabelled) voxels are
// negatives with weight `unmarked_weight` < 1, both summed per voxel and divided by the batch's
// voxel count. The map is then above 0.5 where P(marked | x) > w / (1 + w); when the rater marks
// a share c of lesion voxels, lesion voxels have P(marked | x) near c (Elkan & Noto, KDD 2008), so
// w well below c / (2 - c) keeps unmarked lesions above 0.5 while background stays below.
torch::Tensor positive_unlabelled_loss(const torch::Tensor& logits, const torch::Tensor& marked,
                                       double unmarked_weight);

}  // namespace frugal::learn::internal
