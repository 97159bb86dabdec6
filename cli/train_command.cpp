// frugal train: one learning strategy trained on a phantom set's images and the labels bought for
// them (one or two label sets from `frugal labels`), written as a checkpoint plus a JSON sidecar
// that says what was trained on what and what the labels cost.

#include <CLI/CLI.hpp>
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "cli/commands.h"
#include "cli/option_keys.h"
#include "cli/progress_bar.h"
#include "corruptors/label_set_reader.h"
#include "corruptors/rater_yaml.h"
#include "experiments/learn/learner.h"
#include "experiments/learn/memory_estimate.h"
#include "experiments/learn/train_options_json.h"
#include "experiments/learn/training_set_files.h"
#include "frugal_version.h"
#include "phantoms/folder_manifest.h"
#include "phantoms/phantom_set_reader.h"
#include "phantoms/regular_file.h"
#include "phantoms/user_error.h"
#include "phantoms/whole_file.h"

namespace frugal::cli {
namespace {

using nlohmann::json;

struct TrainArguments {
  std::string phantoms;
  std::vector<std::string> labels;
  std::string strategy;
  std::string out;
  int rater = -1;
  std::string normalization = "batch";
  std::string robust_loss = "gce";
  std::string rater_file;
  bool bfloat16 = false;
  bool full_precision = false;
  bool no_flips = false;
  learn::TrainOptions options;
  OptionKeys keys{"train"};                       // which option sets which key, for messages
  std::vector<const CLI::Option*> field_options;  // --field-low, --field-high, --field-drop-border
};

// The field fractions refer to: the command line's when any --field-* option is given (the
// others keep their whole-image defaults), else the phantom set's family default. Returns
// where it came from, for the sidecar.
std::string choose_field(const TrainArguments& arguments, const PhantomSetIndex& phantoms, learn::FieldOptions& field) {
  const bool given = std::any_of(arguments.field_options.begin(), arguments.field_options.end(),
                                 [](const CLI::Option* option) { return option->count() > 0; });
  if (given) return "command line";
  if (phantoms.rows().empty()) return "whole image (the phantom set has no rows)";
  try {
    field = learn::field_for_phantom_set(phantoms);
  } catch (const UserError& error) {
    throw UserError(std::string(error.what()) +
                    "; on the command line: --field-low, --field-high, --field-drop-border");
  }
  return phantoms.rows().front().family + " family default";
}

std::string number_text(const char* format, double value) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, format, value);
  return buffer;
}

// "epoch 3/16, loss 0.412, validation 0.398, 812 images/s, ETA 12 s"
std::string epoch_text(const learn::EpochProgress& progress, bool with_eta) {
  std::string text = "epoch " + std::to_string(progress.epoch) + "/" + std::to_string(progress.epochs) + ", loss " +
                     number_text("%.3g", progress.training_loss);
  if (std::isfinite(progress.validation_loss)) text += ", validation " + number_text("%.3g", progress.validation_loss);
  if (std::isfinite(progress.validation_error))
    text += " (error " + number_text("%.3g", progress.validation_error) + ")";
  text += ", " + number_text("%.0f", progress.images_per_second) + " images/s";
  if (with_eta) {
    // Epochs take about equally long; early stopping can only shorten this.
    const double eta = progress.seconds / progress.epoch * (progress.epochs - progress.epoch);
    text += ", ETA " + number_text("%.0f", eta) + " s";
  }
  return text;
}

std::string hours(double value) { return number_text("%.2f", value); }

// JSON has no NaN: an epoch without a value is null.
json finite_or_null(const std::vector<double>& values) {
  json out = json::array();
  for (double value : values) out.push_back(std::isfinite(value) ? json(value) : json());
  return out;
}

