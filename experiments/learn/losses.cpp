#include <string>

#include "experiments/learn/constraints.h"
#include "experiments/learn/losses_internal.h"
#include "phantoms/user_error.h"

namespace frugal::learn {
namespace internal {

torch::Tensor soft_dice_loss(const torch::Tensor& probability, const torch::Tensor& target) {
  const torch::Tensor overlap = (probability * target).sum();
  const torch::Tensor total = probability.sum() + target.sum();
  return 1.0 - (2.0 * overlap + 1.0) / (total + 1.0);
}

torch::Tensor size_constraint_penalty(const torch::Tensor& volume, const torch::Tensor& lower,
                                      const torch::Tensor& upper) {
  const torch::Tensor below = torch::relu(lower - volume);
  const torch::Tensor above = torch::relu(volume - upper);
  return below * below + above * above;
}

torch::Tensor count_loss(const torch::Tensor& predicted, const torch::Tensor& count, const torch::Tensor& capped) {
  const torch::Tensor error = predicted - count;
  // Capped counts only bound from below: an error above the cap is not an error.
  const torch::Tensor counted = torch::where(capped > 0.5, torch::clamp_max(error, 0.0), error);
  return counted * counted;
}

torch::Tensor generalized_cross_entropy(const torch::Tensor& logits, const torch::Tensor& target, double q) {
  const torch::Tensor probability = torch::sigmoid(logits);
  // The floor keeps the gradient of p^q finite where p_y underflows to 0.
  const torch::Tensor p_label = torch::clamp_min(target * probability + (1.0 - target) * (1.0 - probability), 1e-7);
  return ((1.0 - torch::pow(p_label, q)) / q).mean();
}

torch::Tensor bootstrapped_target(const torch::Tensor& logits, const torch::Tensor& target, double beta) {
  const torch::Tensor decision = (logits.detach() > 0.0).to(target.scalar_type());
  return beta * target + (1.0 - beta) * decision;
}

torch::Tensor marked_voxel_loss(const torch::Tensor& logits, const torch::Tensor& marked, double prior_weight) {
  const torch::Tensor towards_lesion =
      torch::binary_cross_entropy_with_logits(logits, torch::ones_like(logits), {}, {}, torch::Reduction::None);
  const torch::Tensor towards_background =
      torch::binary_cross_entropy_with_logits(logits, torch::zeros_like(logits), {}, {}, torch::Reduction::None);
  const torch::Tensor unmarked = 1.0 - marked;
  return (towards_lesion * marked).sum() / torch::clamp_min(marked.sum(), 1.0) +
         prior_weight * (towards_background * unmarked).sum() / torch::clamp_min(unmarked.sum(), 1.0);
}

torch::Tensor positive_unlabelled_loss(const torch::Tensor& logits, const torch::Tensor& marked,
                                       double unmarked_weight) {
  const torch::Tensor towards_lesion =
      torch::binary_cross_entropy_with_logits(logits, torch::ones_like(logits), {}, {}, torch::Reduction::None);
  const torch::Tensor towards_background =
      torch::binary_cross_entropy_with_logits(logits, torch::zeros_like(logits), {}, {}, torch::Reduction::None);
  const double voxels = static_cast<double>(logits.numel());
  return ((towards_lesion * marked).sum() + unmarked_weight * (towards_background * (1.0 - marked)).sum()) / voxels;
}

}  // namespace internal

FractionInterval grade_fraction_interval(int grade, const GradingOptions& grading) {
  if (grade < 0 || grade >= grading.bins())
    throw UserError("grade " + std::to_string(grade) + " is outside the rater's bins 0.." +
                    std::to_string(grading.bins() - 1));
  const auto index = static_cast<std::size_t>(grade);
  FractionInterval interval;
  interval.lower = grade == 0 ? 0.0 : grading.bin_edges[index - 1];
  interval.upper = index < grading.bin_edges.size() ? grading.bin_edges[index] : 1.0;
  return interval;
}

double size_constraint_penalty(double volume, double lower, double upper) {
  const auto as_tensor = [](double value) { return torch::tensor({value}, torch::kFloat64); };
  return internal::size_constraint_penalty(as_tensor(volume), as_tensor(lower), as_tensor(upper)).item<double>();
}

}  // namespace frugal::learn
