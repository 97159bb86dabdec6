// The torch-free half of the learner interface: names, options, the training set and the field.
#include <algorithm>
#include <cmath>
#include <string>
#include <vector>

#include "experiments/learn/learner.h"
#include "experiments/measure/connected_components.h"
#include "phantoms/key_path.h"
#include "phantoms/text_format.h"
#include "phantoms/user_error.h"

namespace frugal::learn {
namespace {

// One name per value of an enum: the names users type and files record.
template <class Enum>
struct Named {
  Enum value;
  const char* name;
};

constexpr Named<Strategy> kStrategyNames[] = {
    {Strategy::mask, "mask"},
    {Strategy::mask_robust, "mask-robust"},
    {Strategy::partial, "partial"},
    {Strategy::partial_naive, "partial-naive"},
    {Strategy::count_map, "count-map"},
    {Strategy::grade_bounds, "grade-bounds"},
    {Strategy::presence_mil, "presence-mil"},
    {Strategy::points, "points"},
    {Strategy::scalar, "scalar"},
    {Strategy::mixed, "mixed"},
    {Strategy::threshold, "threshold"},
    {Strategy::line_filter, "line-filter"},
};
constexpr Named<RobustLoss> kRobustLossNames[] = {
    {RobustLoss::generalized_cross_entropy, "gce"},
    {RobustLoss::bootstrapping, "bootstrap"},
    {RobustLoss::label_smoothing, "smoothing"},
};
constexpr Named<Normalization> kNormalizationNames[] = {
    {Normalization::batch, "batch"},
    {Normalization::instance, "instance"},
    {Normalization::none, "none"},
};

template <class Enum, std::size_t N>
std::string name_of(const Named<Enum> (&table)[N], Enum value) {
  for (const auto& entry : table)
    if (entry.value == value) return entry.name;
  FRUGAL_CHECK(false);
}

// Throws UserError "unknown <what> '<name>'; allowed: ..." for a name not in the table.
template <class Enum, std::size_t N>
Enum value_named(const Named<Enum> (&table)[N], const std::string& name, const char* what) {
  std::string allowed;
  for (const auto& entry : table) {
    if (name == entry.name) return entry.value;
    allowed += std::string(allowed.empty() ? "" : ", ") + entry.name;
  }
  throw UserError(std::string("unknown ") + what + " '" + name + "'; allowed: " + allowed);
}

}  // namespace

std::string to_string(Strategy strategy) { return name_of(kStrategyNames, strategy); }

Strategy strategy_from_string(const std::string& name) { return value_named(kStrategyNames, name, "strategy"); }

std::vector<LabelKind> accepted_label_kinds(Strategy strategy) {
  switch (strategy) {
    case Strategy::mask:
    case Strategy::mask_robust:
      return {LabelKind::outline};
    case Strategy::partial:
    case Strategy::partial_naive:
      return {LabelKind::partial_mask};
    case Strategy::count_map:
      return {LabelKind::count};
    case Strategy::grade_bounds:
      return {LabelKind::grade};
    case Strategy::presence_mil:
      return {LabelKind::presence};
    case Strategy::points:
      return {LabelKind::points};
    case Strategy::scalar:
      return {LabelKind::count, LabelKind::grade, LabelKind::presence};
    case Strategy::mixed:
      return {LabelKind::outline, LabelKind::count, LabelKind::grade, LabelKind::presence};
    case Strategy::threshold:
    case Strategy::line_filter:
      return {};
  }
  FRUGAL_CHECK(false);
}

bool is_map_strategy(Strategy strategy) { return strategy != Strategy::scalar && !is_classical(strategy); }
bool is_classical(Strategy strategy) { return strategy == Strategy::threshold || strategy == Strategy::line_filter; }

std::string to_string(RobustLoss loss) { return name_of(kRobustLossNames, loss); }

RobustLoss robust_loss_from_string(const std::string& name) {
  return value_named(kRobustLossNames, name, "robust loss");
}

std::string to_string(Normalization normalization) { return name_of(kNormalizationNames, normalization); }

Normalization normalization_from_string(const std::string& name) {
  return value_named(kNormalizationNames, name, "normalization");
}

std::string FieldOptions::validate() const {
  if (std::isnan(low) || std::isnan(high) || !(low < high))
    return "low = " + format_number(low) + ", high = " + format_number(high) + ": low must be below high";
  return "";
}

LabelImage estimate_field(const FloatImage& image, const FieldOptions& field) {
  LabelImage mask(image.geometry(), 0);
  for (std::size_t i = 0; i < image.size(); ++i) {
    const double value = image.data()[i];
    mask.data()[i] = value >= field.low && value <= field.high ? 1 : 0;
  }
  if (field.drop_border_connected) measure::clear_border_components(mask);
  if (std::none_of(mask.voxels().begin(), mask.voxels().end(), [](std::uint8_t v) { return v != 0; }))
    std::fill(mask.voxels().begin(), mask.voxels().end(), std::uint8_t{1});
  return mask;
}

FieldOptions default_field_for_family(const std::string& family) {
  FieldOptions field;
  if (family == "streaks") return field;
  if (family == "voids") {
    field.high = -400.0;
    field.drop_border_connected = true;
    return field;
  }
  throw UserError("unknown phantom family '" + family + "'; allowed: streaks, voids");
}

std::string TrainOptions::validate() const {
  if (epochs < 1) return "epochs = " + format_number(epochs) + ": must be at least 1";
  if (batch_size < 1) return "batch_size = " + format_number(batch_size) + ": must be at least 1";
  if (!(learning_rate > 0.0) || !std::isfinite(learning_rate))
    return "learning_rate = " + format_number(learning_rate) + ": must be a positive number";
  if (!(weight_decay >= 0.0) || !std::isfinite(weight_decay))
    return "weight_decay = " + format_number(weight_decay) + ": must be zero or positive";
  if (threads < 1 || threads > 256) return "threads = " + format_number(threads) + ": allowed 1 to 256";
  if (!(validation_fraction >= 0.0 && validation_fraction < 0.9))
    return "validation_fraction = " + format_number(validation_fraction) + ": allowed [0, 0.9)";
  if (patience < 0) return "patience = " + format_number(patience) + ": must be 0 (never stop early) or more";
  if (width < 1 || width > 256) return "width = " + format_number(width) + ": allowed 1 to 256";
  if (depth < 1 || depth > 6) return "depth = " + format_number(depth) + ": allowed 1 to 6";
  const auto non_negative = [](double value) { return value >= 0.0 && std::isfinite(value); };
  if (!non_negative(dice_weight)) return "dice_weight = " + format_number(dice_weight) + ": must be zero or positive";
  if (!(gce_q > 0.0 && gce_q <= 1.0)) return "gce_q = " + format_number(gce_q) + ": allowed (0, 1]";
  if (!(bootstrap_beta >= 0.0 && bootstrap_beta <= 1.0))
    return "bootstrap_beta = " + format_number(bootstrap_beta) + ": allowed [0, 1]";
  if (!(label_smoothing >= 0.0 && label_smoothing < 0.5))
    return "label_smoothing = " + format_number(label_smoothing) + ": allowed [0, 0.5)";
  if (!non_negative(background_prior))
    return "background_prior = " + format_number(background_prior) + ": must be zero or positive";
  if (!(pooling_sharpness > 0.0 && pooling_sharpness <= 100.0))
    return "pooling_sharpness = " + format_number(pooling_sharpness) + ": allowed (0, 100]";
  if (!(point_radius_mm >= 0.0 && point_radius_mm <= 50.0))
    return "point_radius_mm = " + format_number(point_radius_mm) + ": allowed [0, 50]";
  if (!(object_size_min_mm3 >= 0.0 && object_size_min_mm3 < object_size_max_mm3 && std::isfinite(object_size_max_mm3)))
    return "object_size_min_mm3 = " + format_number(object_size_min_mm3) +
           ", object_size_max_mm3 = " + format_number(object_size_max_mm3) + ": need 0 <= min < max";
  if (!non_negative(mask_weight)) return "mask_weight = " + format_number(mask_weight) + ": must be zero or positive";
  if (!non_negative(weak_weight)) return "weak_weight = " + format_number(weak_weight) + ": must be zero or positive";
  if (!non_negative(consistency_weight))
    return "consistency_weight = " + format_number(consistency_weight) + ": must be zero or positive";
  if (!std::isfinite(threshold_hu)) return "threshold_hu = " + format_number(threshold_hu) + ": must be a number";
  if (std::string message = key_path_under("augmentation", augmentation.validate()); !message.empty()) return message;
  if (std::string message = key_path_under("line_filter", line_filter.validate()); !message.empty()) return message;
  if (std::string message = key_path_under("grading", grading.validate()); !message.empty()) return message;
  return key_path_under("field", field.validate());
}

void TrainingSet::check_shape(const FloatImage& image, const std::string& what) const {
  if (image.empty()) throw UserError("training set: " + what + " is empty");
  const FloatImage* first = !images_.empty() ? &images_.front() : !unlabelled_.empty() ? &unlabelled_.front() : nullptr;
  if (first != nullptr && image.shape() != first->shape())
    throw UserError("training set: " + what + " has a different shape from the first image");
}

void TrainingSet::add(FloatImage image, Label label) {
  check_shape(image, "image " + std::to_string(size()));
  if ((label.kind == LabelKind::outline || label.kind == LabelKind::partial_mask) &&
      label.mask.shape() != image.shape())
    throw UserError("training set: the mask of label " + std::to_string(size()) + " does not match its image's shape");
  images_.push_back(std::move(image));
  labels_.push_back(std::move(label));
}

void TrainingSet::add_unlabelled(FloatImage image) {
  check_shape(image, "unlabelled image " + std::to_string(unlabelled_.size()));
  unlabelled_.push_back(std::move(image));
}

Shape TrainingSet::shape() const {
  if (!images_.empty()) return images_.front().shape();
  if (!unlabelled_.empty()) return unlabelled_.front().shape();
  throw UserError("training set is empty");
}

LabelKind TrainingSet::kind() const {
  const std::vector<LabelKind> all = kinds();
  if (all.empty()) throw UserError("training set is empty");
  if (all.size() > 1)
    throw UserError("training set holds " + frugal::to_string(all[0]) + " and " + frugal::to_string(all[1]) +
                    " labels; only the mixed strategy takes two kinds");
  return all.front();
}

std::vector<LabelKind> TrainingSet::kinds() const {
  std::vector<LabelKind> all;
  for (const Label& label : labels_)
    if (std::find(all.begin(), all.end(), label.kind) == all.end()) all.push_back(label.kind);
  return all;
}

}  // namespace frugal::learn
