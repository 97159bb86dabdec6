// Time to draw one subject (one thread). Targets: 2D 128x128 streaks with 20 lesions <= 0.5 ms,
// 2D 256x256 <= 2 ms, 3D 64^3 <= 10 ms; the same sizes for voids.

#include <benchmark/benchmark.h>

#include "phantoms/allocation_tuning.h"
#include "phantoms/phantom.h"
#include "phantoms/scenario.h"

namespace {

frugal::ScenarioOptions scenario(frugal::Family family, int dims, int size) {
  frugal::ScenarioOptions options = frugal::default_scenario(family);
  options.geometry.dims = dims;
  options.geometry.size_2d = {size, size};
  options.geometry.size_3d = {size, size, size};
  options.streaks.count = {frugal::CountDistribution::Kind::fixed, 0.0, 0.0, 20};
  return options;
}

void generate(benchmark::State& state, frugal::Family family, int dims) {
  frugal::keep_freed_image_memory();  // as the command line does
  const frugal::ScenarioOptions options = scenario(family, dims, static_cast<int>(state.range(0)));
  int subject = 0;
  for (auto _ : state) {
    frugal::Subject generated = frugal::generate_subject(options, 7, subject++);
    benchmark::DoNotOptimize(generated.image.data());
  }
  state.SetItemsProcessed(state.iterations());
}

// The anatomy options: physical scale with spacing chosen so the field of view holds the adult
// head (1.4 mm at 128) or chest (2.6 mm at 128); periventricular radial lesions and tube
// look-alikes (streaks); a five-generation vessel and airway tree (voids).
void generate_anatomy(benchmark::State& state, frugal::Family family, int dims) {
  frugal::keep_freed_image_memory();
  const int size = static_cast<int>(state.range(0));
  frugal::ScenarioOptions options = scenario(family, dims, size);
  const double spacing = (family == frugal::Family::streaks ? 1.4 : 2.6) * 128.0 / size;
  options.geometry.spacing_mm = {spacing, spacing, spacing};
  options.geometry.anatomy_scale = frugal::AnatomyScale::physical;
  options.streaks.placement.density = frugal::LesionDensity::periventricular;
  options.streaks.placement.orientation = frugal::LesionOrientation::radial;
  options.streaks.line_shape = frugal::LineShape::tube;
  options.voids.tree.generations = 5;
  options.voids.tree.trunk_length_mm = 40.0;
  int subject = 0;
  for (auto _ : state) {
    frugal::Subject generated = frugal::generate_subject(options, 7, subject++);
    benchmark::DoNotOptimize(generated.image.data());
  }
  state.SetItemsProcessed(state.iterations());
}

void streaks_2d(benchmark::State& state) { generate(state, frugal::Family::streaks, 2); }
void streaks_anatomy_2d(benchmark::State& state) { generate_anatomy(state, frugal::Family::streaks, 2); }
void streaks_anatomy_3d(benchmark::State& state) { generate_anatomy(state, frugal::Family::streaks, 3); }
void voids_tree_2d(benchmark::State& state) { generate_anatomy(state, frugal::Family::voids, 2); }
void voids_tree_3d(benchmark::State& state) { generate_anatomy(state, frugal::Family::voids, 3); }
void streaks_3d(benchmark::State& state) { generate(state, frugal::Family::streaks, 3); }
void voids_2d(benchmark::State& state) { generate(state, frugal::Family::voids, 2); }
void voids_3d(benchmark::State& state) { generate(state, frugal::Family::voids, 3); }

}  // namespace

BENCHMARK(streaks_2d)->Arg(128)->Arg(256)->Unit(benchmark::kMillisecond);
BENCHMARK(streaks_3d)->Arg(64)->Unit(benchmark::kMillisecond);
BENCHMARK(voids_2d)->Arg(128)->Arg(256)->Unit(benchmark::kMillisecond);
BENCHMARK(voids_3d)->Arg(64)->Unit(benchmark::kMillisecond);
BENCHMARK(streaks_anatomy_2d)->Arg(128)->Arg(256)->Unit(benchmark::kMillisecond);
BENCHMARK(streaks_anatomy_3d)->Arg(64)->Unit(benchmark::kMillisecond);
BENCHMARK(voids_tree_2d)->Arg(128)->Arg(256)->Unit(benchmark::kMillisecond);
BENCHMARK(voids_tree_3d)->Arg(64)->Unit(benchmark::kMillisecond);
