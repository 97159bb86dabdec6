// Samples and losses of every trained strategy. The loop (learner.cpp) is shared; strategies
// differ only here: what a label becomes, and which loss reads the network's map or scalar.
#include <algorithm>
#include <array>
#include <cmath>
#include <vector>

#include "experiments/learn/constraints.h"
#include "experiments/learn/losses_internal.h"
#include "experiments/learn/strategy_losses_internal.h"
#include "experiments/learn/unet_internal.h"
#include "phantoms/user_error.h"

namespace frugal::learn::internal {
namespace {

std::vector<std::int64_t> batch_sizes(int n, const Shape& shape) {
  if (shape.dims() == 2) return {n, 1, shape.y, shape.x};
  return {n, 1, shape.z, shape.y, shape.x};
}

std::vector<std::int64_t> spatial_dims(int dims) {
  if (dims == 2) return {1, 2, 3};
  return {1, 2, 3, 4};
}

torch::Tensor vector_tensor(std::vector<float>& values) {
  return torch::from_blob(values.data(), {static_cast<std::int64_t>(values.size())}, torch::kFloat32).clone();
}

std::vector<float> field_of(const FloatImage& image, const FieldOptions& field) {
  const LabelImage mask = estimate_field(image, field);
  return std::vector<float>(mask.voxels().begin(), mask.voxels().end());
}

std::vector<float> mask_of(const LabelImage& mask) {
  std::vector<float> target(mask.size());
  for (std::size_t i = 0; i < mask.size(); ++i) target[i] = mask.data()[i] != 0 ? 1.0F : 0.0F;
  return target;
}

// 1 on voxels whose centre lies within `radius_mm` of a click, and on the voxel holding each
// click, so that every click marks at least one voxel.
std::vector<float> click_target(const FloatImage& image, const std::vector<Click>& clicks, double radius_mm) {
  const Geometry& geometry = image.geometry();
  const Shape shape = image.shape();
  std::vector<float> target(image.size(), 0.0F);
  for (const Click& click : clicks) {
    const std::array<double, 3> index = geometry.continuous_index(click.position_mm);
    const int reach[3] = {static_cast<int>(std::ceil(radius_mm / geometry.spacing_mm[0])),
                          static_cast<int>(std::ceil(radius_mm / geometry.spacing_mm[1])),
                          shape.z > 1 ? static_cast<int>(std::ceil(radius_mm / geometry.spacing_mm[2])) : 0};
    const int centre[3] = {static_cast<int>(std::lround(index[0])), static_cast<int>(std::lround(index[1])),
                           shape.z > 1 ? static_cast<int>(std::lround(index[2])) : 0};
    for (int z = centre[2] - reach[2]; z <= centre[2] + reach[2]; ++z)
      for (int y = centre[1] - reach[1]; y <= centre[1] + reach[1]; ++y)
        for (int x = centre[0] - reach[0]; x <= centre[0] + reach[0]; ++x) {
          if (x < 0 || y < 0 || z < 0 || x >= shape.x || y >= shape.y || z >= shape.z) continue;
          const double dx = (x - index[0]) * geometry.spacing_mm[0];
          const double dy = (y - index[1]) * geometry.spacing_mm[1];
          const double dz = shape.z > 1 ? (z - index[2]) * geometry.spacing_mm[2] : 0.0;
          const bool holds_click = x == centre[0] && y == centre[1] && z == centre[2];
          if (holds_click || dx * dx + dy * dy + dz * dz <= radius_mm * radius_mm) target[image.index(x, y, z)] = 1.0F;
        }
  }
  return target;
}

void set_interval(Sample& sample, const Label& label, const TrainedModel::Impl& model, const FloatImage& image) {
  const FractionInterval interval =
      grade_fraction_interval(static_cast<int>(std::lround(label.value)), model.options.grading);
  sample.lower = static_cast<float>(interval.lower);
  sample.upper = static_cast<float>(interval.upper);
  sample.field = field_of(image, model.options.field);
}

// Segmentation loss on outlines: cross-entropy + dice_weight * soft Dice, or mask-robust's
// robust pixel term + dice_weight * soft Dice against the target that term uses.
torch::Tensor outline_loss(const torch::Tensor& logits, const torch::Tensor& target, Strategy strategy,
                           const TrainOptions& options) {
  if (strategy != Strategy::mask_robust)
    return torch::binary_cross_entropy_with_logits(logits, target) +
           options.dice_weight * soft_dice_loss(torch::sigmoid(logits), target);
  switch (options.robust_loss) {
    case RobustLoss::generalized_cross_entropy:
      return generalized_cross_entropy(logits, target, options.gce_q) +
             options.dice_weight * soft_dice_loss(torch::sigmoid(logits), target);
    case RobustLoss::bootstrapping: {
      const torch::Tensor mixed = bootstrapped_target(logits, target, options.bootstrap_beta);
      return torch::binary_cross_entropy_with_logits(logits, mixed) +
             options.dice_weight * soft_dice_loss(torch::sigmoid(logits), mixed);
    }
    case RobustLoss::label_smoothing: {
      const double epsilon = options.label_smoothing;
      return torch::binary_cross_entropy_with_logits(logits, target * (1.0 - 2.0 * epsilon) + epsilon) +
             options.dice_weight * soft_dice_loss(torch::sigmoid(logits), target);
    }
  }
  FRUGAL_CHECK(false);
}

// Fraction of each image's field that the map covers, [N].
torch::Tensor field_fraction(const torch::Tensor& logits, const torch::Tensor& field, int dims) {
  const auto reduce = spatial_dims(dims);
  return (torch::sigmoid(logits) * field).sum(reduce) / torch::clamp_min(field.sum(reduce), 1.0);
}

// The weak half of mixed, and the whole of grade-bounds and presence-mil: one term per kind.
torch::Tensor weak_loss(const NetworkOutput& output, const TrainedModel::Impl& model, const torch::Tensor& field,
                        const torch::Tensor& values, const torch::Tensor& lower, const torch::Tensor& upper) {
  switch (model.kind) {
    case LabelKind::grade:
      return size_constraint_penalty(field_fraction(output.map, field, model.shape.dims()), lower, upper).mean();
    case LabelKind::presence:
      return torch::binary_cross_entropy_with_logits(log_sum_exp_pool(output.map, model.options.pooling_sharpness),
                                                     values);
    case LabelKind::count:
      return torch::mse_loss(output.scalar, values);
    default:
      FRUGAL_CHECK(false);
  }
}

}  // namespace

torch::Tensor activate_map(const torch::Tensor& map, Strategy strategy) {
  return strategy == Strategy::count_map ? torch::softplus(map) : torch::sigmoid(map);
}

torch::Tensor voxel_tensor(std::vector<float>& values, int n, const TrainedModel::Impl& model) {
  // Always a copy that owns its memory: with one channel a plain tensor already counts as
  // channels-last contiguous, so contiguous() would alias `values`, which autograd may read
  // after the caller's vector is gone.
  const torch::Tensor view = torch::from_blob(values.data(), batch_sizes(n, model.shape), torch::kFloat32);
  if (model.options.channels_last) return view.clone(channels_last_format(model.shape.dims()));
  return view.clone();
}

void normalise_into(const FloatImage& image, const TrainedModel::Impl& model, std::vector<float>& out) {
  out.resize(image.size());
  const double scale = 1.0 / model.input_scale;
  for (std::size_t i = 0; i < image.size(); ++i)
    out[i] = static_cast<float>((image.data()[i] - model.input_mean) * scale);
}

NetworkOutput forward_float(Network& network, const torch::Tensor& input, bool bfloat16) {
  NetworkOutput output;
  {
    CpuAutocast autocast(bfloat16);
    output = network.forward(input);
  }
  output.map = output.map.to(torch::kFloat32);
  if (output.scalar.defined()) output.scalar = output.scalar.to(torch::kFloat32);
  return output;
}

torch::Tensor log_sum_exp_pool(const torch::Tensor& logits, double sharpness) {
  const torch::Tensor flat = logits.reshape({logits.size(0), -1});
  return (torch::logsumexp(sharpness * flat, 1) - std::log(static_cast<double>(flat.size(1)))) / sharpness;
}

Sample make_sample(const FloatImage& image, const Label& label, const TrainedModel::Impl& model,
                   const TrainOptions& options) {
  Sample sample;
  normalise_into(image, model, sample.image);
  switch (model.options.strategy) {
    case Strategy::mask:
    case Strategy::mask_robust:
    case Strategy::partial:
    case Strategy::partial_naive:
      sample.target = mask_of(label.mask);
      break;
    case Strategy::count_map:
      sample.value = static_cast<float>(label.value);
      sample.capped = label.capped ? 1.0F : 0.0F;
      break;
    case Strategy::grade_bounds:
      set_interval(sample, label, model, image);
      break;
    case Strategy::presence_mil:
      sample.value = static_cast<float>(label.value);
      break;
    case Strategy::points:
      sample.target = click_target(image, label.clicks, options.point_radius_mm);
      sample.value = static_cast<float>(label.clicks.size());
      break;
    case Strategy::scalar:
      sample.value = model.kind == LabelKind::presence
                         ? static_cast<float>(label.value)
                         : static_cast<float>((label.value - model.target_mean) / model.target_scale);
      break;
    case Strategy::mixed:
      if (label.kind == LabelKind::outline) {
        sample.has_mask = 1.0F;
        sample.target = mask_of(label.mask);
      } else if (label.kind == LabelKind::grade) {
        set_interval(sample, label, model, image);
      } else if (label.kind == LabelKind::count) {
        sample.value = static_cast<float>((label.value - model.target_mean) / model.target_scale);
      } else {
        sample.value = static_cast<float>(label.value);
      }
      break;
    case Strategy::threshold:
    case Strategy::line_filter:
      FRUGAL_CHECK(false);
  }
  return sample;
}

torch::Tensor batch_loss(Network& network, const TrainedModel::Impl& model, Batch& batch, const TrainOptions& options) {
  const NetworkOutput output =
      forward_float(network, voxel_tensor(batch.images, batch.size, model), model.options.bfloat16);
  const torch::Tensor& map = output.map;
  const auto reduce = spatial_dims(model.shape.dims());
  const auto voxels_of = [&](std::vector<float>& values) { return voxel_tensor(values, batch.size, model); };
  switch (model.options.strategy) {
    case Strategy::mask:
    case Strategy::mask_robust:
    case Strategy::partial_naive:
      return outline_loss(map, voxels_of(batch.targets), model.options.strategy, options);
    case Strategy::partial:
      return positive_unlabelled_loss(map, voxels_of(batch.targets), options.background_prior);
    case Strategy::count_map: {
      const torch::Tensor counts = torch::softplus(map).sum(reduce);
      const torch::Tensor loss = count_loss(counts, vector_tensor(batch.values), vector_tensor(batch.capped)).mean();
      return loss / (model.target_scale * model.target_scale);
    }
    case Strategy::scalar:
      if (model.kind == LabelKind::presence)
        return torch::binary_cross_entropy_with_logits(output.scalar, vector_tensor(batch.values));
      return torch::mse_loss(output.scalar, vector_tensor(batch.values));
    case Strategy::grade_bounds:
    case Strategy::presence_mil: {
      torch::Tensor field;
      if (!batch.fields.empty()) field = voxels_of(batch.fields);
      return weak_loss(output, model, field, vector_tensor(batch.values), vector_tensor(batch.lower),
                       vector_tensor(batch.upper));
    }
    case Strategy::points: {
      // Clicked voxels are lesion, the rest mostly background (the prior), and the marked area
      // per image lies between clicks x object_size_min and clicks x object_size_max, measured
      // in typical objects so that one object too many or too few costs about 1 (Kervadec et
      // al. 2019's size penalty).
      const torch::Tensor clicked = voxels_of(batch.targets);
      const double typical = 0.5 * (options.object_size_min_mm3 + options.object_size_max_mm3);
      const torch::Tensor clicks = vector_tensor(batch.values);
      const torch::Tensor objects = torch::sigmoid(map).sum(reduce) * (model.voxel_volume_mm3 / typical);
      const torch::Tensor size = size_constraint_penalty(objects, clicks * (options.object_size_min_mm3 / typical),
                                                         clicks * (options.object_size_max_mm3 / typical));
      return marked_voxel_loss(map, clicked, options.background_prior) + size.mean();
    }
    case Strategy::mixed: {
      const torch::Tensor has_mask = vector_tensor(batch.has_mask);
      const torch::Tensor outlined = has_mask.nonzero().squeeze(1);
      const torch::Tensor weak = (has_mask < 0.5).nonzero().squeeze(1);
      torch::Tensor loss = torch::zeros({}, torch::kFloat32);
      if (outlined.numel() > 0) {
        const torch::Tensor targets = voxels_of(batch.targets).index_select(0, outlined);
        loss =
            loss + options.mask_weight * outline_loss(map.index_select(0, outlined), targets, Strategy::mask, options);
      }
      if (weak.numel() > 0) {
        NetworkOutput part{map.index_select(0, weak),
                           output.scalar.defined() ? output.scalar.index_select(0, weak) : torch::Tensor()};
        torch::Tensor field;
        if (!batch.fields.empty()) field = voxels_of(batch.fields).index_select(0, weak);
        loss = loss + options.weak_weight * weak_loss(part, model, field,
                                                      vector_tensor(batch.values).index_select(0, weak),
                                                      vector_tensor(batch.lower).index_select(0, weak),
                                                      vector_tensor(batch.upper).index_select(0, weak));
      }
      return loss;
    }
    case Strategy::threshold:
    case Strategy::line_filter:
      break;
  }
  FRUGAL_CHECK(false);
}

}  // namespace frugal::learn::internal
