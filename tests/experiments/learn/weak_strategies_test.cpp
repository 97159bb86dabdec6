// The strategies that learn from noisy, partial or weak labels, each against its trivial baseline
// on a small fixed problem (learn_test_problems.h), plus the add-ons (consistency, augmentation,
// bfloat16) and the classical strategies through the learner. Seeds are fixed and printed; truth
// only scores.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <string>
#include <vector>

#include "experiments/baselines/line_filter.h"
#include "experiments/baselines/threshold.h"
#include "experiments/learn/learner.h"
#include "learn_test_problems.h"

namespace frugal::learn {
namespace {

using namespace testing;  // NOLINT(google-build-using-namespace): the shared problems and scores

struct Problem {
  std::vector<Subject> train, test;
};

Problem draw_problem(const ScenarioOptions& scenario, int train_count = kTrainSubjects) {
  std::printf("seed %llu\n", static_cast<unsigned long long>(kSeed));
  return {draw_subjects(scenario, kSeed, 0, train_count), draw_subjects(scenario, kSeed, train_count, kTestSubjects)};
}

std::vector<Prediction> train_and_predict(const Problem& problem, const std::vector<Label>& labels,
                                          const TrainOptions& options) {
  const TrainResult result = train(training_set(problem.train, labels), options);
  std::printf("%s: %d epochs (best %d), %.1f s, %.0f images/s\n", to_string(options.strategy).c_str(),
              result.summary.epochs_run, result.summary.best_epoch, result.summary.seconds,
              result.summary.images_per_second);
  return predict(result.model, images_of(problem.test));
}

// A sloppy outliner: boundaries displaced by 0.8 mm (SD) on a 4 mm scale, more protrusions
// and holes, a spurious blob in every other image, and one lesion in six missed.
RaterOptions sloppy_outliner() {
  RaterOptions rater = careful_rater();
  rater.detection.lapse = 1.0 / 6.0;
  rater.outline.displacement_sd_mm = 0.8;
  rater.outline.protrusion_rate = 0.3;
  rater.outline.hole_rate = 0.2;
  rater.outline.spurious_rate = 0.5;
  return rater;
}

// mask-robust on noisy outlines. The trivial baseline is the noisy outlines themselves: they
// agree with the true lesion masks of their subjects only to a pooled Dice of about 0.43. The
// network's Dice on unseen subjects must beat that by 0.1 (a learner that averages the noise away
// instead of copying it; common practice, no source).
TEST(MaskRobust, SegmentsLesionsFromNoisyOutlines) {
  const Problem problem = draw_problem(small_scenario(Family::streaks, kSide));
  const auto labels = buy_labels(problem.train, LabelKind::outline, sloppy_outliner(), kSeed);
  std::vector<Prediction> as_labels;
  for (const Label& label : labels) {
    Prediction prediction;
    prediction.map = FloatImage(label.mask.geometry());
    std::transform(label.mask.voxels().begin(), label.mask.voxels().end(), prediction.map.data(),
                   [](std::uint8_t v) { return static_cast<float>(v); });
    as_labels.push_back(std::move(prediction));
  }
  const double label_dice = pooled_dice(as_labels, problem.train);
  const double dice =
      pooled_dice(train_and_predict(problem, labels, quick_options(Strategy::mask_robust)), problem.test);
  std::printf("pooled Dice against truth: noisy outlines %.3f, mask-robust (gce) %.3f\n", label_dice, dice);
  EXPECT_GE(dice, label_dice + 0.1);
}

// Each robust loss trains and gives a finite map (two epochs, tiny set): the three are
// selectable and wired (common practice, no source).
TEST(MaskRobust, EveryRobustLossTrains) {
  const Problem problem = draw_problem(small_scenario(Family::streaks, kSide), 32);
  const auto labels = buy_labels(problem.train, LabelKind::outline, sloppy_outliner(), kSeed);
  for (RobustLoss loss :
       {RobustLoss::generalized_cross_entropy, RobustLoss::bootstrapping, RobustLoss::label_smoothing}) {
    TrainOptions options = quick_options(Strategy::mask_robust);
    options.epochs = 2;
    options.robust_loss = loss;
    const TrainResult result = train(training_set(problem.train, labels), options);
    EXPECT_TRUE(std::isfinite(result.summary.training_loss.back())) << to_string(loss);
    const Prediction prediction = predict(result.model, problem.test.front().image);
    EXPECT_TRUE(std::all_of(prediction.map.voxels().begin(), prediction.map.voxels().end(), [](float v) {
      return v >= 0.0F && v <= 1.0F;
    })) << to_string(loss);
  }
}

// partial against partial-naive on the same region-grown labels, over two seeds (problem,
// labels and training all drawn from the seed). A partial mask marks only the most conspicuous
// lesions (here 3 per image: about 0.6 of them, under half of the lesion area), so reading unmarked voxels
// as background teaches the network to miss the rest, and over-weighting the marked voxels
// marks everything (the old loss: precision 0.43). Lesions are matched one-to-one at IoU >= 0.1 as `frugal score`
// matches them (segmentation_scores). Requirements (common practice, no source; measured 0.98-1.00 recall, 0.94-0.96
// precision, area 0.83-0.85 with bfloat16, docs/learning.md):
//   - matched-lesion recall >= 0.9 and >= the naive reading's + 0.15 (naive: 0.69-0.73);
//   - matched-lesion precision >= 0.85 (does not find them by marking everything);
//   - area of map > 0.5 within [0.7, 1.2] x the true lesion area (the old loss gave 1.6-2.1).
TEST(Partial, FindsTheUnmarkedLesionsOneToOne) {
  for (const std::uint64_t seed : {kSeed, kSeed + 1000}) {
    std::printf("seed %llu\n", static_cast<unsigned long long>(seed));
    const Problem problem{draw_subjects(counting_scenario(), seed, 0, kTrainSubjects),
                          draw_subjects(counting_scenario(), seed, kTrainSubjects, kTestSubjects)};
    const RaterOptions rater = careful_rater();  // region_grow.seeds = 3, the rater default
    const auto labels = buy_labels(problem.train, LabelKind::partial_mask, rater, seed);
    TrainOptions options = quick_options(Strategy::partial);
    options.seed = seed;
    const SegmentationScores partial = segmentation_scores(train_and_predict(problem, labels, options), problem.test);
    options.strategy = Strategy::partial_naive;
    const SegmentationScores naive = segmentation_scores(train_and_predict(problem, labels, options), problem.test);
    std::printf(
        "partial: recall %.3f, precision %.3f, Dice %.3f, area ratio %.3f; partial-naive: recall %.3f, "
        "precision %.3f, Dice %.3f, area ratio %.3f\n",
        partial.recall, partial.precision, partial.dice, partial.area_ratio, naive.recall, naive.precision, naive.dice,
        naive.area_ratio);
    EXPECT_GE(partial.recall, 0.9) << "seed " << seed;
    EXPECT_GE(partial.recall, naive.recall + 0.15) << "seed " << seed;
    EXPECT_GE(partial.precision, 0.85) << "seed " << seed;
    EXPECT_GE(partial.area_ratio, 0.7) << "seed " << seed;
    EXPECT_LE(partial.area_ratio, 1.2) << "seed " << seed;
  }
}

// Area under the ROC curve by the Mann-Whitney statistic, ties counted half (Hanley & McNeil,
// Radiology 1982).
double roc_auc(const std::vector<double>& scores, const std::vector<bool>& positive) {
  double wins = 0.0, pairs = 0.0;
  for (std::size_t i = 0; i < scores.size(); ++i)
    for (std::size_t j = 0; j < scores.size(); ++j) {
      if (!positive[i] || positive[j]) continue;
      pairs += 1.0;
      wins += scores[i] > scores[j] ? 1.0 : scores[i] == scores[j] ? 0.5 : 0.0;
    }
  return wins / pairs;
}

// presence-mil from presence flags only: ROC AUC of the pooled presence against true presence
// >= 0.85, where a constant (the trivial baseline) scores 0.5; lesions here are 6-12 mm and
// clearly visible, so a working MIL pooling separates most images (common practice, no source).
// Also the map localises though no voxel was ever labelled: lesions matched one to one at
// IoU >= 0.1 (as frugal score matches), recall >= 0.75 and precision >= 0.8 (measured 0.96 and
// 1.00; marking nothing scores 0).
TEST(PresenceMil, DetectsLesionsFromPresenceFlags) {
  ScenarioOptions scenario = counting_scenario();
  scenario.streaks.count = CountDistribution{CountDistribution::Kind::poisson, 0.8};  // P(none) = 0.45
  const Problem problem = draw_problem(scenario);
  const auto labels = buy_labels(problem.train, LabelKind::presence, careful_rater(), kSeed);
  const auto predictions = train_and_predict(problem, labels, quick_options(Strategy::presence_mil));
  std::vector<double> scores;
  std::vector<bool> present;
  for (std::size_t i = 0; i < predictions.size(); ++i) {
    scores.push_back(predictions[i].presence_probability);
    present.push_back(problem.test[i].truth.count > 0);
  }
  const double auc = roc_auc(scores, present);
  const SegmentationScores map = segmentation_scores(predictions, problem.test);
  std::printf("presence-mil: AUC %.3f, matched recall %.3f, precision %.3f, area ratio %.2f\n", auc, map.recall,
              map.precision, map.area_ratio);
  EXPECT_GE(auc, 0.85);
  EXPECT_GE(map.recall, 0.75);
  EXPECT_GE(map.precision, 0.8);
}

// points from clicks. Clicks say where lesions are, not how far they reach, so the map is the
// product: lesions matched one to one at IoU >= 0.1 with recall >= 0.8 and precision >= 0.9, and
// pooled Dice >= 0.5 against the true masks (measured 0.94, 1.00 and 0.65), where the trivial
// baselines (marking nothing, or the same number of voxels at random, about 2 % of the image)
// score 0 and about 0.02 (common practice, no source). Counts read from the map's
// components must at least not lose to predicting the training clicks' mean count; at 48 x 48
// neighbouring lesions' blobs merge and jittered clicks that miss their lesion grow blobs of their
// own, so counting is left to count-map (docs/learning.md).
TEST(Points, LocalisesLesionsFromClicks) {
  const Problem problem = draw_problem(counting_scenario());
  const auto labels = buy_labels(problem.train, LabelKind::points, careful_rater(), kSeed);
  const auto predictions = train_and_predict(problem, labels, quick_options(Strategy::points));
  std::vector<double> clicks, predicted, truth;
  for (const Label& label : labels) clicks.push_back(static_cast<double>(label.clicks.size()));
  for (std::size_t i = 0; i < predictions.size(); ++i) {
    predicted.push_back(predictions[i].count);
    truth.push_back(problem.test[i].truth.count);
  }
  const double model_mae = mean_absolute_error(predicted, truth);
  const double baseline_mae = mean_absolute_error(std::vector<double>(truth.size(), mean_of(clicks)), truth);
  const SegmentationScores map = segmentation_scores(predictions, problem.test);
  std::printf(
      "points: matched recall %.3f, precision %.3f, pooled Dice %.3f, area ratio %.2f; count MAE %.3f (mean %.2f, "
      "true mean %.2f), mean-prediction MAE %.3f\n",
      map.recall, map.precision, map.dice, map.area_ratio, model_mae, mean_of(predicted), mean_of(truth),
      baseline_mae);
  EXPECT_GE(map.recall, 0.8);
  EXPECT_GE(map.precision, 0.9);
  EXPECT_GE(map.dice, 0.5);
  EXPECT_LE(model_mae, baseline_mae);
}

// mixed: 24 outlines plus 232 grades on one network against mask on the 24 outlines alone;
// the weak labels must not hurt (Dice at least the outline-only Dice - 0.02, the run-to-run
// spread seen between seeds) and the result must clear the 0.6 Dice margin (common practice,
// no source).
TEST(Mixed, FewOutlinesPlusManyGradesSegment) {
  const Problem problem = draw_problem(small_scenario(Family::streaks, kSide));
  const RaterOptions rater = careful_rater();
  auto labels = buy_labels(problem.train, LabelKind::grade, rater, kSeed);
  const auto outlines = buy_labels(problem.train, LabelKind::outline, rater, kSeed);
  constexpr std::size_t kOutlined = 24;
  for (std::size_t i = 0; i < kOutlined; ++i) labels[i] = outlines[i];
  TrainOptions options = quick_options(Strategy::mixed);
  options.grading = rater.grading;
  const double mixed_dice = pooled_dice(train_and_predict(problem, labels, options), problem.test);
  const Problem few{std::vector<Subject>(problem.train.begin(), problem.train.begin() + kOutlined), problem.test};
  const double mask_dice =
      pooled_dice(train_and_predict(few, std::vector<Label>(outlines.begin(), outlines.begin() + kOutlined),
                                    quick_options(Strategy::mask)),
                  problem.test);
  std::printf("pooled Dice: mixed %.3f, mask on the %zu outlines alone %.3f\n", mixed_dice, kOutlined, mask_dice);
  EXPECT_GE(mixed_dice, mask_dice - 0.02);
  EXPECT_GE(mixed_dice, 0.6);
}

// The consistency add-on on count-map: 64 counted images plus 192 unlabelled ones. It must keep
// the counting margin (MAE <= 0.6 x the mean-count MAE) and actually change the model.
TEST(Consistency, CountMapWithUnlabelledImages) {
  const Problem problem = draw_problem(counting_scenario());
  const auto all_labels = buy_labels(problem.train, LabelKind::count, careful_rater(), kSeed);
  constexpr std::size_t kCounted = 64;
  TrainingSet set;
  for (std::size_t i = 0; i < problem.train.size(); ++i) {
    if (i < kCounted)
      set.add(problem.train[i].image, all_labels[i]);
    else
      set.add_unlabelled(problem.train[i].image);
  }
  TrainOptions options = quick_options(Strategy::count_map);
  options.patience = 0;
  options.consistency_weight = 1.0;
  const TrainResult with = train(set, options);
  const auto predictions = predict(with.model, images_of(problem.test));
  std::vector<double> counts, predicted, truth;
  for (std::size_t i = 0; i < kCounted; ++i) counts.push_back(all_labels[i].value);
  for (std::size_t i = 0; i < predictions.size(); ++i) {
    predicted.push_back(predictions[i].count);
    truth.push_back(problem.test[i].truth.count);
  }
  const double model_mae = mean_absolute_error(predicted, truth);
  const double baseline_mae = mean_absolute_error(std::vector<double>(truth.size(), mean_of(counts)), truth);
  std::printf("count-map + consistency: count MAE %.3f, mean-prediction MAE %.3f, %.1f s\n", model_mae, baseline_mae,
              with.summary.seconds);
  EXPECT_LE(model_mae, 0.6 * baseline_mae);
  options.consistency_weight = 0.0;
  options.epochs = 2;
  TrainOptions with_options = options;
  with_options.consistency_weight = 1.0;
  const Prediction without_term = predict(train(set, options).model, problem.test.front().image);
  const Prediction with_term = predict(train(set, with_options).model, problem.test.front().image);
  EXPECT_NE(without_term.map.voxels(), with_term.map.voxels());
}

// The consistency term on a probability map (mask) with geometric augmentation: two runs with the
// same seed and threads give identical bits and a finite loss, so the term reads only memory it
// owns and nothing depends on thread timing (common practice, no source).
TEST(Consistency, MaskWithConsistencyIsDeterministic) {
  const Problem problem = draw_problem(small_scenario(Family::streaks, kSide), 32);
  const auto labels = buy_labels(problem.train, LabelKind::outline, careful_rater(), kSeed);
  TrainingSet set = training_set(problem.train, labels);
  for (std::size_t i = 0; i < 16; ++i) set.add_unlabelled(problem.test[i].image);
  TrainOptions options = quick_options(Strategy::mask);
  options.epochs = 2;
  options.consistency_weight = 1.0;
  options.augmentation.rotation_degrees = 10.0;
  options.augmentation.deformation_mm = 1.0;
  const TrainResult first = train(set, options);
  const TrainResult second = train(set, options);
  EXPECT_TRUE(std::isfinite(first.summary.training_loss.back()));
  EXPECT_EQ(first.summary.training_loss, second.summary.training_loss);
  EXPECT_EQ(predict(first.model, problem.test.back().image).map.voxels(),
            predict(second.model, problem.test.back().image).map.voxels());
}

// Geometric augmentation (rotations up to 10 degrees, 1 mm smooth deformations) keeps mask's
// clean-outline margin (Dice >= 0.6, learner_test.cpp).
TEST(Augmentation, MaskKeepsItsMarginWithRotationsAndDeformations) {
  const Problem problem = draw_problem(small_scenario(Family::streaks, kSide));
  const auto labels = buy_labels(problem.train, LabelKind::outline, careful_rater(), kSeed);
  TrainOptions options = quick_options(Strategy::mask);
  options.augmentation.rotation_degrees = 10.0;
  options.augmentation.deformation_mm = 1.0;
  const double dice = pooled_dice(train_and_predict(problem, labels, options), problem.test);
  std::printf("mask with rotations and deformations: pooled Dice %.3f\n", dice);
  EXPECT_GE(dice, 0.6);
}

// bfloat16 autocast against full precision on the same problem, seed and threads: the pooled
// Dice may move by at most 0.03 (bfloat16 keeps 8 bits of mantissa; the bound is what we accept
// for the speed, common practice, no source).
TEST(Precision, Bfloat16StaysWithinToleranceOfFullPrecision) {
  const Problem problem = draw_problem(small_scenario(Family::streaks, kSide));
  const auto labels = buy_labels(problem.train, LabelKind::outline, careful_rater(), kSeed);
  TrainOptions options = quick_options(Strategy::mask);
  options.bfloat16 = false;
  const double full = pooled_dice(train_and_predict(problem, labels, options), problem.test);
  options.bfloat16 = true;
  const double reduced = pooled_dice(train_and_predict(problem, labels, options), problem.test);
  std::printf("pooled Dice: float32 %.3f, bfloat16 %.3f\n", full, reduced);
  EXPECT_LE(std::abs(full - reduced), 0.03);
}

// threshold through the learner: the same fraction as the baseline on the same field, and the
// generator's densitometry when the field is the truth lung field (exact equality: the same
// float comparison, docs/baselines.md).
TEST(Threshold, PredictsTheBaselineFraction) {
  const auto subjects = draw_subjects(small_scenario(Family::voids, kSide), kSeed, 0, 8);
  TrainOptions options;
  options.strategy = Strategy::threshold;
  options.field.high = -400.0;
  options.field.drop_border_connected = true;
  const TrainResult result = train(TrainingSet{}, options);
  // A checkpoint of a classical strategy holds only its options; it predicts the same.
  const std::string path =
      std::string(std::getenv("TEST_TMPDIR") ? std::getenv("TEST_TMPDIR") : ".") + "/threshold_checkpoint.pt";
  result.model.save(path);
  const TrainedModel loaded = TrainedModel::load(path);
  EXPECT_EQ(loaded.strategy(), Strategy::threshold);
  for (const Subject& subject : subjects) {
    const Prediction prediction = predict(result.model, subject.image);
    const auto expected =
        baselines::threshold_densitometry(subject.image, estimate_field(subject.image, options.field));
    EXPECT_EQ(prediction.affected_fraction, expected.fraction);
    EXPECT_EQ(predict(loaded, subject.image).affected_fraction, expected.fraction);
  }
}

// line-filter through the learner: the baseline's count on every image (it is the same code).
TEST(LineFilter, PredictsTheBaselineCount) {
  const auto subjects = draw_subjects(counting_scenario(), kSeed, 0, 8);
  TrainOptions options;
  options.strategy = Strategy::line_filter;
  const TrainResult result = train(TrainingSet{}, options);
  for (const Subject& subject : subjects) {
    const LabelImage whole(subject.image.geometry(), 1);
    EXPECT_EQ(predict(result.model, subject.image).count, baselines::count_lines(subject.image, {}, &whole).count);
  }
}

}  // namespace
}  // namespace frugal::learn
