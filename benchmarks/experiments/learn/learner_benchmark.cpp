// Training figures of the learning part, 2 torch threads, mask strategy on streaks phantoms,
// width 8, depth 3, batch norm, channels-last memory, bfloat16 autocast off and on:
//   1. throughput of frugal's train(): images/s through the optimiser (items_per_second);
//   2. the loop's overhead: the same network, loss and optimiser in a bare libtorch loop on
//      tensors made beforehand, at the same image size and batch;
//   3. achieved convolution GFLOP/s and the fraction of the two cores' assumed peak.
//
// clang-format off
// Run on a quiet machine (estimated 3-20 s per case when idle, a few minutes per repetition):
//   build/benchmarks/experiments/learn/learner_benchmark --benchmark_repetitions=5 --benchmark_report_aggregates_only=true
// Only the overhead pairs (2D, frugal and bare rows):
//   build/benchmarks/experiments/learn/learner_benchmark --benchmark_filter='dims:2' --benchmark_repetitions=5 --benchmark_report_aggregates_only=true
// A short check that everything runs:
//   build/benchmarks/experiments/learn/learner_benchmark --benchmark_filter='dims:2/side:64/'
// clang-format on
//
// Rows are BM_TrainMask/<loop>/dims:D/side:S/bfloat16:B, loop = frugal or bare; the label gives
// the batch and the images trained. Per row:
//   items_per_second  images through the optimiser per second (manual time: the training loop
//                     only, not phantoms, network construction or the warm-up);
//   GFLOPs            convolution FLOPs per training image x images/s / 1e9 (unet_flops.h;
//                     training counted as 3 x forward: the forward pass and two backward
//                     convolutions, for the input and the weight gradients, per layer);
//   peak_fraction     GFLOPs / the assumed float32 peak of the two cores (context line
//                     "assumed_peak"). bfloat16 rows are also divided by the float32 peak.
// Loop overhead, from the medians of the frugal and bare rows with the same dims, side and
// bfloat16: overhead = frugal time per image / bare time per image - 1
//                    = bare items_per_second / frugal items_per_second - 1   (target <= 5 %).
// The difference holds everything frugal does per step beyond the network's own work: batch
// preparation with flips on the worker thread (the first batch of each epoch is not overlapped),
// copies of plain floats into channels-last tensors, the learning-rate schedule, the shuffle.
#include <benchmark/benchmark.h>
#include <torch/torch.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <fstream>
#include <map>
#include <set>
#include <sstream>
#include <string>
#include <tuple>
#include <utility>
#include <vector>

#include "benchmarks/experiments/learn/unet_flops.h"
#include "corruptors/labeler.h"
#include "experiments/learn/learner.h"
#include "experiments/learn/losses_internal.h"
#include "experiments/learn/model_internal.h"
#include "experiments/learn/unet_internal.h"
#include "phantoms/phantom.h"

