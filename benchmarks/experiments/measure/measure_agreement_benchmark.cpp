// Agreement statistics on a large table: 10,000 subjects x 5 raters on a 0-4 grade scale.

#include <benchmark/benchmark.h>

#include <algorithm>
#include <random>

#include "experiments/measure/icc.h"
#include "experiments/measure/kappa.h"

namespace {

constexpr int kSubjects = 10000;
constexpr int kRaters = 5;

// Each rater sees the subject's true grade with an occasional one-grade slip; fixed seed.
Eigen::MatrixXd grades() {
  std::mt19937 generator(12345);
  std::uniform_int_distribution<int> truth(0, 4);
  std::uniform_int_distribution<int> slip(-1, 1);
  Eigen::MatrixXd ratings(kSubjects, kRaters);
  for (int s = 0; s < kSubjects; ++s) {
    const int grade = truth(generator);
    for (int r = 0; r < kRaters; ++r) ratings(s, r) = std::clamp(grade + slip(generator), 0, 4);
  }
  return ratings;
}

const std::vector<double> kCategories{0, 1, 2, 3, 4};

void BM_IntraclassCorrelation(benchmark::State& state) {
  const Eigen::MatrixXd ratings = grades();
  for (auto _ : state) benchmark::DoNotOptimize(frugal::measure::intraclass_correlation(ratings));
}
BENCHMARK(BM_IntraclassCorrelation)->Unit(benchmark::kMicrosecond);

void BM_WeightedCohenKappa(benchmark::State& state) {
  const Eigen::MatrixXd ratings = grades();
  const std::vector<double> a(ratings.col(0).data(), ratings.col(0).data() + kSubjects);
  const std::vector<double> b(ratings.col(1).data(), ratings.col(1).data() + kSubjects);
  frugal::measure::CohenKappaOptions options;
  options.weights = frugal::measure::KappaWeights::quadratic;
  for (auto _ : state) benchmark::DoNotOptimize(frugal::measure::cohen_kappa(a, b, kCategories, options));
}
BENCHMARK(BM_WeightedCohenKappa)->Unit(benchmark::kMicrosecond);

void BM_FleissKappa(benchmark::State& state) {
  const Eigen::MatrixXd ratings = grades();
  for (auto _ : state) benchmark::DoNotOptimize(frugal::measure::fleiss_kappa(ratings, kCategories));
}
BENCHMARK(BM_FleissKappa)->Unit(benchmark::kMicrosecond);

}  // namespace
