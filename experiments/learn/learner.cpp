// Training: the loop every strategy shares. Strategies differ only in their samples and losses
// (strategy_losses.cpp); networks only behind internal::Network.
#include "experiments/learn/learner.h"

#include <torch/torch.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <exception>
#include <functional>
#include <numeric>
#include <string>
#include <thread>
#include <utility>
#include <vector>

#include "experiments/learn/augmentation.h"
#include "experiments/learn/memory_estimate.h"
#include "experiments/learn/model_internal.h"
#include "experiments/learn/strategy_losses_internal.h"
#include "experiments/learn/validation_error.h"
#include "phantoms/key_path.h"
#include "phantoms/random.h"
#include "phantoms/user_error.h"

namespace frugal::learn {
namespace {

using internal::Batch;
using internal::Network;
using internal::Sample;

constexpr double kPi = 3.14159265358979323846;

// Joins a worker thread on every exit path, so an exception in the optimiser step cannot leave
// a joinable std::thread behind (which would terminate the program).
class JoinOnExit {
 public:
  explicit JoinOnExit(std::thread& thread) : thread_(thread) {}
  ~JoinOnExit() {
    if (thread_.joinable()) thread_.join();
  }
  JoinOnExit(const JoinOnExit&) = delete;
  JoinOnExit& operator=(const JoinOnExit&) = delete;