namespace {

using frugal::learn::TrainingSet;
using frugal::learn::benchmarking::unet_convolution_work;
namespace internal = frugal::learn::internal;

constexpr int kThreads = 2;  // torch intra-op threads; also the number of cores in the peak
constexpr int kWidth = 8;
constexpr int kDepth = 3;
constexpr int kEpochs = 3;  // per-call costs (first Adam step, each epoch's first batch) stay in

// The training data of one case. 2D: batch 32 over 128 images (4 steps per epoch). 3D: batch 8
// (a 48^3 run stays under 1 GB resident) over 32 images at 32^3 and 16 at 48^3, so that every
// case trains for a few seconds on this CPU.
struct Plan {
  int batch_size;
  int images;
};
Plan plan_for(int dims, int side) {
  if (dims == 2) return {32, 128};
  return {8, side <= 32 ? 32 : 16};
}

// --- The two cores' assumed peak -----------------------------------------------------------

// Float32 peak = cores x clock x FLOP per cycle per core, with FLOP per cycle = 2 (a fused
// multiply-add) x float lanes per FMA x 2 FMA pipes per core; all but the pipe count is read
// from /proc/cpuinfo. This machine (AMD EPYC, family 26 = Zen 5, "cpu MHz" 2096, flags avx512f and
// fma) gives 2 x 16 x 2 = 64 FLOP/cycle/core and 2 x 2.096 GHz x 64 = 268 GFLOP/s. Assumptions:
// Zen 5 server cores run 512-bit FMAs at full width on two pipes (Zen 4, family 25, splits them
// in two halves, hence 8 lanes there); under a hypervisor "cpu MHz" is the nominal clock, and
// boost above it makes peak_fraction read high. bfloat16 dot products (avx512_bf16) could reach
// twice the float32 peak; rows with bfloat16 on are still compared with the float32 peak.
struct PeakEstimate {
  double flops_per_second = 0.0;
  std::string description;
};

PeakEstimate estimate_peak() {
  std::ifstream cpuinfo("/proc/cpuinfo");
  std::map<std::string, std::string> fields;  // the first processor's fields
  for (std::string line; std::getline(cpuinfo, line);) {
    const auto colon = line.find(':');
    if (colon == std::string::npos) continue;
    std::string key = line.substr(0, colon);
    key.erase(key.find_last_not_of(" \t") + 1);
    const auto start = line.find_first_not_of(' ', colon + 1);
    fields.emplace(key, start == std::string::npos ? "" : line.substr(start));
  }
  const std::string flags = " " + fields["flags"] + " ";
  const auto has = [&flags](const char* flag) {
    return flags.find(std::string(" ") + flag + " ") != std::string::npos;
  };
  const bool amd = fields["vendor_id"] == "AuthenticAMD";
  const int family = fields["cpu family"].empty() ? 0 : std::stoi(fields["cpu family"]);
  int lanes = 4;
  if (has("avx2") && has("fma")) lanes = 8;
  if (has("avx512f") && !(amd && family < 26)) lanes = 16;
  const double ghz = fields["cpu MHz"].empty() ? 0.0 : std::stod(fields["cpu MHz"]) / 1000.0;
  constexpr int kFmaPipes = 2;
  const double per_cycle_per_core = 2.0 * lanes * kFmaPipes;
  PeakEstimate peak;
  peak.flops_per_second = kThreads * ghz * 1e9 * per_cycle_per_core;
  std::ostringstream text;
  text << peak.flops_per_second / 1e9 << " GFLOP/s float32 = " << kThreads << " cores x " << ghz << " GHz x "
       << per_cycle_per_core << " FLOP/cycle (" << lanes << " lanes x FMA x " << kFmaPipes << " pipes); "
       << fields["model name"] << ", family " << family << ", from /proc/cpuinfo";
  peak.description = text.str();
  return peak;
}

const PeakEstimate& peak() {
  static const PeakEstimate estimate = estimate_peak();
  return estimate;
}

// Printed once in the context header (and the JSON "context"). Google Benchmark's context map
// starts as a constant-initialised null pointer, so adding to it during static initialisation is safe.
const bool kPeakInContext = [] {
  benchmark::AddCustomContext("assumed_peak", peak().description);
  return true;
}();

// --- Training data -------------------------------------------------------------------------

const TrainingSet& outline_set(int dims, int side, int count) {
  static std::map<std::tuple<int, int, int>, TrainingSet> cache;  // phantoms are drawn once per process
  const auto key = std::make_tuple(dims, side, count);
  if (const auto found = cache.find(key); found != cache.end()) return found->second;
  frugal::ScenarioOptions scenario = frugal::default_scenario(frugal::Family::streaks);
  scenario.geometry.dims = dims;
  scenario.geometry.size_2d = {side, side};
  scenario.geometry.size_3d = {side, side, side};
  frugal::LabelRequest request;
  request.kind = frugal::LabelKind::outline;
  TrainingSet set;
  for (int i = 0; i < count; ++i) {
    const frugal::Subject subject = frugal::generate_subject(scenario, 7, i);
    set.add(subject.image, frugal::make_label(subject, frugal::RaterOptions{}, request, 7));
  }
  return cache.emplace(key, std::move(set)).first->second;
}

TrainingSet first_images(const TrainingSet& set, int count) {
  TrainingSet part;
  for (std::size_t i = 0; i < static_cast<std::size_t>(count); ++i) part.add(set.image(i), set.label(i));
  return part;
}

// --- The two loops -------------------------------------------------------------------------

frugal::learn::TrainOptions train_options(const Plan& plan, bool bfloat16, int epochs) {
  frugal::learn::TrainOptions options;
  options.strategy = frugal::learn::Strategy::mask;
  options.batch_size = plan.batch_size;
  options.threads = kThreads;
  options.validation_fraction = 0.0;  // no validation passes: only optimiser steps are compared
  options.width = kWidth;
  options.depth = kDepth;
  options.normalization = frugal::learn::Normalization::batch;
  options.channels_last = true;
  options.bfloat16 = bfloat16;
  options.epochs = epochs;  // augmentation: frugal's default flips, part of what is measured
  return options;
}

// Seconds frugal's train() spends in its epochs (its own clock, as images_per_second).
double frugal_seconds(const TrainingSet& set, const frugal::learn::TrainOptions& options) {
  const auto result = frugal::learn::train(set, options);
  return static_cast<double>(set.size()) * result.summary.epochs_run / result.summary.images_per_second;
}

struct TensorBatch {
  torch::Tensor images;   // [N, 1, spatial...], normalised as frugal normalises, channels-last
  torch::Tensor targets;  // the outlines as 0/1 floats, same layout
};

// The set cut into batches in set order, once, before timing: the bare loop prepares nothing.
std::vector<TensorBatch> tensor_batches(const TrainingSet& set, int batch_size) {
  const frugal::Shape shape = set.shape();
  const int dims = shape.dims();
  const std::size_t voxels = shape.voxel_count();
  double sum = 0.0, sum_squares = 0.0;
  for (std::size_t i = 0; i < set.size(); ++i)
    for (float value : set.image(i).voxels()) {
      sum += value;
      sum_squares += static_cast<double>(value) * value;
    }
  const double count = static_cast<double>(set.size() * voxels);
  const double mean = sum / count;
  const double scale = std::max(1e-6, std::sqrt(std::max(0.0, sum_squares / count - mean * mean)));
  std::vector<TensorBatch> batches;
  for (std::size_t first = 0; first < set.size(); first += static_cast<std::size_t>(batch_size)) {
    const std::size_t n = std::min(set.size() - first, static_cast<std::size_t>(batch_size));
    std::vector<std::int64_t> sizes{static_cast<std::int64_t>(n), 1};
    if (dims == 3) sizes.push_back(shape.z);
    sizes.push_back(shape.y);
    sizes.push_back(shape.x);
    torch::Tensor images = torch::empty(sizes, torch::kFloat32);
    torch::Tensor targets = torch::empty(sizes, torch::kFloat32);
    float* image_out = images.data_ptr<float>();
    float* target_out = targets.data_ptr<float>();
    for (std::size_t i = 0; i < n; ++i) {
      const auto& image = set.image(first + i).voxels();
      const auto& mask = set.label(first + i).mask.voxels();
      for (std::size_t v = 0; v < voxels; ++v) {
        image_out[i * voxels + v] = static_cast<float>((image[v] - mean) / scale);
        target_out[i * voxels + v] = mask[v] != 0 ? 1.0F : 0.0F;
      }
    }
    const auto format = internal::channels_last_format(dims);
    batches.push_back({images.contiguous(format), targets.contiguous(format)});
  }
  return batches;
}

// The same work per step as frugal's mask strategy (strategy_losses.cpp): the U-net forward under
// the same autocast, the map in float32, cross-entropy + soft Dice, the loss read back, backward,
// Adam with frugal's rate and weight decay. Returns the seconds of the steps alone.
double bare_seconds(const std::vector<TensorBatch>& batches, int dims, const frugal::learn::TrainOptions& options) {
  torch::set_num_threads(options.threads);
  torch::manual_seed(options.seed);  // the same initial weights as train()
  internal::UNet network(
      internal::UNetOptions(dims).width(options.width).depth(options.depth).normalization(options.normalization));
  internal::to_channels_last(*network, dims);
  network->train();
  torch::optim::Adam optimizer(network->parameters(),
                               torch::optim::AdamOptions(options.learning_rate).weight_decay(options.weight_decay));
  const auto start = std::chrono::steady_clock::now();
  for (int epoch = 0; epoch < options.epochs; ++epoch)
    for (const TensorBatch& batch : batches) {
      optimizer.zero_grad();
      torch::Tensor map;
      {
        internal::CpuAutocast autocast(options.bfloat16);
        map = network->forward(batch.images).map;
      }
      map = map.to(torch::kFloat32);
      torch::Tensor loss = torch::binary_cross_entropy_with_logits(map, batch.targets) +
                           options.dice_weight * internal::soft_dice_loss(torch::sigmoid(map), batch.targets);
      benchmark::DoNotOptimize(loss.item<double>());  // frugal reads every loss (divergence check)
      loss.backward();
      optimizer.step();
    }
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
}

// --- The benchmark -------------------------------------------------------------------------

enum class Loop { frugal, bare };

// The convolution weights of the real network, to check unet_flops.h against unet.cpp.
std::int64_t network_convolution_weights(int dims) {
  internal::UNet network(internal::UNetOptions(dims).width(kWidth).depth(kDepth));
  std::int64_t weights = 0;
  for (const auto& parameter : network->parameters())
    if (parameter.dim() == dims + 2) weights += parameter.numel();
  return weights;
}

// Arguments: dims, image side, bfloat16 (0/1).
void BM_TrainMask(benchmark::State& state, Loop loop) {
  const int dims = static_cast<int>(state.range(0));
  const int side = static_cast<int>(state.range(1));
  const bool bfloat16 = state.range(2) != 0;
  const Plan plan = plan_for(dims, side);
  const TrainingSet& set = outline_set(dims, side, plan.images);
  const std::int64_t voxels = dims == 2 ? std::int64_t{side} * side : std::int64_t{side} * side * side;
  const auto work = unet_convolution_work(dims, 1, 1, kWidth, kDepth, voxels);
  if (work.weights != network_convolution_weights(dims)) {
    state.SkipWithError("unet_flops.h no longer mirrors unet.cpp (convolution weight counts differ)");
    return;
  }
  const double training_flops_per_image = 3.0 * static_cast<double>(work.forward_flops);

  // Once per process and case, an untimed step of one batch: oneDNN builds its primitives for
  // these shapes and the allocator grows, one-time costs that a study training many networks
  // pays once. Per-call costs stay in the timed runs.
  static std::set<std::tuple<Loop, int, int, bool>> warmed;
  if (warmed.insert({loop, dims, side, bfloat16}).second) {
    const auto options = train_options(plan, bfloat16, 1);
    if (loop == Loop::frugal)
      frugal_seconds(first_images(set, plan.batch_size), options);
    else
      bare_seconds(tensor_batches(first_images(set, plan.batch_size), plan.batch_size), dims, options);
  }

  const auto options = train_options(plan, bfloat16, kEpochs);
  std::vector<TensorBatch> batches;
  if (loop == Loop::bare) batches = tensor_batches(set, plan.batch_size);
  const double images = static_cast<double>(set.size()) * kEpochs;
  double seconds = 0.0;
  for (auto _ : state) {
    const double run_seconds =
        loop == Loop::frugal ? frugal_seconds(set, options) : bare_seconds(batches, dims, options);
    state.SetIterationTime(run_seconds);
    seconds += run_seconds;
  }

  const double total_images = images * static_cast<double>(state.iterations());
  state.SetItemsProcessed(static_cast<std::int64_t>(total_images));  // a rate over the manual time
  const double flops_per_second = total_images * training_flops_per_image / seconds;
  state.counters["GFLOPs"] = flops_per_second / 1e9;
  state.counters["peak_fraction"] = flops_per_second / peak().flops_per_second;
  state.SetLabel("batch " + std::to_string(plan.batch_size) + ", " + std::to_string(plan.images) + " images x " +
                 std::to_string(kEpochs) + " epochs, " + std::to_string(std::lround(training_flops_per_image / 1e6)) +
                 " MFLOP/image");
}

// One timed train() per repetition (12 optimiser steps, 6 at 48^3, seconds in all); the caller
// sets the repetitions. The bare row of a case runs right after its frugal row, so that the pair
// sees the same machine state.
const bool kRegistered = [] {
  const auto add = [](const char* name, Loop loop, int dims, int side, int bfloat16) {
    benchmark::RegisterBenchmark(name, BM_TrainMask, loop)
        ->ArgNames({"dims", "side", "bfloat16"})
        ->Args({dims, side, bfloat16})
        ->Iterations(1)
        ->Unit(benchmark::kMillisecond)
        ->UseManualTime();
  };
  for (int side : {64, 128})
    for (int bfloat16 : {0, 1}) {
      add("BM_TrainMask/frugal", Loop::frugal, 2, side, bfloat16);
      add("BM_TrainMask/bare", Loop::bare, 2, side, bfloat16);
    }
  for (int side : {32, 48})
    for (int bfloat16 : {0, 1}) add("BM_TrainMask/frugal", Loop::frugal, 3, side, bfloat16);
  return true;
}();

}  // namespace
