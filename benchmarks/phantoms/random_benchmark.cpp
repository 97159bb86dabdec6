// Throughput of the project's own sampling, which sets the floor for noise generation.

#include <benchmark/benchmark.h>

#include "phantoms/random.h"

namespace {

void normal_pairs(benchmark::State& state) {
  frugal::RandomStream random(1, 2, frugal::StreamPurpose::noise);
  float a = 0, b = 0, sum = 0;
  for (auto _ : state) {
    random.normal_pair(a, b);
    sum += a + b;
  }
  benchmark::DoNotOptimize(sum);
  state.SetItemsProcessed(2 * state.iterations());
}

void poisson(benchmark::State& state) {
  frugal::RandomStream random(1, 2, frugal::StreamPurpose::lesions);
  std::int64_t sum = 0;
  for (auto _ : state) sum += random.poisson(static_cast<double>(state.range(0)));
  benchmark::DoNotOptimize(sum);
}

}  // namespace

BENCHMARK(normal_pairs);
BENCHMARK(poisson)->Arg(5)->Arg(50);
