// Training, prediction and checkpoints of the learning part. The strategies differ only in how
// the network's two heads are read and in the loss (losses_internal.h); the loop is shared.
#include <ATen/autocast_mode.h>
#include <torch/torch.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <filesystem>
#include <numeric>
#include <string>
#include <thread>
#include <utility>
#include <vector>

#include "experiments/learn/constraints.h"
#include "experiments/learn/learner.h"
#include "experiments/learn/losses_internal.h"
#include "experiments/learn/unet_internal.h"
#include "experiments/measure/connected_components.h"
#include "phantoms/random.h"
#include "phantoms/user_error.h"

namespace frugal::learn {

struct TrainedModel::Impl {
  internal::UNet net{nullptr};
  Strategy strategy = Strategy::mask;
  LabelKind kind = LabelKind::outline;
  Shape shape;
  int width = 8;
  int depth = 3;
  Normalization normalization = Normalization::batch;
  bool channels_last = true;
  bool bfloat16 = false;
  double input_mean = 0.0;   // images are fed as (value - input_mean) / input_scale
  double input_scale = 1.0;
  double target_mean = 0.0;  // scalar: the head predicts (value - target_mean) / target_scale
  double target_scale = 1.0;
  GradingOptions grading;
  FieldOptions field;
};

namespace {

using internal::UNet;
using internal::UNetOptions;

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

// Keys of the training's own random streams (shuffling, flips, the validation split), kept
// apart from the phantoms' and raters' purposes by a tag.
enum class TrainingStream : std::uint64_t { split = 101, shuffle = 102, flips = 103 };

RandomStream training_stream(std::uint64_t seed, TrainingStream purpose, std::uint64_t epoch = 0,
                             std::uint64_t sample = 0) {
  return RandomStream(mix64(mix64(mix64(mix64(seed) ^ static_cast<std::uint64_t>(purpose)) ^ epoch) ^ sample));
}

void shuffle(std::vector<std::size_t>& order, RandomStream& random) {
  for (std::size_t i = order.size(); i > 1; --i)
    std::swap(order[i - 1], order[static_cast<std::size_t>(random.uniform_int(0, static_cast<std::int64_t>(i - 1)))]);
}

// bfloat16 autocast of the forward pass on CPU (thread-local state, restored on exit).
class CpuAutocast {
 public:
  explicit CpuAutocast(bool enabled) : enabled_(enabled) {
    if (!enabled_) return;
    previous_ = at::autocast::is_cpu_enabled();
    at::autocast::set_cpu_enabled(true);
    at::autocast::set_autocast_cpu_dtype(at::kBFloat16);
    at::autocast::increment_nesting();
  }
  ~CpuAutocast() {
    if (!enabled_) return;
    if (at::autocast::decrement_nesting() == 0) at::autocast::clear_cache();
    at::autocast::set_cpu_enabled(previous_);
  }
  CpuAutocast(const CpuAutocast&) = delete;
  CpuAutocast& operator=(const CpuAutocast&) = delete;

