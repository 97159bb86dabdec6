// What a cell spends outside training: drawing the pool and test subjects, and buying labels
// along the purchase order, on the demo study's small scenario (64 x 64 slices). Quote medians
// of --benchmark_repetitions; the whole-cell split is in every stored cell's seconds_* columns.

#include <benchmark/benchmark.h>

#include <string>

#include "corruptors/rater_yaml.h"
#include "experiments/study/cell_runner.h"
#include "phantoms/scenario_yaml.h"

namespace frugal::study {
namespace {

const std::string kSource = FRUGAL_SOURCE_DIR;

void BM_PurchaseOrder(benchmark::State& state) {
  for (auto _ : state) benchmark::DoNotOptimize(purchase_order(2026, 0, static_cast<int>(state.range(0))));
  state.SetItemsProcessed(state.iterations() * state.range(0));
}
BENCHMARK(BM_PurchaseOrder)->Arg(2000)->Arg(100000);

// Subjects drawn into a fresh cache, on one or two threads.
void BM_DrawSubjects(benchmark::State& state) {
  const ScenarioOptions scenario = read_scenario_file(kSource + "/scenarios/ageing-cohort-streaks-small.yaml");
  const SubjectSource source(scenario, 2026);
  std::vector<int> indices;
  for (int i = 0; i < 256; ++i) indices.push_back(i);
  for (auto _ : state) {
    CohortCache cache;
    cache.prefetch(source, indices, 0, static_cast<int>(state.range(0)));
  }
  state.SetItemsProcessed(state.iterations() * 256);
}
BENCHMARK(BM_DrawSubjects)->Arg(1)->Arg(2)->UseRealTime()->Unit(benchmark::kMillisecond);

// Labels of one kind for subjects already drawn (count and outline, one rater each).
void BM_BuyLabels(benchmark::State& state) {
  const ScenarioOptions scenario = read_scenario_file(kSource + "/scenarios/ageing-cohort-streaks-small.yaml");
  const SubjectSource source(scenario, 2026);
  LabelPlan plan;
  plan.kind = state.range(0) == 0 ? LabelKind::count : LabelKind::outline;
  plan.rater = read_rater_file(kSource + (state.range(0) == 0 ? "/raters/quick-reader.yaml" : "/raters/careful-reader.yaml"));
  plan.raters_per_image = 1;
  const LabelSource labels(plan, source);
  std::vector<int> indices;
  for (int i = 0; i < 128; ++i) indices.push_back(i);
  CohortCache subjects;
  subjects.prefetch(source, indices, 0, 2);
  for (auto _ : state) {
    state.PauseTiming();
    CohortCache cache = subjects;  // the same subjects, no labels yet
    state.ResumeTiming();
    cache.prefetch_labels(labels, indices, 2);
  }
  state.SetItemsProcessed(state.iterations() * 128);
  state.SetLabel(state.range(0) == 0 ? "count" : "outline");
}
BENCHMARK(BM_BuyLabels)->Arg(0)->Arg(1)->UseRealTime()->Unit(benchmark::kMillisecond);

}  // namespace
}  // namespace frugal::study
