// Time to buy one label of each kind for one subject (one thread), relative to drawing that
// subject: a 2D 128x128 streaks subject with 20 lesions, as in phantom_benchmark. Target: every
// kind except partial masks and outlines costs < 10% of the subject. The `subject_ratio` counter
// is (time per label) / (time per subject), the subject timed in the same process just before.
// The subjects are drawn once, outside the timed loop; make_label includes drawing the rater's
// parameters (panel_member), as every real label does.

#include <benchmark/benchmark.h>

#include <chrono>
#include <vector>

#include "corruptors/labeler.h"
#include "phantoms/allocation_tuning.h"
#include "phantoms/phantom.h"
#include "phantoms/scenario.h"

namespace {

constexpr std::uint64_t kSeed = 7;
constexpr int kSubjects = 32;

frugal::ScenarioOptions scenario() {
  frugal::ScenarioOptions options = frugal::default_scenario(frugal::Family::streaks);
  options.geometry.dims = 2;
  options.geometry.size_2d = {128, 128};
  options.streaks.count = {frugal::CountDistribution::Kind::fixed, 0.0, 0.0, 20};
  return options;
}

const std::vector<frugal::Subject>& subjects() {
  static const std::vector<frugal::Subject> drawn = [] {
    std::vector<frugal::Subject> result;
    for (int subject = 0; subject < kSubjects; ++subject)
      result.push_back(frugal::generate_subject(scenario(), kSeed, subject));
    return result;
  }();
  return drawn;
}

// Seconds per subject, timed once per process over enough subjects to be stable.
double seconds_per_subject() {
  static const double seconds = [] {
    const frugal::ScenarioOptions options = scenario();
    constexpr int kTimed = 200;
    const auto start = std::chrono::steady_clock::now();
    for (int subject = 0; subject < kTimed; ++subject) {
      frugal::Subject generated = frugal::generate_subject(options, kSeed, 1000 + subject);
      benchmark::DoNotOptimize(generated.image.data());
    }
    return std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count() / kTimed;
  }();
  return seconds;
}

void subject(benchmark::State& state) {
  frugal::keep_freed_image_memory();  // as the command line does
  const frugal::ScenarioOptions options = scenario();
  int index = 0;
  for (auto _ : state) {
    frugal::Subject generated = frugal::generate_subject(options, kSeed, index++);
    benchmark::DoNotOptimize(generated.image.data());
  }
  state.SetItemsProcessed(state.iterations());
}

void label(benchmark::State& state, frugal::LabelKind kind) {
  frugal::keep_freed_image_memory();
  const std::vector<frugal::Subject>& drawn = subjects();
  const double subject_seconds = seconds_per_subject();
  frugal::RaterOptions rater;
  rater.panel.raters = 3;
  rater.panel.spread = 0.2;
  frugal::LabelRequest request;
  request.kind = kind;
  std::size_t index = 0;
  const auto start = std::chrono::steady_clock::now();
  for (auto _ : state) {
    request.rater = static_cast<int>(index % 3);
    frugal::Label bought = frugal::make_label(drawn[index % drawn.size()], rater, request, kSeed);
    benchmark::DoNotOptimize(bought.value);
    benchmark::DoNotOptimize(bought.mask.data());
    ++index;
  }
  const double label_seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count() /
                               static_cast<double>(state.iterations());
  state.counters["subject_ratio"] = label_seconds / subject_seconds;
  state.SetItemsProcessed(state.iterations());
}

}  // namespace

BENCHMARK(subject)->Unit(benchmark::kMicrosecond);
BENCHMARK_CAPTURE(label, presence, frugal::LabelKind::presence)->Unit(benchmark::kMicrosecond);
BENCHMARK_CAPTURE(label, count, frugal::LabelKind::count)->Unit(benchmark::kMicrosecond);
BENCHMARK_CAPTURE(label, grade, frugal::LabelKind::grade)->Unit(benchmark::kMicrosecond);
BENCHMARK_CAPTURE(label, points, frugal::LabelKind::points)->Unit(benchmark::kMicrosecond);
BENCHMARK_CAPTURE(label, partial, frugal::LabelKind::partial_mask)->Unit(benchmark::kMicrosecond);
BENCHMARK_CAPTURE(label, outline, frugal::LabelKind::outline)->Unit(benchmark::kMicrosecond);