 private:
  std::thread& thread_;
};

// Keys of the training's own random streams, kept apart from the phantoms' and raters'
// purposes by a tag.
enum class TrainingStream : std::uint64_t { split = 101, shuffle = 102, augment = 103, consistency = 104 };

RandomStream training_stream(std::uint64_t seed, TrainingStream purpose, std::uint64_t epoch = 0,
                             std::uint64_t sample = 0) {
  return RandomStream(mix64(mix64(mix64(mix64(seed) ^ static_cast<std::uint64_t>(purpose)) ^ epoch) ^ sample));
}

void shuffle(std::vector<std::size_t>& order, RandomStream& random) {
  for (std::size_t i = order.size(); i > 1; --i)
    std::swap(order[i - 1], order[static_cast<std::size_t>(random.uniform_int(0, static_cast<std::int64_t>(i - 1)))]);
}

// One member's per-voxel array moved by the draw: linear for images, nearest for 0/1 arrays.
void place(const std::vector<float>& source, float* destination, const Shape& shape, const SamplingGrid* grid,
           const bool flip[3], bool linear) {
  if (grid == nullptr)
    copy_flipped(source.data(), destination, shape, flip);
  else if (linear)
    warp_linear(source.data(), destination, *grid);
  else
    warp_nearest(source.data(), destination, *grid);
}

// Gathers samples into one batch with their augmentation, drawn from a stream keyed by (seed,
// epoch, sample) so that the batch does not depend on which thread prepares it or when.
Batch prepare_batch(const std::vector<Sample>& samples, const std::vector<std::size_t>& members,
                    const Geometry& geometry, const AugmentationOptions* augmentation, std::uint64_t seed,
                    std::uint64_t epoch) {
  const Shape& shape = geometry.shape;
  Batch batch;
  batch.size = static_cast<int>(members.size());
  const std::size_t voxels = shape.voxel_count();
  const bool has_target =
      std::any_of(members.begin(), members.end(), [&](std::size_t m) { return !samples[m].target.empty(); });
  const bool has_field =
      std::any_of(members.begin(), members.end(), [&](std::size_t m) { return !samples[m].field.empty(); });
  batch.images.resize(members.size() * voxels);
  if (has_target) batch.targets.assign(members.size() * voxels, 0.0F);
  if (has_field) batch.fields.assign(members.size() * voxels, 0.0F);
  for (std::size_t i = 0; i < members.size(); ++i) {
    const Sample& sample = samples[members[i]];
    bool flip[3] = {false, false, false};
    SamplingGrid grid;
    const SamplingGrid* warp = nullptr;
    if (augmentation != nullptr) {
      RandomStream random = training_stream(seed, TrainingStream::augment, epoch, members[i]);
      if (augmentation->geometric()) {
        grid = random_grid(geometry, *augmentation, random);
        warp = &grid;
      } else if (augmentation->flips) {
        draw_flips(shape, random, flip);
      }
    }
    place(sample.image, batch.images.data() + i * voxels, shape, warp, flip, true);
    if (!sample.target.empty()) place(sample.target, batch.targets.data() + i * voxels, shape, warp, flip, false);
    if (!sample.field.empty()) place(sample.field, batch.fields.data() + i * voxels, shape, warp, flip, false);
    batch.has_mask.push_back(sample.has_mask);
    batch.values.push_back(sample.value);
    batch.capped.push_back(sample.capped);
    batch.lower.push_back(sample.lower);
    batch.upper.push_back(sample.upper);
  }
  return batch;
}

// Unlabelled images for the consistency term: each image and its copy moved by a random
// transformation T, with T kept to move the prediction on the image into the copy's frame.
struct ConsistencyBatch {
  int size = 0;
  std::vector<float> images, moved;
  std::vector<SamplingGrid> grids;
};

// The transformation consistency compares under: the training's own geometric augmentation
// when it has one, else 10 degrees and 2 mm (small enough to keep lesions recognisable).
AugmentationOptions consistency_transform(const AugmentationOptions& augmentation) {
  if (augmentation.geometric()) return augmentation;
  AugmentationOptions transform = augmentation;
  transform.rotation_degrees = 10.0;
  transform.deformation_mm = 2.0;
  return transform;
}

ConsistencyBatch prepare_consistency_batch(const std::vector<std::vector<float>>& pool, std::size_t first, int size,
                                           const Geometry& geometry, const AugmentationOptions& transform,
                                           std::uint64_t seed, std::uint64_t step) {
  ConsistencyBatch batch;
  batch.size = size;
  const std::size_t voxels = geometry.shape.voxel_count();
  batch.images.resize(static_cast<std::size_t>(size) * voxels);
  batch.moved.resize(batch.images.size());
  for (int i = 0; i < size; ++i) {
    const std::vector<float>& image = pool[(first + static_cast<std::size_t>(i)) % pool.size()];
    RandomStream random = training_stream(seed, TrainingStream::consistency, step, static_cast<std::uint64_t>(i));
    batch.grids.push_back(random_grid(geometry, transform, random));
    std::copy(image.begin(), image.end(), batch.images.begin() + static_cast<std::ptrdiff_t>(i * voxels));
    warp_linear(image.data(), batch.moved.data() + i * voxels, batch.grids.back());
  }
  return batch;
}

// Transformation consistency (the Pi-model of Laine & Aila 2017 with a geometric
// transformation in place of noise): the prediction on T(x) should equal T applied to the
// prediction on x. The target side is not differentiated, as in a mean teacher with decay 0.
torch::Tensor consistency_loss(Network& network, const TrainedModel::Impl& model, ConsistencyBatch& batch) {
  const std::size_t voxels = model.shape.voxel_count();
  std::vector<float> target(batch.images.size());
  {
    torch::NoGradGuard no_grad;
    const auto output = internal::forward_float(network, internal::voxel_tensor(batch.images, batch.size, model),
                                                model.options.bfloat16);
    const torch::Tensor prediction = internal::activate_map(output.map, model.options.strategy).contiguous();
    const float* values = prediction.data_ptr<float>();
    for (int i = 0; i < batch.size; ++i)
      warp_linear(values + static_cast<std::size_t>(i) * voxels, target.data() + static_cast<std::size_t>(i) * voxels,
                  batch.grids[static_cast<std::size_t>(i)]);
  }
  const auto output =
      internal::forward_float(network, internal::voxel_tensor(batch.moved, batch.size, model), model.options.bfloat16);
  torch::Tensor moved = internal::activate_map(output.map, model.options.strategy);
  torch::Tensor expected = internal::voxel_tensor(target, batch.size, model);
  if (model.options.strategy == Strategy::count_map) {
    // Densities are lesions per voxel; compare them per typical lesion area so the term does
    // not vanish next to the count loss.
    const double scale = static_cast<double>(voxels) / std::max(1.0, model.target_mean);
    moved = moved * scale;
    expected = expected * scale;
  }
  return torch::mse_loss(moved, expected);
}

std::string kinds_text(const std::vector<LabelKind>& kinds) {
  std::string text;
  for (LabelKind kind : kinds) text += (text.empty() ? "" : ", ") + frugal::to_string(kind);
  return text;
}

void check_trainable(const TrainingSet& set, const TrainOptions& options) {
  if (const std::string message = options.validate(); !message.empty())
    throw UserError(key_path_under("train", message));
  const Strategy strategy = options.strategy;
  const std::string name = to_string(strategy);
  if (is_classical(strategy)) return;
  if (set.size() < 2)
    throw UserError("training set: at least 2 labelled images are needed, got " + std::to_string(set.size()));
  const std::vector<LabelKind> kinds = set.kinds();
  const std::vector<LabelKind> accepted = accepted_label_kinds(strategy);
  for (LabelKind kind : kinds)
    if (std::find(accepted.begin(), accepted.end(), kind) == accepted.end())
      throw UserError("strategy " + name + " cannot train from " + frugal::to_string(kind) +
                      " labels; it takes: " + kinds_text(accepted));
  if (strategy == Strategy::mixed) {
    const bool outlines = std::find(kinds.begin(), kinds.end(), LabelKind::outline) != kinds.end();
    if (!outlines || kinds.size() != 2)
      throw UserError(
          "strategy mixed needs outlines plus one kind of weak label (count, grade or presence); the set holds: " +
          kinds_text(kinds));
  } else if (kinds.size() != 1) {
    throw UserError("strategy " + name + " takes one kind of label; the set holds: " + kinds_text(kinds));
  }
  if (!options.network_file.empty() && !is_map_strategy(strategy))
    throw UserError("train.network_file: strategy " + name +
                    " has no map; only map strategies train a TorchScript network");
  const bool needs_scalar =
      strategy == Strategy::scalar ||
      (strategy == Strategy::mixed && std::find(kinds.begin(), kinds.end(), LabelKind::count) != kinds.end());
  if (needs_scalar && !options.network_file.empty())
    throw UserError("train.network_file: strategy " + name +
                    " on counts needs frugal's scalar head; a TorchScript network has none");
  if (options.consistency_weight > 0.0 && !is_map_strategy(strategy))
    throw UserError("train.consistency_weight: consistency compares maps; strategy " + name + " has none");
  const Shape shape = set.shape();
  const int divisor = 1 << (options.depth - 1);
  if (options.network_file.empty() &&
      (shape.x % divisor != 0 || shape.y % divisor != 0 || (shape.dims() == 3 && shape.z % divisor != 0)))
    throw UserError("train.depth = " + std::to_string(options.depth) + ": image sides " + std::to_string(shape.x) +
                    "x" + std::to_string(shape.y) + (shape.dims() == 3 ? "x" + std::to_string(shape.z) : "") +
                    " must divide by " + std::to_string(divisor) + "; use a smaller depth or another image size");
  check_training_memory(shape, options, set.size());
  for (std::size_t i = 0; i < set.size(); ++i) {
    const Label& label = set.label(i);
    if (label.kind != LabelKind::grade) continue;
    if (label.value < 0.0 || label.value >= options.grading.bins() || label.value != std::floor(label.value))
      throw UserError("training set: label " + std::to_string(i) + " has grade " + std::to_string(label.value) +
                      ", outside the bins of train.grading (0.." + std::to_string(options.grading.bins() - 1) + ")");
  }
}

double mean_of(const std::vector<double>& values) {
  return values.empty() ? 0.0 : std::accumulate(values.begin(), values.end(), 0.0) / static_cast<double>(values.size());
}

// Everything but the network: what the model records of the options and the data.
std::unique_ptr<TrainedModel::Impl> describe_model(const TrainingSet& set, const TrainOptions& options) {
  auto model = std::make_unique<TrainedModel::Impl>();
  model->options = options;
  if (!set.empty()) {
    const auto kinds = set.kinds();
    model->kind = kinds.back();  // mixed: outlines and one weak kind, in either order
    if (options.strategy == Strategy::mixed)
      for (LabelKind kind : kinds)
        if (kind != LabelKind::outline) model->kind = kind;
    model->voxel_volume_mm3 = set.image(0).geometry().voxel_volume_mm3();
  }
  if (!set.empty() || !set.unlabelled().empty()) model->shape = set.shape();
  return model;
}

std::unique_ptr<Network> make_network(const TrainedModel::Impl& model) {
  if (!model.options.network_file.empty())
    return internal::load_scripted_network(model.options.network_file, model.shape);
  return internal::make_unet_network(model.shape.dims(), model.options.width, model.options.depth,
                                     model.options.normalization, model.options.channels_last);
}

}  // namespace

TrainResult train(const TrainingSet& set, const TrainOptions& options,
                  const std::function<void(const EpochProgress&)>& on_epoch) {
  check_trainable(set, options);
  const auto start = std::chrono::steady_clock::now();
  auto model = describe_model(set, options);
  TrainSummary summary;
  summary.best_validation_loss = std::numeric_limits<double>::quiet_NaN();
  summary.best_validation_error = std::numeric_limits<double>::quiet_NaN();
  if (is_classical(options.strategy)) return {TrainedModel(std::move(model)), summary};

  torch::set_num_threads(options.threads);
  // Subnormal floats (gradients of saturated units, flat image background) are up to 100x slower
  // on x86; flushing them to zero changes no result that a test can see.
  at::globalContext().setFlushDenormal(true);
  torch::manual_seed(options.seed);
  const Geometry geometry = set.image(0).geometry();

  // Validation split of the labelled images (never truth), from the seed alone. It shuffles
  // images, not label rows: a panel's several labels of one image would otherwise land on both
  // sides, and validation would reward remembering that image.
  const std::size_t n = set.size();
  std::vector<std::pair<int, int>> images;  // distinct (subject, rescan), ascending
  for (std::size_t i = 0; i < n; ++i) images.emplace_back(set.label(i).subject, set.label(i).rescan);
  std::sort(images.begin(), images.end());
  images.erase(std::unique(images.begin(), images.end()), images.end());
  std::vector<std::size_t> order(images.size());
  std::iota(order.begin(), order.end(), std::size_t{0});
  RandomStream split_random = training_stream(options.seed, TrainingStream::split);
  shuffle(order, split_random);
  std::size_t validation_count = 0;
  if (options.validation_fraction > 0.0 && images.size() > 1)
    validation_count = std::clamp<std::size_t>(
        static_cast<std::size_t>(std::lround(options.validation_fraction * static_cast<double>(images.size()))), 1,
        images.size() - 1);
  std::vector<bool> held_out(images.size(), false);
  for (std::size_t k = 0; k < validation_count; ++k) held_out[order[k]] = true;
  std::vector<std::size_t> validation, training;
  for (std::size_t i = 0; i < n; ++i) {
    const auto image =
        std::lower_bound(images.begin(), images.end(), std::make_pair(set.label(i).subject, set.label(i).rescan));
    (held_out[static_cast<std::size_t>(image - images.begin())] ? validation : training).push_back(i);
  }
  summary.validation_labels = validation;
  for (std::size_t i : validation) summary.validation_subjects.push_back(set.label(i).subject);
  std::sort(summary.validation_subjects.begin(), summary.validation_subjects.end());
  summary.validation_subjects.erase(std::unique(summary.validation_subjects.begin(), summary.validation_subjects.end()),
                                    summary.validation_subjects.end());
  // Epochs are chosen by the answers' error on the validation labels; partial masks, which say
  // nothing of unmarked voxels, leave it to the loss (validation_error.h).
  std::vector<const FloatImage*> validation_images;
  std::vector<const Label*> validation_label_pointers;
  bool selects_by_loss = false;
  for (std::size_t i : validation) {
    validation_images.push_back(&set.image(i));
    validation_label_pointers.push_back(&set.label(i));
    selects_by_loss = selects_by_loss || set.label(i).kind == LabelKind::partial_mask;
  }

  // Normalisation from the training split: intensities, and the targets of scalar heads.
  double sum = 0.0, sum_squares = 0.0, voxels = 0.0;
  std::vector<double> targets;
  for (std::size_t i : training) {
    for (float value : set.image(i).voxels()) {
      sum += value;
      sum_squares += static_cast<double>(value) * value;
    }
    voxels += static_cast<double>(set.image(i).size());
    if (set.label(i).kind == model->kind) targets.push_back(set.label(i).value);
  }
  model->input_mean = sum / voxels;
  model->input_scale =
      std::max(1e-6, std::sqrt(std::max(0.0, sum_squares / voxels - model->input_mean * model->input_mean)));
  const double target_mean = mean_of(targets);
  double target_variance = 0.0;
  for (double t : targets) target_variance += (t - target_mean) * (t - target_mean);
  target_variance /= static_cast<double>(std::max<std::size_t>(1, targets.size()));
  model->target_mean = target_mean;
  model->target_scale = std::max(1.0, std::sqrt(target_variance));
  // scalar regresses standardised labels; identical labels have no spread to standardise by.
  if (options.strategy == Strategy::scalar && model->kind != LabelKind::presence && target_variance > 1e-12)
    model->target_scale = std::max(1e-3, std::sqrt(target_variance));

  std::vector<Sample> samples(n);
  for (std::size_t i = 0; i < n; ++i) samples[i] = internal::make_sample(set.image(i), set.label(i), *model, options);
  std::vector<std::vector<float>> unlabelled;
  if (options.consistency_weight > 0.0) {
    for (const FloatImage& image : set.unlabelled()) internal::normalise_into(image, *model, unlabelled.emplace_back());
    if (unlabelled.empty())
      for (std::size_t i : training) unlabelled.push_back(samples[i].image);  // no unlabelled images: the labelled ones
  }

  std::shared_ptr<Network> network = make_network(*model);
  // Start each map at the training labels' average, so the first steps do not fight a far-off
  // offset: count-map at a density summing to the mean count, grade-bounds at the mean
  // interval midpoint, points at the mean marked fraction its size prior expects (at 0.5
  // everywhere the size penalty is thousands of times the other terms and collapses the map).
  const double voxel_count = static_cast<double>(model->shape.voxel_count());
  const auto logit = [](double p) { return std::log(p / (1.0 - p)); };
  if (options.strategy == Strategy::count_map) {
    const double density = std::max(1e-3, target_mean) / voxel_count;
    network->set_map_bias(std::log(std::expm1(density)));
  } else if (options.strategy == Strategy::grade_bounds) {
    double midpoint = 0.0;
    for (std::size_t i : training) midpoint += 0.5 * (samples[i].lower + samples[i].upper);
    midpoint = std::clamp(midpoint / static_cast<double>(training.size()), 1e-3, 1.0 - 1e-3);
    network->set_map_bias(logit(midpoint));
  } else if (options.strategy == Strategy::points) {
    double clicks = 0.0;
    for (std::size_t i : training) clicks += samples[i].value;
    const double typical_mm3 = 0.5 * (options.object_size_min_mm3 + options.object_size_max_mm3);
    const double fraction =
        clicks / static_cast<double>(training.size()) * typical_mm3 / (model->voxel_volume_mm3 * voxel_count);
    network->set_map_bias(logit(std::clamp(fraction, 1e-3, 0.5)));
  }
  torch::optim::Adam optimizer(network->parameters(),
                               torch::optim::AdamOptions(options.learning_rate).weight_decay(options.weight_decay));

  double best = std::numeric_limits<double>::infinity();
  internal::NamedTensors best_state;
  int epochs_since_best = 0;
  double training_seconds = 0.0;
  std::size_t images_seen = 0;
  const auto batch_size = static_cast<std::size_t>(options.batch_size);
  const AugmentationOptions transform = consistency_transform(options.augmentation);
  std::uint64_t step = 0;

  for (int epoch = 0; epoch < options.epochs; ++epoch) {
    // Cosine learning-rate schedule (Loshchilov & Hutter 2017, SGDR, without restarts).
    const double rate = options.learning_rate * 0.5 * (1.0 + std::cos(kPi * epoch / options.epochs));
    for (auto& group : optimizer.param_groups()) static_cast<torch::optim::AdamOptions&>(group.options()).lr(rate);

    std::vector<std::size_t> epoch_order = training;
    RandomStream shuffle_random =
        training_stream(options.seed, TrainingStream::shuffle, static_cast<std::uint64_t>(epoch));
    shuffle(epoch_order, shuffle_random);
    std::vector<std::vector<std::size_t>> batches;
    for (std::size_t first = 0; first < epoch_order.size(); first += batch_size) {
      const std::size_t last = std::min(epoch_order.size(), first + batch_size);
      // A lone sample at the end gives batch normalisation a one-image batch; fold it into the
      // batch before.
      if (last == epoch_order.size() && last - first == 1 && !batches.empty() &&
          options.normalization == Normalization::batch) {
        batches.back().push_back(epoch_order[first]);
        break;
      }
      batches.emplace_back(epoch_order.begin() + static_cast<std::ptrdiff_t>(first),
                           epoch_order.begin() + static_cast<std::ptrdiff_t>(last));
    }

    const auto epoch_start = std::chrono::steady_clock::now();
    network->set_training(true);
    double loss_sum = 0.0;
    // The next batch (and its unlabelled companion) is prepared on its own thread while the
    // optimiser works on this one.
    Batch next;
    ConsistencyBatch next_unlabelled;
    std::exception_ptr worker_error;  // an exception on the worker is rethrown on this thread
    std::thread worker;
    const JoinOnExit join_worker(worker);
    const auto launch = [&](std::size_t b) {
      worker = std::thread([&, b] {
        try {
          next = prepare_batch(samples, batches[b], geometry, &options.augmentation, options.seed,
                               static_cast<std::uint64_t>(epoch));
          if (!unlabelled.empty()) {
            const std::uint64_t this_step = step + b;
            next_unlabelled =
                prepare_consistency_batch(unlabelled, this_step * batch_size, static_cast<int>(batches[b].size()),
                                          geometry, transform, options.seed, this_step);
          }
        } catch (...) {
          worker_error = std::current_exception();
        }
      });
    };
    launch(0);
    for (std::size_t b = 0; b < batches.size(); ++b) {
      worker.join();
      if (worker_error) std::rethrow_exception(worker_error);
      Batch current = std::move(next);
      ConsistencyBatch current_unlabelled = std::move(next_unlabelled);
      if (b + 1 < batches.size()) launch(b + 1);
      optimizer.zero_grad();
      torch::Tensor loss = internal::batch_loss(*network, *model, current, options);
      if (!unlabelled.empty())
        loss = loss + options.consistency_weight * consistency_loss(*network, *model, current_unlabelled);
      const double value = loss.item<double>();
      if (!std::isfinite(value))
        throw UserError("training diverged at epoch " + std::to_string(epoch + 1) +
                        " (loss is not finite); lower train.learning_rate");
      loss.backward();
      optimizer.step();
      loss_sum += value * current.size;
      images_seen += static_cast<std::size_t>(current.size);
    }
    step += batches.size();
    training_seconds += std::chrono::duration<double>(std::chrono::steady_clock::now() - epoch_start).count();
    summary.training_loss.push_back(loss_sum / static_cast<double>(training.size()));
    summary.epochs_run = epoch + 1;
    const auto report = [&](double validation_loss, double validation_error) {
      if (!on_epoch) return;
      EpochProgress progress;
      progress.epoch = epoch + 1;
      progress.epochs = options.epochs;
      progress.training_loss = summary.training_loss.back();
      progress.validation_loss = validation_loss;
      progress.validation_error = validation_error;
      progress.images_per_second = training_seconds > 0.0 ? static_cast<double>(images_seen) / training_seconds : 0.0;
      progress.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
      on_epoch(progress);
    };

    if (validation.empty()) {
      summary.best_epoch = epoch + 1;
      report(std::numeric_limits<double>::quiet_NaN(), std::numeric_limits<double>::quiet_NaN());
      continue;
    }
    network->set_training(false);
    double validation_sum = 0.0;
    {
      torch::NoGradGuard no_grad;
      for (std::size_t first = 0; first < validation.size(); first += batch_size) {
        const std::vector<std::size_t> members(
            validation.begin() + static_cast<std::ptrdiff_t>(first),
            validation.begin() + static_cast<std::ptrdiff_t>(std::min(validation.size(), first + batch_size)));
        Batch batch = prepare_batch(samples, members, geometry, nullptr, options.seed, 0);
        validation_sum += internal::batch_loss(*network, *model, batch, options).item<double>() * batch.size;
      }
    }
    const double validation_loss = validation_sum / static_cast<double>(validation.size());
    // The answers a user would read, against the validation labels (validation_error.h).
    const double validation_error =
        selects_by_loss ? std::numeric_limits<double>::quiet_NaN()
                        : learn::validation_error(internal::predict_with(*model, *network, validation_images),
                                                  validation_label_pointers, options);
    summary.validation_loss.push_back(validation_loss);
    summary.validation_error.push_back(validation_error);
    report(validation_loss, validation_error);
    // Ties go to the later epoch: a criterion at 0 (every grade's fraction inside its bin) keeps
    // training on the cosine schedule instead of stopping at the first such epoch.
    const double criterion = selects_by_loss ? validation_loss : validation_error;
    if (criterion <= best) {
      best = criterion;
      best_state = network->state();
      summary.best_epoch = epoch + 1;
      summary.best_validation_loss = validation_loss;
      summary.best_validation_error = validation_error;
      epochs_since_best = 0;
    } else if (options.patience > 0 && ++epochs_since_best >= options.patience) {
      break;
    }
  }
  if (!best_state.empty()) network->restore(best_state);
  network->set_training(false);
  model->network = std::move(network);
  summary.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  summary.images_per_second = training_seconds > 0.0 ? static_cast<double>(images_seen) / training_seconds : 0.0;
  return {TrainedModel(std::move(model)), summary};
}

}  // namespace frugal::learn
