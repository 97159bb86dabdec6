// The torch-free half of the learner interface: names, options, the training set and the field.
#include <algorithm>
#include <cmath>
#include <sstream>
#include <string>
#include <vector>

#include "experiments/learn/learner.h"
#include "experiments/measure/connected_components.h"
#include "phantoms/user_error.h"

namespace frugal::learn {
namespace {

struct StrategyName {
  Strategy strategy;
  const char* name;
};
constexpr StrategyName kStrategyNames[] = {
    {Strategy::mask, "mask"},
    {Strategy::count_map, "count-map"},
    {Strategy::scalar, "scalar"},
    {Strategy::grade_bounds, "grade-bounds"},
};

std::string number(double value) {
  std::ostringstream out;
  out << value;
  return out.str();
}

}  // namespace

std::string to_string(Strategy strategy) {
  for (const auto& entry : kStrategyNames)
    if (entry.strategy == strategy) return entry.name;
  FRUGAL_CHECK(false);
}

Strategy strategy_from_string(const std::string& name) {
  std::string allowed;
  for (const auto& entry : kStrategyNames) {
    if (name == entry.name) return entry.strategy;
    allowed += std::string(allowed.empty() ? "" : ", ") + entry.name;
  }
  throw UserError("unknown strategy '" + name + "'; allowed: " + allowed);
}

std::vector<LabelKind> accepted_label_kinds(Strategy strategy) {
  switch (strategy) {
    case Strategy::mask: return {LabelKind::outline};
    case Strategy::count_map: return {LabelKind::count};
    case Strategy::scalar: return {LabelKind::count, LabelKind::grade, LabelKind::presence};
    case Strategy::grade_bounds: return {LabelKind::grade};
  }
  FRUGAL_CHECK(false);
}

std::string to_string(Normalization normalization) {
  switch (normalization) {
    case Normalization::batch: return "batch";
    case Normalization::instance: return "instance";
    case Normalization::none: return "none";
  }
  FRUGAL_CHECK(false);
}

std::string FieldOptions::validate() const {
  if (std::isnan(low) || std::isnan(high) || !(low < high))
    return "train.field.low = " + number(low) + ", high = " + number(high) + ": low must be below high";
  return "";
}

LabelImage estimate_field(const FloatImage& image, const FieldOptions& field) {
  LabelImage mask(image.geometry(), 0);
  for (std::size_t i = 0; i < image.size(); ++i) {
    const double value = image.data()[i];
    mask.data()[i] = value >= field.low && value <= field.high ? 1 : 0;
  }
  if (field.drop_border_connected) {
    const auto components = measure::label_components(mask);
    const Shape shape = image.shape();
    std::vector<bool> touches(static_cast<std::size_t>(components.count) + 1, false);
    for (int z = 0; z < shape.z; ++z)
      for (int y = 0; y < shape.y; ++y)
        for (int x = 0; x < shape.x; ++x) {
          const bool border = x == 0 || y == 0 || x == shape.x - 1 || y == shape.y - 1 ||
                              (shape.z > 1 && (z == 0 || z == shape.z - 1));
          if (border) touches[static_cast<std::size_t>(components.labels.at(x, y, z))] = true;
        }
    for (std::size_t i = 0; i < mask.size(); ++i)
      if (touches[static_cast<std::size_t>(components.labels.data()[i])]) mask.data()[i] = 0;
  }
  if (std::none_of(mask.voxels().begin(), mask.voxels().end(), [](std::uint8_t v) { return v != 0; }))
    std::fill(mask.voxels().begin(), mask.voxels().end(), std::uint8_t{1});
  return mask;
}

std::string TrainOptions::validate() const {
  if (epochs < 1) return "train.epochs = " + number(epochs) + ": must be at least 1";
  if (batch_size < 1) return "train.batch_size = " + number(batch_size) + ": must be at least 1";
  if (!(learning_rate > 0.0) || !std::isfinite(learning_rate))
    return "train.learning_rate = " + number(learning_rate) + ": must be a positive number";
  if (!(weight_decay >= 0.0) || !std::isfinite(weight_decay))
    return "train.weight_decay = " + number(weight_decay) + ": must be zero or positive";
  if (threads < 1 || threads > 256) return "train.threads = " + number(threads) + ": allowed 1 to 256";
  if (!(validation_fraction >= 0.0 && validation_fraction < 0.9))
    return "train.validation_fraction = " + number(validation_fraction) + ": allowed [0, 0.9)";
  if (patience < 0) return "train.patience = " + number(patience) + ": must be 0 (never stop early) or more";
  if (width < 1 || width > 256) return "train.width = " + number(width) + ": allowed 1 to 256";
  if (depth < 1 || depth > 6) return "train.depth = " + number(depth) + ": allowed 1 to 6";
  if (!(dice_weight >= 0.0) || !std::isfinite(dice_weight))
    return "train.dice_weight = " + number(dice_weight) + ": must be zero or positive";
  if (const std::string message = grading.validate(); !message.empty()) return "train." + message;
  return field.validate();
}

void TrainingSet::add(FloatImage image, Label label) {
  if (image.empty()) throw UserError("training set: image " + std::to_string(size()) + " is empty");
  if (!images_.empty() && image.shape() != images_.front().shape())
    throw UserError("training set: image " + std::to_string(size()) + " has a different shape from image 0");
  if (!labels_.empty() && label.kind != labels_.front().kind)
    throw UserError("training set: label " + std::to_string(size()) + " is a " + frugal::to_string(label.kind) +
                    " label, the set holds " + frugal::to_string(labels_.front().kind) + " labels");
  if ((label.kind == LabelKind::outline || label.kind == LabelKind::partial_mask) && label.mask.shape() != image.shape())
    throw UserError("training set: the mask of label " + std::to_string(size()) + " does not match its image's shape");
  images_.push_back(std::move(image));
  labels_.push_back(std::move(label));
}

Shape TrainingSet::shape() const {
  if (images_.empty()) throw UserError("training set is empty");
  return images_.front().shape();
}

LabelKind TrainingSet::kind() const {
  if (labels_.empty()) throw UserError("training set is empty");
  return labels_.front().kind;
}

}  // namespace frugal::learn
