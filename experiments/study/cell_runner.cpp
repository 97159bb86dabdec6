#include "experiments/study/cell_runner.h"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <exception>
#include <limits>
#include <thread>

#include "corruptors/grade.h"
#include "corruptors/labeler.h"
#include "experiments/measure/kappa.h"
#include "experiments/measure/map_mass.h"
#include "experiments/scoring/scoring.h"
#include "experiments/study/example_maps.h"
#include "experiments/study/map_kind.h"
#include "phantoms/phantom.h"
#include "phantoms/random.h"
#include "phantoms/scenario_yaml.h"
#include "phantoms/user_error.h"

namespace frugal::study {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
using Clock = std::chrono::steady_clock;

double seconds_since(Clock::time_point start) { return std::chrono::duration<double>(Clock::now() - start).count(); }

// Runs body(i) for i in [0, n) on up to `threads` threads; the first exception is rethrown here.
template <class Body>
void parallel_for(std::size_t n, int threads, const Body& body) {
  const std::size_t workers = std::min<std::size_t>(n, static_cast<std::size_t>(std::max(1, threads)));
  if (workers <= 1) {
    for (std::size_t i = 0; i < n; ++i) body(i);
    return;
  }
  std::vector<std::thread> pool;
  std::vector<std::exception_ptr> errors(workers);
  for (std::size_t w = 0; w < workers; ++w)
    pool.emplace_back([&, w] {
      try {
        for (std::size_t i = w; i < n; i += workers) body(i);
      } catch (...) {
        errors[w] = std::current_exception();
      }
    });
  for (std::thread& thread : pool) thread.join();
  for (const std::exception_ptr& error : errors)
    if (error) std::rethrow_exception(error);
}

std::string scenario_key(const ScenarioOptions& scenario, std::uint64_t seed) {
  return sha256_hex(scenario_to_yaml(scenario) + "\nseed: " + std::to_string(seed));
}

// Raters answer from their own random streams, apart from the phantoms' (cell.h's seed).
std::uint64_t label_seed(std::uint64_t seed) { return mix64(seed ^ 0x6C6162656C73ULL); }

// One part of a plan's purchase: every label of the subjects bought, in purchase order.
struct Purchase {
  std::vector<int> subjects;
  std::vector<const Label*> labels;
  double seconds = 0.0;
};

// Buys `plan`'s labels along `order` until the next subject's labels would exceed the budget
// (hours: annotator seconds; labels: subjects labelled). Stops at the first subject that does
// not fit, so a smaller budget's purchase is always a prefix of a larger one's.
Purchase buy(const LabelSource& source, const CellSpec& spec, double budget, const std::vector<int>& order,
             CohortCache& cache, double& generate_seconds) {
  Purchase purchase;
  const int base = spec.repeat * kRepeatStride;
  const bool by_hours = spec.budget_unit == BudgetUnit::hours;
  const double budget_seconds = budget * 3600.0;
  const auto affordable_subjects = static_cast<std::size_t>(std::floor(budget + 1e-9));
  constexpr std::size_t kChunk = 32;
  for (std::size_t first = 0; first < order.size(); first += kChunk) {
    std::vector<int> chunk;
    for (std::size_t i = first; i < std::min(order.size(), first + kChunk); ++i) chunk.push_back(base + order[i]);
    const auto generate_start = Clock::now();
    cache.prefetch(source.subjects, chunk, 0, spec.threads);
    generate_seconds += seconds_since(generate_start);
    cache.prefetch_labels(source, chunk, spec.threads);
    for (int index : chunk) {
      if (!by_hours && purchase.subjects.size() >= affordable_subjects) return purchase;
      const std::vector<Label>& labels = cache.labels(source, index);
      double cost = 0.0;
      for (const Label& label : labels) cost += label.cost_seconds;
      if (by_hours && purchase.seconds + cost > budget_seconds) return purchase;
      purchase.subjects.push_back(index);
      for (const Label& label : labels) purchase.labels.push_back(&label);
      purchase.seconds += cost;
    }
  }
  return purchase;  // the pool ran out first
}

double truth_value(const std::string& quantity, const SubjectTruth& truth, const GradingOptions& grading) {
  if (quantity == "count") return truth.count;
  if (quantity == "affected_fraction") return truth.affected_fraction;
  if (quantity == "burden_mm3") return truth.burden_mm3;
  if (quantity == "grade") return grade_of_fraction(truth.affected_fraction, grading);
  FRUGAL_CHECK(quantity == "presence");
  return truth.family == Family::voids ? (truth.affected_fraction > 0.0 ? 1.0 : 0.0) : (truth.count > 0 ? 1.0 : 0.0);
}

double predicted_value(const std::string& quantity, const learn::Prediction& prediction) {
  if (quantity == "count") return prediction.count;
  if (quantity == "affected_fraction") return prediction.affected_fraction;
  if (quantity == "burden_mm3") return prediction.burden_mm3;
  if (quantity == "grade") return prediction.grade;
  FRUGAL_CHECK(quantity == "presence");
  return prediction.presence_probability;
}

std::string joined(const std::vector<std::string>& notes) {
  std::string out;
  for (const std::string& note : notes) out += (out.empty() ? "" : "; ") + note;
  return out;
}

void add_metric(CellResult& result, const std::string& set, const std::string& quantity, const std::string& metric,
                double value, int n, const std::string& note, double lower = kNaN, double upper = kNaN) {
  result.metrics.push_back({set, quantity, metric, value, lower, upper, n, std::isnan(value) ? note : ""});
}

void add_quantity_metrics(CellResult& result, const std::string& set, const scoring::QuantityScore& q) {
  const std::string note = q.notes.empty() ? "n/a" : joined(q.notes);
  add_metric(result, set, q.quantity, "mean_truth", q.mean_truth, q.n, note);
  add_metric(result, set, q.quantity, "mean_predicted", q.mean_predicted, q.n, note);
  add_metric(result, set, q.quantity, "mae", q.mae, q.n, note);
  add_metric(result, set, q.quantity, "bias", q.bias, q.n, note);
  add_metric(result, set, q.quantity, "rmse", q.rmse, q.n, note);
  add_metric(result, set, q.quantity, "pearson", q.pearson, q.n, note);
  add_metric(result, set, q.quantity, "spearman", q.spearman, q.n, note);
  add_metric(result, set, q.quantity, "icc_a1", q.icc, q.n, note, q.icc_lower, q.icc_upper);
  add_metric(result, set, q.quantity, "limits_of_agreement", q.bias, q.n, note, q.limits_lower, q.limits_upper);
  if (q.quantity == "grade") add_metric(result, set, q.quantity, "weighted_kappa", q.weighted_kappa, q.n, note);
}

// Quadratic-weighted kappa over every bin (the full category list, so an empty bin keeps its
// place), of the predicted grade rounded to the nearest bin (scalar strategies give real values).
double rounded_grade_kappa(const std::vector<double>& predicted, const std::vector<double>& truth,
                           const GradingOptions& grading, std::vector<std::string>& notes) {
  std::vector<double> rounded, categories;
  for (double value : predicted) rounded.push_back(std::clamp(std::round(value), 0.0, grading.bins() - 1.0));
  for (int bin = 0; bin < grading.bins(); ++bin) categories.push_back(bin);
  measure::CohenKappaOptions options;
  options.weights = measure::KappaWeights::quadratic;
  try {
    return measure::cohen_kappa(rounded, truth, categories, options).kappa;
  } catch (const UserError& error) {
    notes.push_back(std::string("weighted kappa: ") + error.what());
    return kNaN;
  }
}

// The true-grade bins: those of the rater that graded, else those the training used.
GradingOptions grading_of(const CellSpec& spec) {
  for (const LabelPlan* plan : {&spec.plan, &spec.strong, &spec.weak})
    if (plan->labelled && !plan->is_mixed() && plan->kind == LabelKind::grade && !plan->name.empty())
      return plan->rater.grading;
  return spec.train.grading;
}

// Where a density map's mass lies (map_mass.h), pooled over the set: per lesion, per look-alike
// and away from every object. A map that counts by finding lesions puts little on look-alikes.
void add_density_mass_metrics(CellResult& result, const std::string& set_name,
                              const std::vector<const Subject*>& subjects,
                              const std::vector<learn::Prediction>& predictions) {
  measure::MapMass pooled;
  int images = 0;
  for (std::size_t i = 0; i < subjects.size(); ++i) {
    if (predictions[i].map.empty()) continue;
    measure::ObjectCounts objects;
    for (const ObjectRecord& object : subjects[i]->truth.objects) {
      if (object.kind == ObjectKind::lesion) ++objects.lesions;
      if (object.kind == ObjectKind::dot_distractor) ++objects.dots;
      if (object.kind == ObjectKind::line_distractor) ++objects.lines;
    }
    pooled += measure::map_mass(predictions[i].map, subjects[i]->labels, objects);
    ++images;
  }
  const std::string none = "n/a: no such object in the test set";
  add_metric(result, set_name, "map", "mass_per_lesion", pooled.per_lesion(), pooled.objects.lesions, none);
  add_metric(result, set_name, "map", "mass_per_dot", pooled.per_dot(), pooled.objects.dots, none);
  add_metric(result, set_name, "map", "mass_per_line", pooled.per_line(), pooled.objects.lines, none);
  add_metric(result, set_name, "map", "mass_share_elsewhere", pooled.share_elsewhere(), images,
             "n/a: the maps hold no mass");
}

void score_set(CellResult& result, const CellSpec& spec, const std::string& set_name,
               const std::vector<const Subject*>& subjects, const std::vector<learn::Prediction>& predictions) {
  const GradingOptions grading = grading_of(spec);
  for (const std::string& quantity : spec.quantities) {
    std::vector<double> predicted, truth;
    for (std::size_t i = 0; i < subjects.size(); ++i) {
      const double value = predicted_value(quantity, predictions[i]);
      const double actual = truth_value(quantity, subjects[i]->truth, grading);
      result.predictions.push_back(
          {set_name, subjects[i]->truth.subject, subjects[i]->truth.rescan, quantity, value, actual});
      if (std::isnan(value)) continue;
      predicted.push_back(value);
      truth.push_back(actual);
    }
    if (quantity == "presence") {
      std::vector<int> present;
      for (double t : truth) present.push_back(t > 0.5 ? 1 : 0);
      const double auc = predicted.empty() ? kNaN : scoring::roc_auc(predicted, present);
      add_metric(result, set_name, quantity, "auc", auc, static_cast<int>(predicted.size()),
                 predicted.empty() ? "n/a: the strategy gives no presence probability"
                                   : "n/a: needs test images with and without lesions");
      continue;
    }
    if (predicted.empty()) {
      add_metric(result, set_name, quantity, "mae", kNaN, 0,
                 "n/a: strategy " + learn::to_string(spec.train.strategy) + " does not predict " + quantity);
      continue;
    }
    scoring::QuantityScore score = scoring::score_quantity(quantity, predicted, truth);
    if (quantity == "grade") score.weighted_kappa = rounded_grade_kappa(predicted, truth, grading, score.notes);
    add_quantity_metrics(result, set_name, score);
  }
  if (map_kind_of(spec.train.strategy) == scoring::MapKind::density) {
    add_density_mass_metrics(result, set_name, subjects, predictions);
    return;
  }
  if (!map_is_probability(spec.train.strategy)) return;
  scoring::ScoreOptions options;
  options.grading = grading;
  scoring::MapScoreAccumulator maps(options);
  for (std::size_t i = 0; i < subjects.size(); ++i)
    if (!predictions[i].map.empty()) maps.add_probability_map(predictions[i].map, subjects[i]->labels);
  const scoring::MapScore score = maps.finish();
  const std::string note = score.notes.empty() ? "n/a" : joined(score.notes);
  add_metric(result, set_name, "lesions", "dice_pooled", score.pooled_dice, score.images, note);
  add_metric(result, set_name, "lesions", "dice_mean", score.mean_dice, score.images, note);
  add_metric(result, set_name, "lesions", "recall", score.recall, score.truth_lesions, note);
  add_metric(result, set_name, "lesions", "precision", score.precision, score.predicted_lesions, note);
  add_metric(result, set_name, "lesions", "f1", score.f1, score.images, note);
}

}  // namespace

