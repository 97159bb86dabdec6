#pragma once
// The learning part's public interface: a learner sees images and the labels a study bought,
// never truth. Plain types only; torch lives in experiments/learn/*.cpp and *_internal.h.
//
//   TrainingSet set;  set.add(image, label);           // images + bought labels
//   TrainOptions options;  options.strategy = ...;     // options -> validate() -> train()
//   TrainResult result = train(set, options);
//   Prediction p = predict(result.model, image);
//
// There is deliberately no constructor or function here that takes a Subject or SubjectTruth.

#include <cstddef>
#include <cstdint>
#include <functional>
#include <limits>
#include <memory>
#include <string>
#include <vector>

#include "corruptors/label.h"
#include "corruptors/rater.h"
#include "experiments/baselines/line_filter.h"
#include "experiments/learn/augmentation.h"
#include "phantoms/image.h"

namespace frugal::learn {

// Strategies, each a generic published method on frugal's own small U-shaped network.
// docs/learning.md describes each with its loss, its source and its rule for reading a count.
enum class Strategy {
  mask,           // "mask": dense segmentation from outlines; cross-entropy + soft Dice
  mask_robust,    // "mask-robust": the same with a noise-robust loss (RobustLoss)
  partial,        // "partial": loss on marked voxels only, plus a weak background prior
  partial_naive,  // "partial-naive": unmarked voxels taken as background (the comparison)
  count_map,      // "count-map": non-negative density map whose sum is trained to the count
  grade_bounds,   // "grade-bounds": segmentation whose field fraction is held in the grade's interval
  presence_mil,   // "presence-mil": multiple-instance learning, log-sum-exp pooling of the map
  points,         // "points": clicks as positives, an objectness prior and a size prior per click
  scalar,         // "scalar": the weak label (count, grade or presence) regressed directly
  mixed,          // "mixed": a few outlines plus many count, grade or presence labels, one network
  threshold,      // "threshold": classical densitometry, no training
  line_filter,    // "line-filter": Frangi line filter + threshold + components, no training
};
std::string to_string(Strategy strategy);
Strategy strategy_from_string(const std::string& name);  // throws UserError listing the names
// The label kinds a strategy trains from (mixed: outline plus one of the others; threshold and
// line-filter: none, any labels given are ignored).
std::vector<LabelKind> accepted_label_kinds(Strategy strategy);
// True for strategies whose prediction includes a map, which a TorchScript network can provide.
bool is_map_strategy(Strategy strategy);
// True for threshold and line-filter, which have no network and learn nothing.
bool is_classical(Strategy strategy);

// mask-robust's loss for noisy outlines.
enum class RobustLoss {
  generalized_cross_entropy,  // "gce": Zhang & Sabuncu 2018, (1 - p_y^q) / q
  bootstrapping,              // "bootstrap": Reed et al. 2015, hard bootstrapping with beta
  label_smoothing,            // "smoothing": targets moved to epsilon / 1 - epsilon
};
std::string to_string(RobustLoss loss);
RobustLoss robust_loss_from_string(const std::string& name);  // throws UserError listing the names

enum class Normalization { batch, instance, none };
std::string to_string(Normalization normalization);
Normalization normalization_from_string(const std::string& name);  // throws UserError listing the names

// The field that affected fractions refer to: voxels with intensity in [low, high] (image
// units), optionally without the components of that set that touch the image border (air
// around a body). Defaults: the whole image; default_field_for_family gives a family's field.
struct FieldOptions {
  double low = -std::numeric_limits<double>::infinity();
  double high = std::numeric_limits<double>::infinity();
  bool drop_border_connected = false;
  std::string validate() const;
};
// 1 inside the field, 0 outside; never empty (an empty estimate falls back to the whole image).
LabelImage estimate_field(const FloatImage& image, const FieldOptions& field);
// The field a phantom family's affected fraction refers to, for use when a study sets none:
// "streaks" the whole image; "voids" the lungs (high = -400 HU, between the default parenchyma
// at -850 and body at 40, and drop_border_connected for the air around the body). A family name
// is not truth: it says how the images were drawn. Throws UserError for another name.
FieldOptions default_field_for_family(const std::string& family);

struct TrainOptions {
  Strategy strategy = Strategy::mask;
  int epochs = 30;
  int batch_size = 16;
  double learning_rate = 3e-3;  // Adam; decays to 0 over `epochs` on a cosine schedule
  double weight_decay = 1e-5;   // Adam's L2 term
  std::uint64_t seed = 1;
  int threads = 2;                   // torch intra-op threads, set explicitly (Debian defaults to 1)
  double validation_fraction = 0.2;  // share of the labelled images held out for model selection
  int patience = 8;                  // epochs without validation improvement before stopping; 0 = never
  int width = 8;                     // channels at the finest level; doubled per level
  int depth = 3;                     // resolution levels; image sides must divide by 2^(depth-1)
  Normalization normalization = Normalization::batch;
  bool channels_last = true;         // about 4x faster convolutions than the default layout here
  bool bfloat16 = true;              // bfloat16 autocast of the forward pass (2-3x faster); float32 when off
  AugmentationOptions augmentation;  // flips (on), small rotations and smooth deformations (off)
  double dice_weight = 1.0;          // mask, mask-robust, partial-naive, mixed: + dice_weight * soft Dice
  RobustLoss robust_loss = RobustLoss::generalized_cross_entropy;  // mask-robust
  double gce_q = 0.7;                // generalized cross entropy's q in (0, 1] (Zhang & Sabuncu's 0.7)
  double bootstrap_beta = 0.8;       // hard bootstrapping's weight on the given label (Reed et al.'s 0.8)
  double label_smoothing = 0.1;      // label smoothing's epsilon in [0, 0.5)
  double background_prior = 0.05;    // partial: per-voxel weight of unmarked voxels as background; points: weight of the background mean
  double pooling_sharpness = 4.0;    // presence-mil: r of log-sum-exp pooling (large r -> max)
  double point_radius_mm = 1.0;      // points: voxels this close to a click are positives
  double object_size_min_mm3 = 2.0;  // points: size prior per click, in mm^3 (2D: mm^2 x slice)
  double object_size_max_mm3 = 40.0;
  double mask_weight = 1.0;  // mixed: loss = mask_weight * mask loss + weak_weight * weak loss
  double weak_weight = 1.0;
  double consistency_weight = 0.0;          // > 0 adds transformation consistency on unlabelled images
  double threshold_hu = -950.0;             // threshold: voxels strictly below count (Gevenois et al. 1995)
  baselines::LineCountOptions line_filter;  // line-filter: filter, threshold and counting rules
  std::string network_file;                 // TorchScript module for map strategies; empty = frugal's U-net
  GradingOptions grading;                   // the grading rater's bins (grade-bounds, scalar on grades)
  FieldOptions field;                       // grade-bounds, threshold and affected fractions
  std::string validate() const;             // empty, or "<key> = <value>: <what is allowed>" (key path relative to TrainOptions)
};

// Images and the labels bought for them, one label per image (an image labelled twice is added
// twice), plus optional unlabelled images for consistency training. Only images and Labels can
// be added: truth cannot reach a learner through this type.
class TrainingSet {
 public:
  TrainingSet() = default;
  // Throws UserError when the image is empty, its shape differs from earlier images, or a mask
  // label's shape differs from the image. Kinds may differ (mixed); train() checks them.
  void add(FloatImage image, Label label);
  // An image nobody labelled (consistency training only). Same shape rule.
  void add_unlabelled(FloatImage image);

