// Time of the two mask labels and of the region growing under them, on default streaks subjects
// (2D 128x128 and 3D 64^3), one thread. The `subject_ratio` counter is (time per label) / (time
// to draw the subject), the subject timed in the same process. Subjects are drawn once, outside
// the timed loops; the rater is the default one (outlines: displacement, protrusions, holes and
// spurious blobs all on).

#include <benchmark/benchmark.h>

#include <chrono>
#include <cmath>
#include <vector>

#include "corruptors/outline.h"
#include "corruptors/region_grow.h"
#include "phantoms/allocation_tuning.h"
#include "phantoms/phantom.h"
#include "phantoms/scenario.h"

namespace {

constexpr std::uint64_t kSeed = 7;
constexpr int kSubjects = 8;

frugal::ScenarioOptions scenario(int dims) {
  frugal::ScenarioOptions options = frugal::default_scenario(frugal::Family::streaks);
  options.geometry.dims = dims;
  options.geometry.size_2d = {128, 128};
  options.geometry.size_3d = {64, 64, 64};
  return options;
}

const std::vector<frugal::Subject>& subjects(int dims) {
  static const std::vector<frugal::Subject> drawn[2] = {
      [] {
        std::vector<frugal::Subject> result;
        for (int s = 0; s < kSubjects; ++s) result.push_back(frugal::generate_subject(scenario(2), kSeed, s));
        return result;
      }(),
      [] {
        std::vector<frugal::Subject> result;
        for (int s = 0; s < kSubjects; ++s) result.push_back(frugal::generate_subject(scenario(3), kSeed, s));
        return result;
      }()};
  return drawn[dims - 2];
}

double seconds_per_subject(int dims) {
  static double seconds[2] = {0.0, 0.0};
  double& cached = seconds[dims - 2];
  if (cached == 0.0) {
    const frugal::ScenarioOptions options = scenario(dims);
    const int timed = dims == 2 ? 100 : 10;
    const auto start = std::chrono::steady_clock::now();
    for (int s = 0; s < timed; ++s) {
      frugal::Subject generated = frugal::generate_subject(options, kSeed, 1000 + s);
      benchmark::DoNotOptimize(generated.image.data());
    }
    cached = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count() / timed;
  }
  return cached;
}

// The voxel nearest the first lesion's centre, as a seed.
std::array<int, 3> lesion_seed(const frugal::Subject& subject) {
  const frugal::Geometry& g = subject.image.geometry();
  for (const frugal::ObjectRecord& o : subject.truth.objects) {
    if (o.kind != frugal::ObjectKind::lesion) continue;
    std::array<int, 3> voxel{};
    for (std::size_t axis = 0; axis < 3; ++axis)
      voxel[axis] = static_cast<int>(std::lround((o.centre_mm[axis] - g.origin_mm[axis]) / g.spacing_mm[axis]));
    if (g.shape.z == 1) voxel[2] = 0;
    return voxel;
  }
  return {g.shape.x / 2, g.shape.y / 2, g.shape.z / 2};
}

// One grown region at the default relative tolerance (0.15 of the seed value), face neighbours.
void flood_region(benchmark::State& state) {
  frugal::keep_freed_image_memory();
  const int dims = static_cast<int>(state.range(0));
  const std::vector<frugal::Subject>& drawn = subjects(dims);
  std::size_t index = 0;
  for (auto _ : state) {
    const frugal::Subject& subject = drawn[index++ % drawn.size()];
    const std::array<int, 3> seed = lesion_seed(subject);
    const double tolerance = 0.15 * std::abs(subject.image.at(seed[0], seed[1], seed[2]));
    frugal::LabelImage region = frugal::flood_region(subject.image, seed, tolerance, dims == 2 ? 4 : 6);
    benchmark::DoNotOptimize(region.data());
  }
  state.SetItemsProcessed(state.iterations());
}

template <frugal::Label (*make)(const frugal::Subject&, const frugal::RaterOptions&, frugal::RandomStream&)>
void mask_label(benchmark::State& state) {
  frugal::keep_freed_image_memory();
  const int dims = static_cast<int>(state.range(0));
  const std::vector<frugal::Subject>& drawn = subjects(dims);
  const double subject_seconds = seconds_per_subject(dims);
  const frugal::RaterOptions rater;
  std::uint64_t index = 0;
  const auto start = std::chrono::steady_clock::now();
  for (auto _ : state) {
    frugal::RandomStream random(kSeed, index, frugal::StreamPurpose::rater, 0);
    frugal::Label label = make(drawn[index % drawn.size()], rater, random);
    benchmark::DoNotOptimize(label.mask.data());
    ++index;
  }
  const double label_seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count() /
                               static_cast<double>(state.iterations());
  state.counters["subject_ratio"] = label_seconds / subject_seconds;
  state.SetItemsProcessed(state.iterations());
}

void partial_mask(benchmark::State& state) { mask_label<frugal::make_partial_mask>(state); }
void outline(benchmark::State& state) { mask_label<frugal::make_outline>(state); }

}  // namespace

BENCHMARK(flood_region)->ArgName("dims")->Arg(2)->Arg(3)->Unit(benchmark::kMicrosecond);
BENCHMARK(partial_mask)->ArgName("dims")->Arg(2)->Arg(3)->Unit(benchmark::kMicrosecond);
BENCHMARK(outline)->ArgName("dims")->Arg(2)->Arg(3)->Unit(benchmark::kMicrosecond);