namespace {

std::vector<Label> make_labels(const LabelPlan& plan, const Subject& subject, std::uint64_t seed) {
  std::vector<Label> labels;
  for (int r = 0; r < plan.raters_per_image; ++r) {
    LabelRequest request;
    request.kind = plan.kind;
    request.scope = plan.scope;
    request.rater = r;
    labels.push_back(make_label(subject, plan.rater, request, label_seed(seed)));
  }
  return labels;
}

}  // namespace

SubjectSource::SubjectSource(const ScenarioOptions& scenario_options, std::uint64_t seed_value)
    : scenario(scenario_options), seed(seed_value), key(scenario_key(scenario_options, seed_value)) {}

LabelSource::LabelSource(const LabelPlan& label_plan, const SubjectSource& subject_source)
    : plan(label_plan), subjects(subject_source) {
  nlohmann::json identity = to_json(label_plan);
  identity.erase("strategies");
  identity.erase("name");
  key = identity.dump() + subject_source.key;
}

const Subject& CohortCache::subject(const SubjectSource& source, int index, int rescan) {
  auto& set = subjects_[source.key];
  auto found = set.find({index, rescan});
  if (found == set.end())
    found =
        set.emplace(std::make_pair(index, rescan), generate_subject(source.scenario, source.seed, index, rescan)).first;
  return found->second;
}