 private:
  bool enabled_ = false;
  bool previous_ = false;
};

// One subject, ready for batching: normalised voxels and what the strategy's loss needs.
struct Sample {
  std::vector<float> image;
  std::vector<float> target;  // mask: the outline (0/1)
  std::vector<float> field;   // grade-bounds: the field estimate (0/1)
  float value = 0.0F;         // count, standardised scalar target, or presence
  float capped = 0.0F;        // count-map: the count is a lower bound
  float lower = 0.0F;         // grade-bounds: the grade's fraction interval
  float upper = 1.0F;
};

struct Batch {
  int size = 0;
  std::vector<float> images, targets, fields, values, capped, lower, upper;
};

// Copies `source` into `destination` mirrored along the chosen axes (x fastest layout).
void copy_flipped(const std::vector<float>& source, float* destination, const Shape& shape, const bool flip[3]) {
  for (int z = 0; z < shape.z; ++z) {
    const int sz = flip[2] ? shape.z - 1 - z : z;
    for (int y = 0; y < shape.y; ++y) {
      const int sy = flip[1] ? shape.y - 1 - y : y;
      const float* row = source.data() + (static_cast<std::size_t>(sz) * static_cast<std::size_t>(shape.y) +
                                          static_cast<std::size_t>(sy)) * static_cast<std::size_t>(shape.x);
      float* out = destination + (static_cast<std::size_t>(z) * static_cast<std::size_t>(shape.y) +
                                  static_cast<std::size_t>(y)) * static_cast<std::size_t>(shape.x);
      if (flip[0])
        std::reverse_copy(row, row + shape.x, out);
      else
        std::copy(row, row + shape.x, out);
    }
  }
}

// Gathers samples into one batch; flips come from a stream keyed by (seed, epoch, sample), so the
// batch does not depend on which thread prepares it or when.
Batch prepare_batch(const std::vector<Sample>& samples, const std::vector<std::size_t>& members, const Shape& shape,
                    bool flips, std::uint64_t seed, std::uint64_t epoch) {
  Batch batch;
  batch.size = static_cast<int>(members.size());
  const std::size_t voxels = shape.voxel_count();
  const bool has_target = !samples[members.front()].target.empty();
  const bool has_field = !samples[members.front()].field.empty();
  batch.images.resize(members.size() * voxels);
  if (has_target) batch.targets.resize(members.size() * voxels);
  if (has_field) batch.fields.resize(members.size() * voxels);
  for (std::size_t i = 0; i < members.size(); ++i) {
    const Sample& sample = samples[members[i]];
    bool flip[3] = {false, false, false};
    if (flips) {
      RandomStream random = training_stream(seed, TrainingStream::flips, epoch, members[i]);
      for (int axis = 0; axis < shape.dims(); ++axis) flip[axis] = random.uniform() < 0.5;
    }
    copy_flipped(sample.image, batch.images.data() + i * voxels, shape, flip);
    if (has_target) copy_flipped(sample.target, batch.targets.data() + i * voxels, shape, flip);
    if (has_field) copy_flipped(sample.field, batch.fields.data() + i * voxels, shape, flip);
    batch.values.push_back(sample.value);
    batch.capped.push_back(sample.capped);
    batch.lower.push_back(sample.lower);
    batch.upper.push_back(sample.upper);
  }
  return batch;
}

std::vector<std::int64_t> batch_sizes(int n, const Shape& shape) {
  if (shape.dims() == 2) return {n, 1, shape.y, shape.x};
  return {n, 1, shape.z, shape.y, shape.x};
}

// A view of plain floats as a [N, 1, spatial...] tensor in the model's memory format.
torch::Tensor voxel_tensor(std::vector<float>& values, int n, const TrainedModel::Impl& model) {
  torch::Tensor tensor = torch::from_blob(values.data(), batch_sizes(n, model.shape), torch::kFloat32);
  if (model.channels_last) return tensor.contiguous(internal::channels_last_format(model.shape.dims()));
  return tensor.clone();
}

torch::Tensor vector_tensor(std::vector<float>& values) {
  return torch::from_blob(values.data(), {static_cast<std::int64_t>(values.size())}, torch::kFloat32).clone();
}

std::vector<std::int64_t> spatial_dims(int dims) {
  if (dims == 2) return {1, 2, 3};
  return {1, 2, 3, 4};
}

// The strategy's loss on one batch (mean over the batch).
torch::Tensor batch_loss(UNet& net, const TrainedModel::Impl& model, Batch& batch, double dice_weight) {
  const torch::Tensor input = voxel_tensor(batch.images, batch.size, model);
  internal::UNetOutput output;
  {
    CpuAutocast autocast(model.bfloat16);
    output = net->forward(input);
  }
  const torch::Tensor map = output.map.to(torch::kFloat32);
  const torch::Tensor scalar = output.scalar.to(torch::kFloat32);
  const auto reduce = spatial_dims(model.shape.dims());
  switch (model.strategy) {
    case Strategy::mask: {
      const torch::Tensor target = voxel_tensor(batch.targets, batch.size, model);
      return torch::binary_cross_entropy_with_logits(map, target) +
             dice_weight * internal::soft_dice_loss(torch::sigmoid(map), target);
    }
    case Strategy::count_map: {
      const torch::Tensor counts = torch::softplus(map).sum(reduce);
      const torch::Tensor loss =
          internal::count_loss(counts, vector_tensor(batch.values), vector_tensor(batch.capped)).mean();
      return loss / (model.target_scale * model.target_scale);
    }
    case Strategy::scalar: {
      if (model.kind == LabelKind::presence)
        return torch::binary_cross_entropy_with_logits(scalar, vector_tensor(batch.values));
      return torch::mse_loss(scalar, vector_tensor(batch.values));
    }
    case Strategy::grade_bounds: {
      const torch::Tensor field = voxel_tensor(batch.fields, batch.size, model);
      const torch::Tensor fraction = (torch::sigmoid(map) * field).sum(reduce) / field.sum(reduce);
      return internal::size_constraint_penalty(fraction, vector_tensor(batch.lower), vector_tensor(batch.upper))
          .mean();
    }
  }
  FRUGAL_CHECK(false);
}

void normalise_into(const FloatImage& image, const TrainedModel::Impl& model, std::vector<float>& out) {
  out.resize(image.size());
  const double scale = 1.0 / model.input_scale;
  for (std::size_t i = 0; i < image.size(); ++i)
    out[i] = static_cast<float>((image.data()[i] - model.input_mean) * scale);
}

std::vector<float> field_of(const FloatImage& image, const FieldOptions& field) {
  const LabelImage mask = estimate_field(image, field);
  return std::vector<float>(mask.voxels().begin(), mask.voxels().end());
}

Sample make_sample(const FloatImage& image, const Label& label, const TrainedModel::Impl& model) {
  Sample sample;
  normalise_into(image, model, sample.image);
  switch (model.strategy) {
    case Strategy::mask:
      sample.target.resize(label.mask.size());
      for (std::size_t i = 0; i < label.mask.size(); ++i) sample.target[i] = label.mask.data()[i] != 0 ? 1.0F : 0.0F;
      break;
    case Strategy::count_map:
      sample.value = static_cast<float>(label.value);
      sample.capped = label.capped ? 1.0F : 0.0F;
      break;
    case Strategy::scalar:
      sample.value = model.kind == LabelKind::presence
                         ? static_cast<float>(label.value)
                         : static_cast<float>((label.value - model.target_mean) / model.target_scale);
      break;
    case Strategy::grade_bounds: {
      const FractionInterval interval = grade_fraction_interval(static_cast<int>(std::lround(label.value)), model.grading);
      sample.lower = static_cast<float>(interval.lower);
      sample.upper = static_cast<float>(interval.upper);
      sample.field = field_of(image, model.field);
      break;
    }
  }
  return sample;
}

// Parameters and buffers by name, cloned: the weights of the best epoch so far.
using StateCopy = std::vector<std::pair<std::string, torch::Tensor>>;
StateCopy copy_state(const UNet& net) {
  StateCopy state;
  for (const auto& item : net->named_parameters()) state.emplace_back(item.key(), item.value().detach().clone());
  for (const auto& item : net->named_buffers()) state.emplace_back(item.key(), item.value().detach().clone());
  return state;
}
void restore_state(UNet& net, const StateCopy& state) {
  torch::NoGradGuard no_grad;
  auto parameters = net->named_parameters();
  auto buffers = net->named_buffers();
  for (const auto& [name, value] : state) {
    if (torch::Tensor* parameter = parameters.find(name))
      parameter->copy_(value);
    else if (torch::Tensor* buffer = buffers.find(name))
      buffer->copy_(value);
    else
      FRUGAL_CHECK(false);
  }
}

void check_trainable(const TrainingSet& set, const TrainOptions& options) {
  if (const std::string message = options.validate(); !message.empty()) throw UserError(message);
  if (set.size() < 2) throw UserError("training set: at least 2 labelled images are needed, got " + std::to_string(set.size()));
  const auto kinds = accepted_label_kinds(options.strategy);
  if (std::find(kinds.begin(), kinds.end(), set.kind()) == kinds.end()) {
    std::string allowed;
    for (LabelKind kind : kinds) allowed += (allowed.empty() ? "" : ", ") + frugal::to_string(kind);
    throw UserError("strategy " + to_string(options.strategy) + " cannot train from " + frugal::to_string(set.kind()) +
                    " labels; it takes: " + allowed);
  }
  const Shape shape = set.shape();
  const int divisor = 1 << (options.depth - 1);
  if (shape.x % divisor != 0 || shape.y % divisor != 0 || (shape.dims() == 3 && shape.z % divisor != 0))
    throw UserError("train.depth = " + std::to_string(options.depth) + ": image sides " + std::to_string(shape.x) + "x" +
                    std::to_string(shape.y) + (shape.dims() == 3 ? "x" + std::to_string(shape.z) : "") +
                    " must divide by " + std::to_string(divisor) + "; use a smaller depth or another image size");
  if (set.kind() == LabelKind::grade)
    for (std::size_t i = 0; i < set.size(); ++i) {
      const double grade = set.label(i).value;
      if (grade < 0.0 || grade >= options.grading.bins() || grade != std::floor(grade))
        throw UserError("training set: label " + std::to_string(i) + " has grade " + std::to_string(grade) +
                        ", outside the bins of train.grading (0.." + std::to_string(options.grading.bins() - 1) + ")");
    }
}

UNet make_network(const TrainedModel::Impl& model) {
  UNet net(UNetOptions(model.shape.dims()).width(model.width).depth(model.depth).normalization(model.normalization));
  if (model.channels_last) internal::to_channels_last(*net, model.shape.dims());
  return net;
}

double mean_of(const std::vector<double>& values) {
  return values.empty() ? 0.0 : std::accumulate(values.begin(), values.end(), 0.0) / static_cast<double>(values.size());
}

}  // namespace

TrainedModel::TrainedModel() = default;
TrainedModel::TrainedModel(std::unique_ptr<Impl> impl) : impl_(std::move(impl)) {}
TrainedModel::TrainedModel(TrainedModel&&) noexcept = default;
TrainedModel& TrainedModel::operator=(TrainedModel&&) noexcept = default;
TrainedModel::~TrainedModel() = default;

const TrainedModel::Impl& TrainedModel::impl() const {
  if (!impl_) throw UserError("the model is empty: train or load one first");
  return *impl_;
}
Strategy TrainedModel::strategy() const { return impl().strategy; }

TrainResult train(const TrainingSet& set, const TrainOptions& options) {
  check_trainable(set, options);
  const auto start = std::chrono::steady_clock::now();
  torch::set_num_threads(options.threads);
  torch::manual_seed(options.seed);

  auto model = std::make_unique<TrainedModel::Impl>();
  model->strategy = options.strategy;
  model->kind = set.kind();
  model->shape = set.shape();
  model->width = options.width;
  model->depth = options.depth;
  model->normalization = options.normalization;
  model->channels_last = options.channels_last;
  model->bfloat16 = options.bfloat16;
  model->grading = options.grading;
  model->field = options.field;

  // Validation split of the bought labels (never truth), from the seed alone.
  const std::size_t n = set.size();
  std::vector<std::size_t> order(n);
  std::iota(order.begin(), order.end(), std::size_t{0});
  RandomStream split_random = training_stream(options.seed, TrainingStream::split);
  shuffle(order, split_random);
  std::size_t validation_count = static_cast<std::size_t>(std::lround(options.validation_fraction * static_cast<double>(n)));
  if (options.validation_fraction > 0.0) validation_count = std::clamp<std::size_t>(validation_count, 1, n - 1);
  const std::vector<std::size_t> validation(order.begin(), order.begin() + static_cast<std::ptrdiff_t>(validation_count));
  std::vector<std::size_t> training(order.begin() + static_cast<std::ptrdiff_t>(validation_count), order.end());
  std::sort(training.begin(), training.end());

  // Normalisation from the training split: intensities and (scalar) targets.
  double sum = 0.0, sum_squares = 0.0, voxels = 0.0;
  std::vector<double> targets;
  for (std::size_t i : training) {
    for (float value : set.image(i).voxels()) {
      sum += value;
      sum_squares += static_cast<double>(value) * value;
    }
    voxels += static_cast<double>(set.image(i).size());
    targets.push_back(set.label(i).value);
  }
  model->input_mean = sum / voxels;
  model->input_scale = std::max(1e-6, std::sqrt(std::max(0.0, sum_squares / voxels - model->input_mean * model->input_mean)));
  const double target_mean = mean_of(targets);
  double target_variance = 0.0;
  for (double t : targets) target_variance += (t - target_mean) * (t - target_mean);
  target_variance /= static_cast<double>(targets.size());
  model->target_mean = target_mean;
  model->target_scale = std::max(1.0, std::sqrt(target_variance));
  if (options.strategy == Strategy::scalar && model->kind != LabelKind::presence)
    model->target_scale = std::max(1e-3, std::sqrt(target_variance));

  std::vector<Sample> samples(n);
  for (std::size_t i = 0; i < n; ++i) samples[i] = make_sample(set.image(i), set.label(i), *model);

  UNet net = make_network(*model);
  {
    // Start each map at the training labels' average, so the first steps do not fight a far-off
    // offset: count-map at a density summing to the mean count, grade-bounds at the mean
    // interval midpoint.
    torch::NoGradGuard no_grad;
    const double voxel_count = static_cast<double>(model->shape.voxel_count());
    if (options.strategy == Strategy::count_map) {
      const double density = std::max(1e-3, target_mean) / voxel_count;
      net->map_bias().fill_(std::log(std::expm1(density)));
    } else if (options.strategy == Strategy::grade_bounds) {
      double midpoint = 0.0;
      for (std::size_t i : training) midpoint += 0.5 * (samples[i].lower + samples[i].upper);
      midpoint = std::clamp(midpoint / static_cast<double>(training.size()), 1e-3, 1.0 - 1e-3);
      net->map_bias().fill_(std::log(midpoint / (1.0 - midpoint)));
    }
  }
  torch::optim::Adam optimizer(net->parameters(),
                               torch::optim::AdamOptions(options.learning_rate).weight_decay(options.weight_decay));

  TrainSummary summary;
  summary.best_validation_loss = std::numeric_limits<double>::quiet_NaN();
  double best = std::numeric_limits<double>::infinity();
  StateCopy best_state;
  int epochs_since_best = 0;
  double training_seconds = 0.0;
  std::size_t images_seen = 0;
  const auto batch_size = static_cast<std::size_t>(options.batch_size);

  for (int epoch = 0; epoch < options.epochs; ++epoch) {
    // Cosine learning-rate schedule (Loshchilov & Hutter 2017, SGDR, without restarts).
    const double rate = options.learning_rate * 0.5 * (1.0 + std::cos(kPi * epoch / options.epochs));
    for (auto& group : optimizer.param_groups()) static_cast<torch::optim::AdamOptions&>(group.options()).lr(rate);

    std::vector<std::size_t> epoch_order = training;
    RandomStream shuffle_random = training_stream(options.seed, TrainingStream::shuffle, static_cast<std::uint64_t>(epoch));
    shuffle(epoch_order, shuffle_random);
    std::vector<std::vector<std::size_t>> batches;
    for (std::size_t first = 0; first < epoch_order.size(); first += batch_size) {
      const std::size_t last = std::min(epoch_order.size(), first + batch_size);
      // A batch of one breaks batch normalisation; fold a lone last sample into the batch before.
      if (last - first == 1 && !batches.empty() && options.normalization == Normalization::batch) {
        batches.back().push_back(epoch_order[first]);
        break;
      }
      batches.emplace_back(epoch_order.begin() + static_cast<std::ptrdiff_t>(first),
                           epoch_order.begin() + static_cast<std::ptrdiff_t>(last));
    }

    const auto epoch_start = std::chrono::steady_clock::now();
    net->train();
    double loss_sum = 0.0;
    // The next batch is prepared on its own thread while the optimiser works on this one.
    Batch next;
    std::thread worker;
    const JoinOnExit join_worker(worker);
    const auto launch = [&](std::size_t b) {
      worker = std::thread([&, b] {
        next = prepare_batch(samples, batches[b], model->shape, options.flips, options.seed, static_cast<std::uint64_t>(epoch));
      });
    };
    launch(0);
    for (std::size_t b = 0; b < batches.size(); ++b) {
      worker.join();
      Batch current = std::move(next);
      if (b + 1 < batches.size()) launch(b + 1);
      optimizer.zero_grad();
      torch::Tensor loss = batch_loss(net, *model, current, options.dice_weight);
      if (!std::isfinite(loss.item<double>())) {
        throw UserError("training diverged at epoch " + std::to_string(epoch + 1) + " (loss is not finite); lower train.learning_rate");
      }
      loss.backward();
      optimizer.step();
      loss_sum += loss.item<double>() * current.size;
      images_seen += static_cast<std::size_t>(current.size);
    }
    training_seconds += std::chrono::duration<double>(std::chrono::steady_clock::now() - epoch_start).count();
    summary.training_loss.push_back(loss_sum / static_cast<double>(training.size()));
    summary.epochs_run = epoch + 1;

    if (validation.empty()) {
      summary.best_epoch = epoch + 1;
      continue;
    }
    net->eval();
    double validation_sum = 0.0;
    {
      torch::NoGradGuard no_grad;
      for (std::size_t first = 0; first < validation.size(); first += batch_size) {
        const std::vector<std::size_t> members(validation.begin() + static_cast<std::ptrdiff_t>(first),
                                               validation.begin() + static_cast<std::ptrdiff_t>(std::min(validation.size(), first + batch_size)));
        Batch batch = prepare_batch(samples, members, model->shape, false, options.seed, 0);
        validation_sum += batch_loss(net, *model, batch, options.dice_weight).item<double>() * batch.size;
      }
    }
    const double validation_loss = validation_sum / static_cast<double>(validation.size());
    summary.validation_loss.push_back(validation_loss);
    if (validation_loss < best) {
      best = validation_loss;
      best_state = copy_state(net);
      summary.best_epoch = epoch + 1;
      summary.best_validation_loss = validation_loss;
      epochs_since_best = 0;
    } else if (options.patience > 0 && ++epochs_since_best >= options.patience) {
      break;
    }
  }
  if (!best_state.empty()) restore_state(net, best_state);
  net->eval();
  model->net = net;
  summary.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  summary.images_per_second = training_seconds > 0.0 ? static_cast<double>(images_seen) / training_seconds : 0.0;
  return {TrainedModel(std::move(model)), summary};
}

std::vector<Prediction> predict(const TrainedModel& trained, const std::vector<FloatImage>& images, int threads) {
  const TrainedModel::Impl& model = trained.impl();
  if (threads < 1) throw UserError("predict: threads = " + std::to_string(threads) + ": must be at least 1");
  for (std::size_t i = 0; i < images.size(); ++i)
    if (images[i].shape() != model.shape)
      throw UserError("predict: image " + std::to_string(i) + " is " + std::to_string(images[i].shape().x) + "x" +
                      std::to_string(images[i].shape().y) + "x" + std::to_string(images[i].shape().z) +
                      " but the model was trained on " + std::to_string(model.shape.x) + "x" +
                      std::to_string(model.shape.y) + "x" + std::to_string(model.shape.z));
  torch::set_num_threads(threads);
  torch::NoGradGuard no_grad;
  UNet net = model.net;
  net->eval();
  const std::size_t voxels = model.shape.voxel_count();
  const bool map_strategy = model.strategy != Strategy::scalar;
  std::vector<Prediction> predictions(images.size());
  constexpr std::size_t kBatch = 16;
  for (std::size_t first = 0; first < images.size(); first += kBatch) {
    const std::size_t count = std::min(kBatch, images.size() - first);
    std::vector<float> input(count * voxels);
    std::vector<float> one;
    for (std::size_t i = 0; i < count; ++i) {
      normalise_into(images[first + i], model, one);
      std::copy(one.begin(), one.end(), input.begin() + static_cast<std::ptrdiff_t>(i * voxels));
    }
    internal::UNetOutput output;
    {
      CpuAutocast autocast(model.bfloat16);
      output = net->forward(voxel_tensor(input, static_cast<int>(count), model));
    }
    torch::Tensor map = output.map.to(torch::kFloat32);
    map = model.strategy == Strategy::count_map ? torch::softplus(map) : torch::sigmoid(map);
    map = map.contiguous();  // back to x-fastest voxels
    const torch::Tensor scalar = output.scalar.to(torch::kFloat32).contiguous();
    for (std::size_t i = 0; i < count; ++i) {
      Prediction& prediction = predictions[first + i];
      const double raw = scalar[static_cast<std::int64_t>(i)].item<double>();
      if (!map_strategy) {
        const double value = raw * model.target_scale + model.target_mean;
        if (model.kind == LabelKind::count) prediction.count = std::max(0.0, value);
        if (model.kind == LabelKind::grade) prediction.grade = std::clamp(value, 0.0, model.grading.bins() - 1.0);
        if (model.kind == LabelKind::presence) prediction.presence_probability = 1.0 / (1.0 + std::exp(-raw));
        continue;
      }
      prediction.map = FloatImage(images[first + i].geometry());
      const float* values = map.data_ptr<float>() + i * voxels;
      std::copy(values, values + voxels, prediction.map.data());
      if (model.strategy == Strategy::count_map) {
        double total = 0.0;
        for (std::size_t v = 0; v < voxels; ++v) total += values[v];
        prediction.count = total;
        prediction.presence_probability = 1.0 - std::exp(-total);
        continue;
      }
      const LabelImage field = estimate_field(images[first + i], model.field);
      double inside = 0.0, field_voxels = 0.0, maximum = 0.0;
      LabelImage lesion(images[first + i].geometry(), 0);
      for (std::size_t v = 0; v < voxels; ++v) {
        if (field.data()[v] == 0) continue;
        inside += values[v];
        field_voxels += 1.0;
        maximum = std::max(maximum, static_cast<double>(values[v]));
        lesion.data()[v] = values[v] > 0.5F ? 1 : 0;
      }
      prediction.affected_fraction = inside / field_voxels;
      prediction.presence_probability = maximum;
      prediction.count = measure::label_components(lesion).count;
      int grade = 0;
      for (double edge : model.grading.bin_edges)
        if (prediction.affected_fraction > edge) ++grade;
      prediction.grade = grade;
    }
  }
  return predictions;
}

Prediction predict(const TrainedModel& model, const FloatImage& image, int threads) {
  return std::move(predict(model, std::vector<FloatImage>{image}, threads).front());
}

// Checkpoint: the network's parameters and buffers plus one float64 tensor "frugal.meta" holding
// everything else, in a fixed order behind a layout version.
namespace {
constexpr double kCheckpointVersion = 1.0;
}

void TrainedModel::save(const std::string& path) const {
  const Impl& model = impl();
  std::vector<double> meta{kCheckpointVersion,
                           static_cast<double>(model.strategy),
                           static_cast<double>(model.kind),
                           static_cast<double>(model.shape.x),
                           static_cast<double>(model.shape.y),
                           static_cast<double>(model.shape.z),
                           static_cast<double>(model.width),
                           static_cast<double>(model.depth),
                           static_cast<double>(model.normalization),
                           model.channels_last ? 1.0 : 0.0,
                           model.bfloat16 ? 1.0 : 0.0,
                           model.input_mean,
                           model.input_scale,
                           model.target_mean,
                           model.target_scale,
                           model.field.low,
                           model.field.high,
                           model.field.drop_border_connected ? 1.0 : 0.0,
                           model.grading.perception_sd,
                           model.grading.bias,
                           static_cast<double>(model.grading.bin_edges.size())};
  meta.insert(meta.end(), model.grading.bin_edges.begin(), model.grading.bin_edges.end());
  const std::string partial = path + ".partial";
  try {
    torch::serialize::OutputArchive archive;
    model.net->save(archive);
    archive.write("frugal.meta", torch::tensor(meta, torch::kFloat64));
    archive.save_to(partial);
  } catch (const c10::Error& error) {
    throw UserError(path + ": cannot write the checkpoint: " + error.what_without_backtrace());
  }
  std::error_code code;
  std::filesystem::rename(partial, path, code);
  if (code) throw UserError(path + ": cannot move the finished checkpoint into place: " + code.message());
}

TrainedModel TrainedModel::load(const std::string& path) {
  if (!std::filesystem::is_regular_file(path)) throw UserError(path + ": no such checkpoint file");
  auto model = std::make_unique<Impl>();
  try {
    torch::serialize::InputArchive archive;
    archive.load_from(path);
    torch::Tensor meta_tensor;
    if (!archive.try_read("frugal.meta", meta_tensor) || meta_tensor.dim() != 1 || meta_tensor.numel() < 21 ||
        meta_tensor.scalar_type() != torch::kFloat64)
      throw UserError(path + ": not a frugal checkpoint (no frugal.meta record)");
    const auto meta = std::vector<double>(meta_tensor.data_ptr<double>(), meta_tensor.data_ptr<double>() + meta_tensor.numel());
    if (meta[0] != kCheckpointVersion)
      throw UserError(path + ": checkpoint layout " + std::to_string(meta[0]) + " is not the layout " +
                      std::to_string(kCheckpointVersion) + " this frugal reads");
    const auto edges = static_cast<std::size_t>(meta[20]);
    if (meta.size() != 21 + edges) throw UserError(path + ": frugal.meta record is truncated");
    model->strategy = static_cast<Strategy>(static_cast<int>(meta[1]));
    model->kind = static_cast<LabelKind>(static_cast<int>(meta[2]));
    model->shape = Shape{static_cast<int>(meta[3]), static_cast<int>(meta[4]), static_cast<int>(meta[5])};
    model->width = static_cast<int>(meta[6]);
    model->depth = static_cast<int>(meta[7]);
    model->normalization = static_cast<Normalization>(static_cast<int>(meta[8]));
    model->channels_last = meta[9] != 0.0;
    model->bfloat16 = meta[10] != 0.0;
    model->input_mean = meta[11];
    model->input_scale = meta[12];
    model->target_mean = meta[13];
    model->target_scale = meta[14];
    model->field.low = meta[15];
    model->field.high = meta[16];
    model->field.drop_border_connected = meta[17] != 0.0;
    model->grading.perception_sd = meta[18];
    model->grading.bias = meta[19];
    model->grading.bin_edges.assign(meta.begin() + 21, meta.end());
    if (model->width < 1 || model->depth < 1 || model->shape.x < 1 || model->shape.y < 1 || model->shape.z < 1)
      throw UserError(path + ": frugal.meta record holds an impossible network or image size");
    model->net = make_network(*model);
    model->net->load(archive);
    if (model->channels_last) internal::to_channels_last(*model->net, model->shape.dims());
    model->net->eval();
  } catch (const c10::Error& error) {
    throw UserError(path + ": cannot read the checkpoint (truncated or not a frugal checkpoint): " +
                    error.what_without_backtrace());
  }
  return TrainedModel(std::move(model));
}

}  // namespace frugal::learn