void run_train(TrainArguments& arguments) {
  learn::TrainOptions& options = arguments.options;
  options.strategy = learn::strategy_from_string(arguments.strategy);
  options.normalization = learn::normalization_from_string(arguments.normalization);
  options.robust_loss = learn::robust_loss_from_string(arguments.robust_loss);
  if (arguments.bfloat16 && arguments.full_precision)
    throw UserError("--bfloat16 and --full-precision contradict each other; give one");
  if (arguments.bfloat16) options.bfloat16 = true;
  if (arguments.full_precision) options.bfloat16 = false;
  options.augmentation.flips = !arguments.no_flips;
  if (arguments.rater < -1)
    throw UserError("--rater " + std::to_string(arguments.rater) + ": allowed 0, 1, ... (a panel member)");
  // The checkpoint, its sidecar and their temporary names, before hours of training.
  for (const char* suffix : {"", ".json"})
    require_writable_output(arguments.out + suffix, OutputKind::file,
                            "a new or regular file for the checkpoint (MODEL.pt) and its sidecar (MODEL.pt.json)");

  // Checked before any file is read, and again once the grading bins are known.
  if (const std::string error = options.validate(); !error.empty()) throw UserError(arguments.keys.message(error));
  const bool classical = learn::is_classical(options.strategy);
  if (arguments.labels.empty() && !classical)
    throw UserError("--labels is required for strategy " + arguments.strategy +
                    " (a label set folder written by frugal labels)");
  if (arguments.labels.size() > 2)
    throw UserError("--labels is given " + std::to_string(arguments.labels.size()) +
                    " times; allowed: once, or twice for strategy mixed (outlines and one kind of weak label)");
  if (arguments.labels.size() == 2 && options.strategy != learn::Strategy::mixed)
    throw UserError(
        "a second --labels is only for strategy mixed (outlines plus count, grade or presence labels); "
        "strategy " +
        arguments.strategy + " trains from one label set");

  read_folder_manifest(arguments.phantoms, "phantom_set", "a phantom set folder (frugal phantoms)");
  const PhantomSetIndex phantoms = read_phantom_set(arguments.phantoms);
  std::vector<LabelSet> label_sets;
  LabelSetReadOptions read_options;
  read_options.rater = arguments.rater;
  for (const std::string& folder : arguments.labels) {
    label_sets.push_back(read_label_set(folder, read_options));
    check_labels_in_phantom_set(label_sets.back(), phantoms);
    if (label_sets.back().labels.empty())
      throw UserError(folder + ": no labels" +
                      (arguments.rater >= 0 ? " from rater " + std::to_string(arguments.rater) : ""));
  }

  // Grade bins: a rater file given, else those of the rater that made the grades.
  std::string grading_source = "frugal's default bins";
  if (!arguments.rater_file.empty()) {
    options.grading = read_rater_file(arguments.rater_file).grading;
    grading_source = arguments.rater_file;
  } else {
    for (const LabelSet& set : label_sets)
      if (set.info.kind == LabelKind::grade) {
        options.grading = set.info.rater.grading;
        grading_source = set.info.folder + "/manifest.json";
      }
  }
  const std::string field_source = choose_field(arguments, phantoms, options.field);
  if (const std::string error = options.validate(); !error.empty()) throw UserError(arguments.keys.message(error));

  learn::FileTrainingSet files = learn::training_set_from_files(phantoms, label_sets, options);
  const learn::TrainingSet& training = files.set;
  const int unlabelled = files.unlabelled;

  learn::TrainResult result;
  // Drawn on standard error only when it is a terminal (ProgressBar checks).
  ProgressBar bar("train", options.epochs);
  learn::EpochProgress last;
  const auto on_epoch = [&](const learn::EpochProgress& progress) {
    last = progress;
    bar.update(progress.epoch, epoch_text(progress, true));
  };
  try {
    result = learn::train(training, options, on_epoch);
  } catch (const UserError& error) {
    // learn::train names option problems "train.<key>"; other problems (the labels, the images) stay as they are.
    const std::string what = error.what();
    throw UserError(what.rfind("train.", 0) == 0 ? arguments.keys.message(what) : what);
  }
  if (!classical) {
    if (last.epoch < last.epochs)
      bar.update(options.epochs, epoch_text(last, false) + ", stopped early (best epoch " +
                                     std::to_string(result.summary.best_epoch) + ")");
    bar.finish();
  }
  // The sidecar describes the checkpoint beside it: remove an old one first, so that a run killed
  // between the two files never leaves a new model with an old description.
  std::error_code ignored;
  std::filesystem::remove(arguments.out + ".json", ignored);
  result.model.save(arguments.out);

  json sidecar;
  sidecar["tool"] = "frugal";
  sidecar["version"] = kVersion;
  sidecar["schema_version"] = kOutputSchemaVersion;
  sidecar["kind"] = "model";
  sidecar["model"] = arguments.out;
  sidecar["strategy"] = learn::to_string(options.strategy);
  sidecar["options"] = learn::to_json(options);  // every option, read back by learn::update_from_json
  sidecar["grading_bins_from"] = grading_source;
  sidecar["field_from"] = field_source;
  sidecar["phantom_set"] = arguments.phantoms;
  sidecar["rater"] = arguments.rater;
  sidecar["training_images"] = training.size();
  sidecar["unlabelled_images"] = unlabelled;
  double paid_hours = 0.0, used_hours = 0.0;
  json sets = json::array();
  for (const LabelSet& set : label_sets) {
    sets.push_back({{"folder", set.info.folder},
                    {"label_kind", to_string(set.info.kind)},
                    {"rater_file", set.info.rater_file},
                    {"raters", set.info.raters},
                    {"labels_used", set.labels.size()},
                    {"annotator_hours", set.info.annotator_hours},
                    {"annotator_hours_used", set.annotator_seconds / 3600.0}});
    paid_hours += set.info.annotator_hours;
    used_hours += set.annotator_seconds / 3600.0;
  }
  sidecar["label_sets"] = sets;
  sidecar["annotator_hours"] = paid_hours;
  sidecar["annotator_hours_used"] = used_hours;
  const learn::TrainSummary& summary = result.summary;
  sidecar["summary"] = {{"epochs_run", summary.epochs_run},
                        {"best_epoch", summary.best_epoch},
                        {"best_validation_loss",
                         std::isfinite(summary.best_validation_loss) ? json(summary.best_validation_loss) : json()},
                        {"training_loss", summary.training_loss},
                        {"validation_loss", summary.validation_loss},
                        {"best_validation_error",
                         std::isfinite(summary.best_validation_error) ? json(summary.best_validation_error) : json()},
                        {"validation_error", finite_or_null(summary.validation_error)},
                        {"seconds", summary.seconds},
                        {"images_per_second", summary.images_per_second}};
  if (!classical && options.network_file.empty())
    sidecar["summary"]["estimated_memory_bytes"] =
        learn::training_memory_bytes(training.shape(), options, training.size());
  sidecar["caution"] = "Trained on synthetic phantoms with simulated labels; not for clinical use.";
  WholeFile sidecar_file(arguments.out + ".json");
  sidecar_file.write(sidecar.dump(2) + "\n");
  sidecar_file.commit();

  std::string labels_text;
  for (const LabelSet& set : label_sets)
    labels_text += (labels_text.empty() ? "" : " + ") + std::to_string(set.labels.size()) + " " +
                   to_string(set.info.kind) + " labels";
  if (classical) {
    std::printf("%s needs no training; wrote %s (+ .json)\n", arguments.strategy.c_str(), arguments.out.c_str());
    return;
  }
  std::printf("trained %s on %s (%s annotator-hours paid)%s\n", arguments.strategy.c_str(), labels_text.c_str(),
              hours(paid_hours).c_str(),
              unlabelled > 0 ? (" and " + std::to_string(unlabelled) + " unlabelled images").c_str() : "");
  std::string validation = std::isfinite(summary.best_validation_loss)
                               ? ", validation loss " + number_text("%.4g", summary.best_validation_loss)
                               : ", no validation split";
  if (std::isfinite(summary.best_validation_error))
    validation += ", validation error " + number_text("%.4g", summary.best_validation_error);
  std::printf("%d epochs (best %d%s) in %.1f s, %.0f images/s; wrote %s (+ .json)\n", summary.epochs_run,
              summary.best_epoch, validation.c_str(), summary.seconds, summary.images_per_second,
              arguments.out.c_str());
}

}  // namespace