void CohortCache::prefetch(const SubjectSource& source, const std::vector<int>& indices, int rescan, int threads) {
  auto& set = subjects_[source.key];
  std::vector<int> missing;
  for (int index : indices)
    if (set.count({index, rescan}) == 0) missing.push_back(index);
  std::vector<Subject> drawn(missing.size());
  parallel_for(missing.size(), threads,
               [&](std::size_t i) { drawn[i] = generate_subject(source.scenario, source.seed, missing[i], rescan); });
  for (std::size_t i = 0; i < missing.size(); ++i) set.emplace(std::make_pair(missing[i], rescan), std::move(drawn[i]));
}

const std::vector<Label>& CohortCache::labels(const LabelSource& source, int index) {
  prefetch_labels(source, {index}, 1);
  return labels_.at(source.key).at(index);
}

void CohortCache::prefetch_labels(const LabelSource& source, const std::vector<int>& indices, int threads) {
  auto& plan_labels = labels_[source.key];
  std::vector<int> missing;
  for (int index : indices)
    if (plan_labels.count(index) == 0) missing.push_back(index);
  if (missing.empty()) return;
  prefetch(source.subjects, missing, 0, threads);
  std::vector<const Subject*> subjects;
  for (int index : missing) subjects.push_back(&subject(source.subjects, index, 0));
  std::vector<std::vector<Label>> made(missing.size());
  parallel_for(missing.size(), threads,
               [&](std::size_t i) { made[i] = make_labels(source.plan, *subjects[i], source.subjects.seed); });
  for (std::size_t i = 0; i < missing.size(); ++i) plan_labels.emplace(missing[i], std::move(made[i]));
}

