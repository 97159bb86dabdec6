// Times the Hessian line filter (three scales, automatic c) and the count baseline on smooth
// random images: 2D 128^2 and 3D 64^3, 1 mm voxels.
#include <benchmark/benchmark.h>

#include "experiments/baselines/line_filter.h"
#include "phantoms/image_ops.h"
#include "phantoms/random.h"

namespace frugal::baselines {
namespace {

FloatImage smooth_random(const Shape& shape) {
  FloatImage image(centred_geometry(shape, {1.0, 1.0, 1.0}));
  RandomStream random(42);
  for (float& v : image.voxels()) v = static_cast<float>(random.uniform());
  gaussian_filter(image, {1.5, 1.5, 1.5});
  return image;
}

Shape shape_for(int dims) { return dims == 2 ? Shape{128, 128, 1} : Shape{64, 64, 64}; }

void BM_LineFilter(benchmark::State& state) {
  const FloatImage image = smooth_random(shape_for(static_cast<int>(state.range(0))));
  LineFilterOptions options;  // sigmas 1, 1.5, 2 mm
  for (auto _ : state) benchmark::DoNotOptimize(line_filter(image, options).response.data());
  state.SetItemsProcessed(state.iterations() * static_cast<std::int64_t>(image.size()));
}
BENCHMARK(BM_LineFilter)->Arg(2)->Arg(3)->ArgName("dims")->Unit(benchmark::kMillisecond);

void BM_CountLines(benchmark::State& state) {
  const FloatImage image = smooth_random(shape_for(static_cast<int>(state.range(0))));
  for (auto _ : state) benchmark::DoNotOptimize(count_lines(image).count);
  state.SetItemsProcessed(state.iterations() * static_cast<std::int64_t>(image.size()));
}
BENCHMARK(BM_CountLines)->Arg(2)->Arg(3)->ArgName("dims")->Unit(benchmark::kMillisecond);

}  // namespace
}  // namespace frugal::baselines
