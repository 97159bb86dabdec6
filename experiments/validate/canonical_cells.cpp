#include "experiments/validate/canonical_cells.h"

#include <limits>
#include <sstream>

#include "corruptors/labeler.h"
#include "phantoms/random.h"
#include "phantoms/user_error.h"

namespace frugal::validation {

ValidationSizes sizes_for(ValidationSize size) {
  ValidationSizes sizes;
  if (size == ValidationSize::full) {
    sizes.side = 64;
    sizes.repeats = 8;
    sizes.pool = 400;
    sizes.test = 100;
    sizes.small_labels = 32;
    sizes.large_labels = 256;
    sizes.training_images = 3000;
    sizes.pattern_train = 320;
    sizes.pattern_test = 320;
  }
  return sizes;
}

namespace {

ScenarioOptions square_2d(Family family, int side, const std::string& name) {
  ScenarioOptions scenario = default_scenario(family);
  scenario.name = name;
  scenario.geometry.dims = 2;
  scenario.geometry.size_2d = {side, side};
  return scenario;
}

}  // namespace

ScenarioOptions streaks_scenario(int side) {
  ScenarioOptions scenario = square_2d(Family::streaks, side, "validate-streaks");
  // A crop of an adult-sized head at 1 mm around the ventricles, where the lesions gather.
  scenario.geometry.anatomy_scale = AnatomyScale::physical;
  scenario.streaks.placement.density = LesionDensity::periventricular;
  scenario.streaks.placement.orientation = LesionOrientation::radial;
  scenario.streaks.line_shape = LineShape::tube;
  return scenario;
}

ScenarioOptions voids_scenario(int side) { return square_2d(Family::voids, side, "validate-voids"); }

study::LabelPlan label_plan(const std::string& name, LabelKind kind, const RaterOptions& rater) {
  study::LabelPlan plan;
  plan.name = name;
  plan.kind = kind;
  plan.rater = rater;
  plan.rater_file = "inline";
  return plan;
}

study::CellSpec make_cell(const CellContext& context, const ScenarioOptions& scenario, const study::LabelPlan& plan,
                          learn::Strategy strategy, int labels, int repeat) {
  study::CellSpec spec;
  spec.study = "validate";
  spec.scenario = scenario;
  spec.seed = context.seed;
  spec.cohort.pool = context.sizes.pool;
  spec.cohort.test = context.sizes.test;
  spec.plan = plan;
  spec.plan.strategies = {strategy};
  spec.train.strategy = strategy;
  spec.train.field = learn::default_field_for_family(to_string(scenario.family));
  spec.train.grading = plan.rater.grading;
  // Every cell pushes the same number of images through the optimiser whatever its n (cell.h), so
  // a small n trains for more epochs. Every label is trained on and the last epoch of the cosine
  // schedule is kept: choosing an epoch on a held-out fifth of 24 labels (5 images) chose by noise
  // and cost a fifth of the labels (count MAE at small n 1.46 -> 1.19; docs/learning.md).
  spec.train.epochs = 200;
  spec.train.patience = 0;
  spec.train.validation_fraction = 0.0;
  spec.training_images = context.sizes.training_images;
  spec.budget = labels;
  spec.budget_unit = study::BudgetUnit::labels;
  spec.repeat = repeat;
  spec.quantities = study::default_quantities(scenario.family);
  spec.threads = context.threads;
  return spec;
}

study::CellResult run(const CellContext& context, const study::CellSpec& spec) {
  const std::string key = study::cell_key(spec);
  if (const study::CellResult* kept = context.archive->find(key)) return *kept;
  const auto progress = [&](const study::CellProgress& stage) {
    if (!context.progress) return;
    std::ostringstream text;
    text << spec.plan.name << " " << learn::to_string(spec.train.strategy) << " " << spec.budget << " labels: "
         << stage.stage;
    if (stage.stage == "train" && stage.epochs > 0) text << " epoch " << stage.epoch << "/" << stage.epochs;
    context.progress(text.str());
  };
  study::CellResult cell = study::run_cell(spec, context.cache, progress);
  if (cell.status != "done") throw UserError("validation cell " + spec.plan.name + " failed: " + cell.error);
  return context.archive->keep(std::move(cell));
}

double metric(const study::CellResult& cell, const std::string& test_set, const std::string& quantity,
              const std::string& name) {
  for (const store::MetricRow& row : cell.metrics)
    if (row.test_set == test_set && row.quantity == quantity && row.metric == name) return row.value;
  return std::numeric_limits<double>::quiet_NaN();
}

LabelQuality test_label_quality(const CellContext& context, const study::CellSpec& spec) {
  const study::SubjectSource source(spec.scenario, spec.seed);
  scoring::MapScoreAccumulator maps{scoring::ScoreOptions{}};
  LabelQuality quality;
  LabelRequest request;
  request.kind = spec.plan.kind;
  // A stream apart from the one the cells' raters use, so these labels are new draws of the rater.
  const std::uint64_t label_seed = mix64(spec.seed ^ 0x76616C6964ULL);
  const int first = spec.repeat * study::kRepeatStride + study::kTestOffset;
  for (int i = 0; i < spec.cohort.test; ++i) {
    const Subject& subject = context.cache->subject(source, first + i, 0);
    const Label label = make_label(subject, spec.plan.rater, request, label_seed);
    FloatImage marked(label.mask.geometry(), 0.0F);
    std::size_t voxels = 0;
    for (std::size_t v = 0; v < label.mask.size(); ++v)
      if (label.mask.data()[v] != 0) marked.data()[v] = 1.0F, ++voxels;
    maps.add_probability_map(marked, subject.labels);
    quality.mean_label_volume_mm3 += static_cast<double>(voxels) * label.mask.geometry().voxel_volume_mm3();
    std::size_t lesion_voxels = 0;
    for (std::uint8_t code : subject.labels.voxels()) lesion_voxels += code == kLesion ? 1 : 0;
    quality.mean_truth_volume_mm3 += static_cast<double>(lesion_voxels) * subject.labels.geometry().voxel_volume_mm3();
  }
  quality.maps = maps.finish();
  quality.mean_label_volume_mm3 /= spec.cohort.test;
  quality.mean_truth_volume_mm3 /= spec.cohort.test;
  return quality;
}

}  // namespace frugal::validation