const CellResult* CohortCache::same_purchase(const std::string& purchase_key) const {
  const auto found = results_.find(purchase_key);
  return found == results_.end() ? nullptr : &found->second;
}

void CohortCache::remember_purchase(const std::string& purchase_key, const CellResult& result) {
  results_.emplace(purchase_key, result);
}

void CohortCache::clear() {
  subjects_.clear();
  labels_.clear();
  results_.clear();
}

std::vector<int> purchase_order(std::uint64_t seed, int repeat, int pool) {
  std::vector<int> order(static_cast<std::size_t>(pool));
  for (int i = 0; i < pool; ++i) order[static_cast<std::size_t>(i)] = i;
  // Fisher-Yates from the study seed and repeat alone (Knuth, TAOCP vol. 2, algorithm P).
  RandomStream random(mix64(seed ^ 0x6F72646572ULL), static_cast<std::uint64_t>(repeat), StreamPurpose::rater, 1);
  for (int i = pool - 1; i > 0; --i)
    std::swap(order[static_cast<std::size_t>(i)], order[static_cast<std::size_t>(random.uniform_int(0, i))]);
  return order;
}

CellResult cell_record(const CellSpec& spec, const std::string& status) {
  CellResult result;
  result.key = cell_key(spec);
  result.plan = spec.plan.name;
  result.strategy = learn::to_string(spec.train.strategy);
  result.budget = spec.budget;
  result.budget_unit = to_string(spec.budget_unit);
  result.repeat = spec.repeat;
  result.spec_json = to_json(spec).dump();
  result.status = status;
  return result;
}

