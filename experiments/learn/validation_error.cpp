#include "experiments/learn/validation_error.h"

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>

#include "experiments/learn/constraints.h"
#include "phantoms/image.h"

namespace frugal::learn {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

double count_error(double predicted, const Label& label) {
  if (label.capped) return std::max(0.0, label.value - predicted);  // "more than the cap"
  return std::abs(predicted - label.value);
}

double grade_error(const Prediction& prediction, const Label& label, const TrainOptions& options) {
  if (options.strategy == Strategy::scalar) return std::abs(prediction.grade - label.value);
  // A grade says only that the fraction lies in its bin: the distance from the bin, 0 inside.
  const FractionInterval bin = grade_fraction_interval(static_cast<int>(std::lround(label.value)), options.grading);
  const double fraction = prediction.affected_fraction;
  return fraction < bin.lower ? bin.lower - fraction : fraction > bin.upper ? fraction - bin.upper : 0.0;
}

double presence_error(const Prediction& prediction, const Label& label) {
  const double p = std::clamp(prediction.presence_probability, 1e-6, 1.0 - 1e-6);
  return label.value > 0.5 ? -std::log(p) : -std::log(1.0 - p);
}

}  // namespace

double validation_error(const std::vector<Prediction>& predictions, const std::vector<const Label*>& labels,
                        const TrainOptions& options) {
  FRUGAL_CHECK(predictions.size() == labels.size());
  if (labels.empty()) return kNaN;
  std::map<LabelKind, std::pair<double, int>> per_kind;  // error sum, labels
  double overlap = 0.0, marked = 0.0;                    // outlines: pooled Dice
  for (std::size_t i = 0; i < labels.size(); ++i) {
    const Label& label = *labels[i];
    const Prediction& prediction = predictions[i];
    double error = 0.0;
    switch (label.kind) {
      case LabelKind::partial_mask:
        return kNaN;
      case LabelKind::outline: {
        FRUGAL_CHECK(prediction.map.size() == label.mask.size());
        for (std::size_t v = 0; v < label.mask.size(); ++v) {
          const bool predicted = prediction.map.data()[v] > 0.5F;
          const bool outlined = label.mask.data()[v] != 0;
          overlap += predicted && outlined ? 1.0 : 0.0;
          marked += (predicted ? 1.0 : 0.0) + (outlined ? 1.0 : 0.0);
        }
        break;
      }
      case LabelKind::count:
        error = count_error(prediction.count, label);
        break;
      case LabelKind::grade:
        error = grade_error(prediction, label, options);
        break;
      case LabelKind::presence:
        error = presence_error(prediction, label);
        break;
      case LabelKind::points:
        error = std::abs(prediction.count - static_cast<double>(label.clicks.size()));
        break;
    }
    auto& [sum, count] = per_kind[label.kind];
    sum += error;
    ++count;
  }
  double total = 0.0;
  for (const auto& [kind, entry] : per_kind) {
    if (kind == LabelKind::outline)
      total += marked > 0.0 ? 1.0 - 2.0 * overlap / marked : 0.0;  // nothing outlined, nothing found: perfect
    else
      total += entry.first / entry.second;
  }
  return total;
}

}  // namespace frugal::learn