void add_train_command(CLI::App& app) {
  auto arguments = std::make_shared<TrainArguments>();
  learn::TrainOptions& o = arguments->options;
  OptionKeys& keys = arguments->keys;
  keys.name("strategy", "--strategy");
  keys.name("normalization", "--normalization");
  keys.name("robust_loss", "--robust-loss");
  keys.name("bfloat16", "--bfloat16");
  keys.name("augmentation.flips", "--no-flips");
  keys.name("field.drop_border_connected", "--field-drop-border");
  keys.explain("grading", "grading bins come from --rater-file or the grade label set");
  CLI::App* command = app.add_subcommand(
      "train",
      "Train one learning strategy on a phantom set's images and the labels bought for them (label sets from frugal "
      "labels); writes MODEL.pt and MODEL.pt.json (docs/train.md).");
  command->add_option("--phantoms", arguments->phantoms, "Phantom set folder (frugal phantoms) holding the images")
      ->required();
  command
      ->add_option("--labels", arguments->labels,
                   "Label set folder (frugal labels) for those subjects; give it twice for mixed (outlines + "
                   "count, grade or presence labels)")
      ->allow_extra_args(false);
  command
      ->add_option("--strategy", arguments->strategy,
                   "mask, mask-robust, partial, partial-naive, count-map, grade-bounds, presence-mil, points, "
                   "scalar, mixed, threshold, line-filter")
      ->required();
  command->add_option("--out", arguments->out, "Checkpoint file to write (MODEL.pt); the sidecar is MODEL.pt.json")
      ->required();
  command->add_option("--rater", arguments->rater, "Train on this panel member's labels only (0-based); -1 = all")
      ->capture_default_str();
  keys.add(command, "--epochs", o.epochs, "epochs", "Passes over the training labels");
  keys.add(command, "--batch-size", o.batch_size, "batch_size", "Images per optimiser step");
  keys.add(command, "--learning-rate", o.learning_rate, "learning_rate",
           "Adam step size, decayed to 0 on a cosine schedule");
  keys.add(command, "--weight-decay", o.weight_decay, "weight_decay", "Adam's L2 term");
  keys.add(command, "--seed", o.seed, "seed", "Seed of the split, shuffling, augmentation and initial weights");
  keys.add(command, "--threads", o.threads, "threads", "Torch threads");
  keys.add(command, "--width", o.width, "width", "Channels at the finest level of the network (doubled per level)");
  keys.add(command, "--depth", o.depth, "depth", "Resolution levels; image sides must divide by 2^(depth-1)");
  command->add_option("--normalization", arguments->normalization, "batch, instance or none")->capture_default_str();
  keys.add(command, "--validation-fraction", o.validation_fraction, "validation_fraction",
           "Share of the labels held out to choose the best epoch; 0 = keep the last epoch");
  keys.add(command, "--patience", o.patience, "patience",
           "Epochs without validation improvement before stopping; 0 = never");
  command->add_flag("--bfloat16", arguments->bfloat16,
                    "bfloat16 forward pass (the default: 2-3x faster on this class of CPU)");
  command->add_flag("--full-precision", arguments->full_precision,
                    "float32 throughout instead of the bfloat16 forward pass");
  command->add_flag("--no-flips", arguments->no_flips, "Do not mirror training images at random");
  keys.add(command, "--rotation-degrees", o.augmentation.rotation_degrees, "augmentation.rotation_degrees",
           "Random rotations within +-this angle");
  keys.add(command, "--deformation-mm", o.augmentation.deformation_mm, "augmentation.deformation_mm",
           "SD of random smooth deformations in mm; 0 = none");
  keys.add(command, "--deformation-spacing-mm", o.augmentation.deformation_spacing_mm,
           "augmentation.deformation_spacing_mm",
           "Control-point spacing of the deformations in mm (larger = smoother)");
  keys.add(command, "--dice-weight", o.dice_weight, "dice_weight", "Weight of the soft Dice term of mask losses");
  command->add_option("--robust-loss", arguments->robust_loss, "mask-robust's loss: gce, bootstrap or smoothing")
      ->capture_default_str();
  keys.add(command, "--gce-q", o.gce_q, "gce_q", "Generalized cross entropy's q in (0, 1]");
  keys.add(command, "--bootstrap-beta", o.bootstrap_beta, "bootstrap_beta",
           "Hard bootstrapping's weight on the given label");
  keys.add(command, "--label-smoothing", o.label_smoothing, "label_smoothing", "Label smoothing's epsilon in [0, 0.5)");
  keys.add(command, "--background-prior", o.background_prior, "background_prior",
           "partial, points: weight of 'unmarked voxels are mostly background'");
  keys.add(command, "--pooling-sharpness", o.pooling_sharpness, "pooling_sharpness",
           "presence-mil: log-sum-exp sharpness r");
  keys.add(command, "--point-radius-mm", o.point_radius_mm, "point_radius_mm",
           "points: voxels this close to a click are positives");
  keys.add(command, "--object-size-min-mm3", o.object_size_min_mm3, "object_size_min_mm3",
           "points: smallest object per click, mm^3");
  keys.add(command, "--object-size-max-mm3", o.object_size_max_mm3, "object_size_max_mm3",
           "points: largest object per click, mm^3");
  keys.add(command, "--mask-weight", o.mask_weight, "mask_weight", "mixed: weight of the outline loss");
  keys.add(command, "--weak-weight", o.weak_weight, "weak_weight", "mixed: weight of the weak-label loss");
  keys.add(command, "--consistency-weight", o.consistency_weight, "consistency_weight",
           "> 0 adds consistency under random deformations on the phantom set's unlabelled subjects");
  keys.add(command, "--network", o.network_file, "network_file",
           "TorchScript module to train instead of frugal's U-net (map strategies)");
  command->add_option("--rater-file", arguments->rater_file,
                      "Rater YAML whose grading bins to use (default: the grade label set's own rater)");
  // Without any of the three, the field is the phantom family's default (docs/train.md).
  arguments->field_options = {
      keys.add(command, "--field-low", o.field.low, "field.low", "Field (for fractions): lowest image value inside"),
      keys.add(command, "--field-high", o.field.high, "field.high",
               "Field: highest image value inside (voids default: -400)"),
      command->add_flag("--field-drop-border", o.field.drop_border_connected,
                        "Field: drop parts that touch the image border (voids default: on)")};
  keys.add(command, "--threshold-hu", o.threshold_hu, "threshold_hu", "threshold: voxels strictly below count");
  keys.add(command, "--line-threshold", o.line_filter.threshold, "line_filter.threshold",
           "line-filter: share of the maximum response that marks a line");
  keys.add(command, "--line-min-length-mm", o.line_filter.min_length_mm, "line_filter.min_length_mm",
           "line-filter: shortest counted lesion");
  keys.add(command, "--line-max-length-mm", o.line_filter.max_length_mm, "line_filter.max_length_mm",
           "line-filter: longest counted lesion");
  keys.add(command, "--line-min-elongation", o.line_filter.min_elongation, "line_filter.min_elongation",
           "line-filter: smallest length/width ratio counted");
  command->callback([arguments] { run_train(*arguments); });
}

}  // namespace frugal::cli