int epochs_asked(const CellSpec& spec, int labels) {
  if (spec.training_images <= 0 || labels <= 0 || learn::is_classical(spec.train.strategy)) return 0;
  return static_cast<int>(std::lround(static_cast<double>(spec.training_images) / labels));
}

CellResult run_cell(const CellSpec& spec, CohortCache* shared_cache,
                    const std::function<void(const CellProgress&)>& progress) {
  const auto report = [&](const std::string& stage, int epoch = 0, int epochs = 0) {
    if (progress) progress({stage, epoch, epochs});
  };
  CohortCache local_cache;
  CohortCache& cache = shared_cache != nullptr ? *shared_cache : local_cache;
  FRUGAL_CHECK(spec.repeat >= 0 && spec.repeat < kMaxRepeats && spec.cohort.pool <= kMaxPool &&
               spec.cohort.test <= kMaxTest);

  CellResult result = cell_record(spec, "done");

  // Labels, bought along the repeat's order.
  report("label");
  const auto label_start = Clock::now();
  double generate_seconds = 0.0;
  const bool classical = learn::is_classical(spec.train.strategy);
  const int base = spec.repeat * kRepeatStride;
  const SubjectSource pool(spec.scenario, spec.seed);  // pool and test sets: one scenario
  learn::TrainingSet training;
  std::vector<int> bought_subjects;
  if (!classical && spec.plan.labelled) {
    const std::vector<int> order = purchase_order(spec.seed, spec.repeat, spec.cohort.pool);
    std::vector<std::pair<std::string, const LabelPlan*>> parts;
    if (spec.plan.is_mixed())
      parts = {{"strong", &spec.strong}, {"weak", &spec.weak}};
    else
      parts = {{"", &spec.plan}};
    for (const auto& [part, plan] : parts) {
      const double share =
          part.empty() ? 1.0 : (part == "strong" ? spec.plan.strong_share : 1.0 - spec.plan.strong_share);
      const Purchase purchase =
          buy(LabelSource(*plan, pool), spec, spec.budget * share, order, cache, generate_seconds);
      for (const Label* label : purchase.labels) {
        const Subject& subject = cache.subject(pool, label->subject, 0);
        if (result.example_maps.empty()) result.example_maps = label_example_maps(subject, *label);
        training.add(subject.image, *label);
        result.label_costs.push_back({part, label->subject, label->rater, to_string(label->kind), label->cost_seconds});
      }
      result.labels_bought += static_cast<int>(purchase.labels.size());
      result.hours_spent += purchase.seconds / 3600.0;
      bought_subjects.insert(bought_subjects.end(), purchase.subjects.begin(), purchase.subjects.end());
    }
    if (training.empty())
      throw UserError("budget " + std::to_string(spec.budget) + " " + to_string(spec.budget_unit) +
                      " buys no label of plan " + spec.plan.name + " (the first image's labels cost more)");
  }
  result.seconds_label = seconds_since(label_start) - generate_seconds;

  // The same labels and training as a cell already run: the same numbers, without training again.
  nlohmann::json purchase = to_json(spec, false);
  purchase.erase("budget");
  nlohmann::json bought = nlohmann::json::array();
  for (const store::LabelCostRow& row : result.label_costs) bought.push_back({row.part, row.subject, row.rater});
  purchase["bought"] = bought;
  const std::string purchase_key = sha256_hex(purchase.dump());
  if (const CellResult* earlier = cache.same_purchase(purchase_key)) {
    CellResult reused = *earlier;
    reused.key = result.key;
    reused.budget = result.budget;
    reused.spec_json = result.spec_json;
    reused.seconds_generate = generate_seconds;
    reused.seconds_label = result.seconds_label;
    reused.seconds_train = reused.seconds_predict = reused.seconds_score = 0.0;
    return reused;
  }

  // Test sets: the same subjects for every cell of this repeat.
  const auto generate_start = Clock::now();
  std::vector<int> test_indices;
  for (int i = 0; i < spec.cohort.test; ++i) test_indices.push_back(base + kTestOffset + i);
  ScenarioOptions decorrelated = spec.scenario;
  decorrelated.confounder.correlation = 0.0;
  const SubjectSource decorrelated_source(decorrelated, spec.seed);
  std::vector<int> decorrelated_indices;
  if (spec.cohort.decorrelated_test)
    for (int i = 0; i < spec.cohort.test; ++i) decorrelated_indices.push_back(base + kDecorrelatedOffset + i);
  report("generate");
  cache.prefetch(pool, test_indices, 0, spec.threads);
  for (int rescan = 1; rescan <= spec.cohort.test_rescans; ++rescan)
    cache.prefetch(pool, test_indices, rescan, spec.threads);
  if (spec.cohort.decorrelated_test) cache.prefetch(decorrelated_source, decorrelated_indices, 0, spec.threads);
  std::vector<int> unlabelled;
  if (!classical && spec.train.consistency_weight > 0.0) {
    std::sort(bought_subjects.begin(), bought_subjects.end());
    for (int i = 0; i < spec.cohort.pool; ++i)
      if (!std::binary_search(bought_subjects.begin(), bought_subjects.end(), base + i)) unlabelled.push_back(base + i);
    cache.prefetch(pool, unlabelled, 0, spec.threads);
  }
  generate_seconds += seconds_since(generate_start);
  result.seconds_generate = generate_seconds;

  // Training.
  const auto train_start = Clock::now();
  const auto test_subjects = [&](const SubjectSource& source, const std::vector<int>& indices, int rescan) {
    std::vector<const Subject*> subjects;
    for (int index : indices) subjects.push_back(&cache.subject(source, index, rescan));
    return subjects;
  };
  const std::vector<const Subject*> test = test_subjects(pool, test_indices, 0);
  if (classical) training.add_unlabelled(test.front()->image);  // tells the model the grid it will see
  for (int index : unlabelled) training.add_unlabelled(cache.subject(pool, index, 0).image);
  learn::TrainOptions options = spec.train;
  options.threads = spec.threads;
  if (const int asked = epochs_asked(spec, static_cast<int>(training.size())); asked > 0)
    options.epochs = std::clamp(asked, 1, spec.train.epochs);
  report("train", 0, options.epochs);
  learn::TrainResult trained = learn::train(
      training, options, [&](const learn::EpochProgress& epoch) { report("train", epoch.epoch, epoch.epochs); });
  const learn::TrainSummary& summary = trained.summary;
  const auto at = [](const std::vector<double>& values, std::size_t e) { return e < values.size() ? values[e] : kNaN; };
  for (std::size_t e = 0; e < summary.training_loss.size(); ++e)
    result.training_curve.push_back({static_cast<int>(e) + 1, summary.training_loss[e], at(summary.validation_loss, e),
                                     at(summary.validation_error, e)});
  result.seconds_train = seconds_since(train_start);

  // Predictions on every test set.
  report("predict");
  const auto predict_start = Clock::now();
  const auto predict_all = [&](const std::vector<const Subject*>& subjects) {
    std::vector<FloatImage> images;
    for (const Subject* subject : subjects) images.push_back(subject->image);
    return learn::predict(trained.model, images, spec.threads);
  };
  const std::vector<learn::Prediction> test_predictions = predict_all(test);
  std::vector<std::vector<const Subject*>> rescans;
  std::vector<std::vector<learn::Prediction>> rescan_predictions;
  for (int rescan = 1; rescan <= spec.cohort.test_rescans; ++rescan) {
    rescans.push_back(test_subjects(pool, test_indices, rescan));
    rescan_predictions.push_back(predict_all(rescans.back()));
  }
  std::vector<const Subject*> decorrelated_test;
  std::vector<learn::Prediction> decorrelated_predictions;
  if (spec.cohort.decorrelated_test) {
    decorrelated_test = test_subjects(decorrelated_source, decorrelated_indices, 0);
    decorrelated_predictions = predict_all(decorrelated_test);
  }
  result.seconds_predict = seconds_since(predict_start);

  const std::size_t example = example_subject(test);
  const std::vector<store::ExampleMap> test_maps =
      test_example_maps(*test[example], test_predictions[example], spec.train.strategy);
  result.example_maps.insert(result.example_maps.begin(), test_maps.begin(), test_maps.end());

  // Scores against the exact truth.
  report("score");
  const auto score_start = Clock::now();
  score_set(result, spec, "test", test, test_predictions);
  if (spec.cohort.decorrelated_test)
    score_set(result, spec, "decorrelated", decorrelated_test, decorrelated_predictions);
  if (spec.cohort.test_rescans > 0) {
    for (std::size_t r = 0; r < rescans.size(); ++r)
      for (std::size_t i = 0; i < rescans[r].size(); ++i)
        for (const std::string& quantity : spec.quantities)
          result.predictions.push_back({"rescan", rescans[r][i]->truth.subject, rescans[r][i]->truth.rescan, quantity,
                                        predicted_value(quantity, rescan_predictions[r][i]),
                                        truth_value(quantity, rescans[r][i]->truth, grading_of(spec))});
    for (const std::string& quantity : spec.quantities) {
      std::vector<std::vector<double>> measurements(test.size());
      for (std::size_t i = 0; i < test.size(); ++i) {
        measurements[i].push_back(predicted_value(quantity, test_predictions[i]));
        for (const auto& predictions : rescan_predictions)
          measurements[i].push_back(predicted_value(quantity, predictions[i]));
      }
      const scoring::RepeatabilityScore score = scoring::score_repeatability(quantity, measurements);
      const std::string note = score.notes.empty() ? "n/a" : joined(score.notes);
      add_metric(result, "rescan", quantity, "repeatability_coefficient", score.coefficient, score.subjects, note,
                 score.coefficient_lower, score.coefficient_upper);
      add_metric(result, "rescan", quantity, "within_subject_sd", score.within_subject_sd, score.subjects, note);
    }
  }
  result.seconds_score = seconds_since(score_start);
  cache.remember_purchase(purchase_key, result);
  return result;
}

}  // namespace frugal::study
