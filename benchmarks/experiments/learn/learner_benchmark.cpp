// Training throughput of the learning loop (images/s through the optimiser, 2 threads): the
// mask strategy on 2D streaks at 64^2 and 128^2, channels-last memory on and off.
#include <benchmark/benchmark.h>

#include <vector>

#include "corruptors/labeler.h"
#include "experiments/learn/learner.h"
#include "phantoms/phantom.h"

namespace {

frugal::learn::TrainingSet outline_set(int side, int count) {
  frugal::ScenarioOptions scenario = frugal::default_scenario(frugal::Family::streaks);
  scenario.geometry.size_2d = {side, side};
  frugal::LabelRequest request;
  request.kind = frugal::LabelKind::outline;
  frugal::learn::TrainingSet set;
  for (int i = 0; i < count; ++i) {
    const frugal::Subject subject = frugal::generate_subject(scenario, 7, i);
    set.add(subject.image, frugal::make_label(subject, frugal::RaterOptions{}, request, 7));
  }
  return set;
}

// Arguments: image side, channels_last (0/1). Three epochs of 64 images, batch 32, width 8, depth 3.
void BM_TrainMask2D(benchmark::State& state) {
  const int side = static_cast<int>(state.range(0));
  const frugal::learn::TrainingSet set = outline_set(side, 64);
  frugal::learn::TrainOptions options;
  options.strategy = frugal::learn::Strategy::mask;
  options.batch_size = 32;
  options.threads = 2;
  options.validation_fraction = 0.0;
  options.channels_last = state.range(1) != 0;
  options.epochs = 3;  // the first steps build oneDNN primitives; three epochs amortise that
  for (auto _ : state) {
    const auto result = frugal::learn::train(set, options);
    // Manual time: the optimiser loop only (the summary's images/s), not network construction.
    state.SetIterationTime(static_cast<double>(set.size()) * options.epochs / result.summary.images_per_second);
  }
  state.SetItemsProcessed(state.iterations() * static_cast<std::int64_t>(set.size()) * options.epochs);
}
BENCHMARK(BM_TrainMask2D)
    ->ArgNames({"side", "channels_last"})
    ->Args({64, 1})
    ->Args({64, 0})
    ->Args({128, 1})
    ->Args({128, 0})
    ->Unit(benchmark::kMillisecond)
    ->UseManualTime();

}  // namespace