  std::size_t size() const { return images_.size(); }
  bool empty() const { return images_.empty(); }
  const FloatImage& image(std::size_t i) const { return images_.at(i); }
  const Label& label(std::size_t i) const { return labels_.at(i); }
  const std::vector<FloatImage>& unlabelled() const { return unlabelled_; }
  Shape shape() const;                   // of every image; throws UserError when empty
  LabelKind kind() const;                // the one kind of every label; throws UserError when empty or mixed
  std::vector<LabelKind> kinds() const;  // distinct kinds in order of first appearance

 private:
  void check_shape(const FloatImage& image, const std::string& what) const;
  std::vector<FloatImage> images_;
  std::vector<Label> labels_;
  std::vector<FloatImage> unlabelled_;
};

struct TrainSummary {
  int epochs_run = 0;
  int best_epoch = 0;                   // 1-based epoch whose weights were kept
  double best_validation_loss = 0.0;    // NaN when there was no validation split
  std::vector<double> training_loss;    // per epoch
  std::vector<double> validation_loss;  // per epoch (empty without a validation split)
  // The selection criterion per epoch (validation_error.h): the answers' error against the
  // validation labels; NaN for partial masks, whose epochs are chosen by validation loss. The
  // kept epoch is the one with the smallest error (ties: the earlier).
  std::vector<double> validation_error;
  double best_validation_error = 0.0;  // NaN without a validation split or for partial masks
  double seconds = 0.0;
  double images_per_second = 0.0;  // training images through the optimiser
  // The validation split is drawn over images, (subject, rescan), not label rows: all labels
  // of one image are on the same side, so a panel's other answers cannot leak into validation.
  // When validation_fraction > 0: round(fraction x images), clamped to [1, images - 1]; none
  // with one image.
  std::vector<std::size_t> validation_labels;  // indices into the TrainingSet, ascending
  std::vector<int> validation_subjects;        // their subjects, ascending and distinct
};

// What train() reports after each epoch (after its validation pass).
struct EpochProgress {
  int epoch = 0;   // 1-based epoch just finished
  int epochs = 0;  // epochs asked for; early stopping may end training before
  double training_loss = 0.0;
  // NaN without a validation split.
  double validation_loss = std::numeric_limits<double>::quiet_NaN();
  double validation_error = std::numeric_limits<double>::quiet_NaN();  // the selection criterion
  double images_per_second = 0.0;  // training images through the optimiser so far
  double seconds = 0.0;            // since train() began
};

// A trained network with everything needed to predict (strategy, normalisation, bins, field).
class TrainedModel {
 public:
  struct Impl;
  TrainedModel();
  explicit TrainedModel(std::unique_ptr<Impl> impl);
  TrainedModel(TrainedModel&&) noexcept;
  TrainedModel& operator=(TrainedModel&&) noexcept;
  ~TrainedModel();

