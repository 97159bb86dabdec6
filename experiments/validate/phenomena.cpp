#include "experiments/validate/phenomena.h"

#include <cmath>
#include <functional>
#include <string>

#include "experiments/validate/pattern_check.h"


namespace frugal::validation {
namespace {

using learn::Strategy;

// Two arms (a comparison and the method that should beat it) at small and large n: the small-n
// gain, and how much larger it is than the large-n gain. Errors, so gain = comparison - method.
RepeatOutcome gain_and_narrowing(const std::string& comparison, const std::string& method,
                                 const std::function<double(bool method_arm, int labels)>& error,
                                 const ValidationSizes& sizes) {
  const double comparison_small = error(false, sizes.small_labels);
  const double method_small = error(true, sizes.small_labels);
  const double comparison_large = error(false, sizes.large_labels);
  const double method_large = error(true, sizes.large_labels);
  const double gain_small = comparison_small - method_small;
  const double gain_large = comparison_large - method_large;
  return {{gain_small, gain_small - gain_large},
          {{method + ", small n", method_small},
           {comparison + ", small n", comparison_small},
           {method + ", large n", method_large},
           {comparison + ", large n", comparison_large}}};
}

// 1. Unbiased noisy outlines: the noise is averaged out, so the model beats its own labels.
RepeatOutcome noisy_outlines(const CellContext& context, int repeat) {
  RaterOptions rater = careful_rater();
  rater.name = "noisy";
  rater.outline.displacement_sd_mm = 1.0;  // zero-mean, smooth boundary displacement
  rater.outline.protrusion_rate = 0.3;
  rater.outline.hole_rate = 0.3;
  rater.outline.spurious_rate = 0.5;
  const study::LabelPlan plan = label_plan("noisy-outlines", LabelKind::outline, rater);
  const study::CellSpec spec = make_cell(context, streaks_scenario(context.sizes.side), plan, Strategy::mask,
                                         context.sizes.large_labels, repeat);
  const double model = metric(run(context, spec), "test", "lesions", "dice_pooled");
  const double labels = test_label_quality(context, spec).maps.pooled_dice;
  return {{model - labels}, {{"model Dice", model}, {"labels' Dice", labels}}};
}

// 2. Region-grown partial masks leave lesions unmarked; a positive-unlabelled model finds them.
RepeatOutcome partial_masks(const CellContext& context, int repeat) {
  const study::LabelPlan plan = label_plan("partial-masks", LabelKind::partial_mask, careful_rater());
  const study::CellSpec spec = make_cell(context, streaks_scenario(context.sizes.side), plan, Strategy::partial,
                                         context.sizes.large_labels, repeat);
  const double model = metric(run(context, spec), "test", "lesions", "recall");
  const double masks = test_label_quality(context, spec).maps.recall;
  return {{model - masks}, {{"model recall", model}, {"masks' recall", masks}}};
}

// 3. Grades: proportion bounds use what a grade says (an interval), scalar regression only its
// bin number; the advantage matters most when labels are few.
RepeatOutcome grade_bounds(const CellContext& context, int repeat) {
  RaterOptions rater = careful_rater();
  rater.name = "grader";
  rater.grading = GradingOptions{};  // the default bins and perception error
  const study::LabelPlan plan = label_plan("grades", LabelKind::grade, rater);
  const ScenarioOptions scenario = voids_scenario(context.sizes.side);
  const auto mae = [&](bool bounds, int labels) {
    const Strategy strategy = bounds ? Strategy::grade_bounds : Strategy::scalar;
    return metric(run(context, make_cell(context, scenario, plan, strategy, labels, repeat)), "test",
                  "affected_fraction", "mae");
  };
  return gain_and_narrowing("scalar MAE", "grade-bounds MAE", mae, context.sizes);
}

// 4. Counting through a density map with global sum pooling puts the mass on the objects counted.
RepeatOutcome count_map_mass(const CellContext& context, int repeat) {
  const study::LabelPlan plan = label_plan("counts", LabelKind::count, careful_rater());
  const study::CellResult cell = run(context, make_cell(context, streaks_scenario(context.sizes.side), plan,
                                                        Strategy::count_map, context.sizes.large_labels, repeat));
  const double lesion = metric(cell, "test", "map", "mass_per_lesion");
  const double dot = metric(cell, "test", "map", "mass_per_dot");
  const double line = metric(cell, "test", "map", "mass_per_line");
  // The worse look-alike kind the test set holds; none at all leaves nothing to compare (NaN fails).
  const double lookalike = std::fmax(dot, line);
  return {{std::log(lesion / lookalike)},
          {{"mass per lesion", lesion},
           {"mass per dot", dot},
           {"mass per line", line},
           {"share elsewhere", metric(cell, "test", "map", "mass_share_elsewhere")}}};
}

// 5. Consistency with unlabelled images: a regulariser that matters when labels are few.
RepeatOutcome consistency(const CellContext& context, int repeat) {
  const study::LabelPlan plan = label_plan("counts", LabelKind::count, careful_rater());
  const ScenarioOptions scenario = streaks_scenario(context.sizes.side);
  const auto mae = [&](bool with_consistency, int labels) {
    study::CellSpec spec = make_cell(context, scenario, plan, Strategy::count_map, labels, repeat);
    spec.train.consistency_weight = with_consistency ? 1.0 : 0.0;
    return metric(run(context, spec), "test", "count", "mae");
  };
  return gain_and_narrowing("count MAE", "count MAE with consistency", mae, context.sizes);
}

// 6. Systematically dilated outlines: a model learns the rater's bias with the lesions.
RepeatOutcome biased_outlines(const CellContext& context, int repeat) {
  RaterOptions dilating = careful_rater();
  dilating.name = "dilating";
  dilating.outline.bias_mm = 1.0;
  const ScenarioOptions scenario = streaks_scenario(context.sizes.side);
  const auto relative_bias = [&](const study::LabelPlan& plan, LabelQuality* labels) {
    study::CellSpec spec = make_cell(context, scenario, plan, Strategy::mask, context.sizes.large_labels, repeat);
    spec.quantities = {"burden_mm3"};
    const study::CellResult cell = run(context, spec);
    if (labels != nullptr) *labels = test_label_quality(context, spec);
    return metric(cell, "test", "burden_mm3", "bias") / metric(cell, "test", "burden_mm3", "mean_truth");
  };
  LabelQuality dilated_labels;
  const double exact = relative_bias(label_plan("exact-outlines", LabelKind::outline, careful_rater()), nullptr);
  const double dilated = relative_bias(label_plan("dilated-outlines", LabelKind::outline, dilating), &dilated_labels);
  const double label_excess = dilated_labels.mean_label_volume_mm3 / dilated_labels.mean_truth_volume_mm3 - 1.0;
  return {{dilated - exact},
          {{"model volume bias, exact labels", exact},
           {"model volume bias, dilated labels", dilated},
           {"dilated labels' volume excess", label_excess}}};
}

// 7. A cue tied to the count in training only: a scalar head can read the cue; a density map
// that counts objects has less reason to.
RepeatOutcome confounder(const CellContext& context, int repeat) {
  ScenarioOptions scenario = streaks_scenario(context.sizes.side);
  scenario.name = "validate-streaks-confounded";
  scenario.confounder.factor = ConfounderFactor::field_size;
  scenario.confounder.correlation = 0.8;
  scenario.confounder.spread = 0.1;
  const study::LabelPlan plan = label_plan("counts", LabelKind::count, careful_rater());
  const auto degradation = [&](Strategy strategy, double& test_mae) {
    study::CellSpec spec = make_cell(context, scenario, plan, strategy, context.sizes.large_labels, repeat);
    spec.cohort.decorrelated_test = true;
    const study::CellResult cell = run(context, spec);
    test_mae = metric(cell, "test", "count", "mae");
    return metric(cell, "decorrelated", "count", "mae") - test_mae;
  };
  double scalar_mae = 0.0, map_mae = 0.0;
  const double scalar = degradation(Strategy::scalar, scalar_mae);
  const double map = degradation(Strategy::count_map, map_mae);
  return {{scalar - map},
          {{"scalar MAE, confounded test", scalar_mae},
           {"scalar MAE rise when decorrelated", scalar},
           {"count-map MAE, confounded test", map_mae},
           {"count-map MAE rise when decorrelated", map}}};
}

}  // namespace

std::vector<Phenomenon> canonical_phenomena() {
  std::vector<Phenomenon> phenomena;
  phenomena.push_back(
      {1,
       "noisy outlines",
       {{"1", "a model trained on unbiased noisy outlines beats its own training labels",
         "pooled Dice vs truth, model minus the rater's outlines of the test subjects",
         "Rolnick et al. 2017 (deep learning is robust to massive label noise); Heller et al. 2018 (imperfect "
         "segmentation labels)",
         0.02}},
       noisy_outlines});
  phenomena.push_back(
      {2,
       "partial masks",
       {{"2", "a model trained on region-grown partial masks finds more lesions than the masks mark",
         "lesion recall (one-to-one, IoU >= 0.1), model minus the masks of the test subjects",
         "positive-unlabelled learning: Lee & Liu 2003; Elkan & Noto 2008", 0.10}},
       partial_masks});
  phenomena.push_back(
      {3,
       "grade bounds",
       {{"3a", "proportion-bounded training from grades beats scalar regression at small n",
         "affected-fraction MAE, scalar minus grade-bounds, small n",
         "size constraints: Jia et al. 2017; Kervadec et al. 2019", 0.005},
        {"3b", "and the gap narrows with n", "the small-n gap minus the large-n gap",
         "learning curves of methods converge with data (common practice, no source)", 0.0}},
       grade_bounds});
  phenomena.push_back(
      {4,
       "count-map mass",
       {{"4", "count-map trained on counts puts more map mass per object on lesions than on look-alikes",
         "ln(mass per lesion / mass per look-alike of the worse kind), within 2 mm of each object",
         "density counting: Lempitsky & Zisserman 2010; localisation from global pooling: Zhou et al. 2016",
         std::log(2.0)}},
       count_map_mass});
  phenomena.push_back(
      {5,
       "consistency",
       {{"5a", "consistency with unlabelled images helps count-map at small labelled n",
         "count MAE without minus with the consistency term, small n",
         "Laine & Aila 2017 (Pi-model); Oliver et al. 2018 (realistic evaluation of semi-supervised learning)", 0.05},
        {"5b", "and helps most there", "the small-n gain minus the large-n gain",
         "Oliver et al. 2018: the benefit shrinks as labels grow", 0.0}},
       consistency});
  phenomena.push_back(
      {6,
       "biased labels",
       {{"6", "systematically dilated outlines yield a model that overestimates lesion volume",
         "relative lesion-volume bias, model on dilated minus model on exact outlines",
         "Vorontsov & Kadoury 2021 (label noise in segmentation: mitigation must deal with bias)", 0.20}},
       biased_outlines});
  phenomena.push_back(
      {7,
       "confounder",
       {{"7", "with a training confounder, scalar regression degrades more than map-based counting",
         "count MAE rise on a decorrelated test set, scalar minus count-map",
         "shortcut learning: Geirhos et al. 2020; confounded radiograph models: Zech et al. 2018", 0.10}},
       confounder});
  phenomena.push_back(
      {8,
       "void patterns",
       {{"8", "void patterns matched on densitometry are still told apart by a pattern classifier",
         "held-out accuracy, texture classifier minus the same classifier on densitometry alone",
         "texture classification of emphysema patterns: Sorensen et al. 2010", 0.30}},
       pattern_separability});
  return phenomena;
}

}  // namespace frugal::validation