  Strategy strategy() const;
  const TrainOptions& options() const;  // as trained (a loaded model: as its checkpoint records)
  // Writes a checkpoint whole or not at all (".partial" then rename). Throws UserError.
  void save(const std::string& path) const;
  // Throws UserError naming the file when it is missing, truncated or not a frugal checkpoint.
  static TrainedModel load(const std::string& path);

  const Impl& impl() const;

 private:
  std::unique_ptr<Impl> impl_;
};

struct TrainResult {
  TrainedModel model;
  TrainSummary summary;
};

// Throws UserError on invalid options, an empty set, or labels the strategy cannot use.
// `on_epoch`, when given, is called on the calling thread after every epoch (never for the
// classical strategies); an exception it throws ends training and propagates.
TrainResult train(const TrainingSet& set, const TrainOptions& options,
                  const std::function<void(const EpochProgress&)>& on_epoch = {});

// What a model says about one image. Fields a strategy cannot answer are NaN; `map` is empty
// for `scalar`. Rules per strategy:
//   mask, mask-robust, partial, partial-naive, grade-bounds, presence-mil, points, mixed:
//     map = lesion probability; affected_fraction = mean probability over the field; count =
//     connected components (8-/26-neighbour) of map > 0.5 inside the field; presence = the map's
//     maximum (presence-mil: its log-sum-exp pooling, the quantity it trains); grade = the bin of
//     the fraction; burden_mm3 = number of voxels with map > 0.5 times the voxel volume.
//   count-map: map = density (lesions per voxel); count = sum of the map; presence =
//     1 - exp(-count) (Poisson reading of the density).
//   scalar: count, grade (a real-valued bin index) or presence probability, whichever label
//     kind it was trained on; on grades also affected_fraction = fraction_of_grade(grade)
//     (grade_fraction.h), so it answers the fraction grade-bounds answers.
//   threshold: map = 1 below threshold_hu in the field; affected_fraction = that fraction.
//   line-filter: map = the line filter's response; count = counted components.
struct Prediction {
  FloatImage map;
  double count = std::numeric_limits<double>::quiet_NaN();
  double affected_fraction = std::numeric_limits<double>::quiet_NaN();
  double presence_probability = std::numeric_limits<double>::quiet_NaN();
  double grade = std::numeric_limits<double>::quiet_NaN();
  double burden_mm3 = std::numeric_limits<double>::quiet_NaN();
};

// Throws UserError when the image's shape differs from the training images'. `threads` sets
// torch's intra-op threads (predictions do not depend on it beyond float rounding).
Prediction predict(const TrainedModel& model, const FloatImage& image, int threads = 2);
std::vector<Prediction> predict(const TrainedModel& model, const std::vector<FloatImage>& images, int threads = 2);

// How far an image's intensities lie from those the network was trained on: its mean's distance
// from the training images' mean, and its standard deviation's ratio to theirs, both in units of
// the training images' SD (over all voxels, as training standardised them). `far` when the mean
// is more than 3 SD away or the spread differs more than 4-fold: the prediction is then an
// extrapolation (an image stored in other units, another modality). Never far for classical
// strategies, which have no trained network.
struct IntensityShift {
  double mean_offset_sd = 0.0;
  double spread_ratio = 1.0;
  bool far = false;
};
IntensityShift intensity_shift(const TrainedModel& model, const FloatImage& image);

}  // namespace frugal::learn
