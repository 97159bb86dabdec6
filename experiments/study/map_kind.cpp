#include "experiments/study/map_kind.h"

namespace frugal::study {

scoring::MapKind map_kind_of(learn::Strategy strategy) {
  if (!learn::is_map_strategy(strategy) && !learn::is_classical(strategy)) return scoring::MapKind::none;
  if (strategy == learn::Strategy::count_map) return scoring::MapKind::density;
  if (strategy == learn::Strategy::line_filter) return scoring::MapKind::response;
  return scoring::MapKind::probability;
}

bool map_is_probability(learn::Strategy strategy) { return map_kind_of(strategy) == scoring::MapKind::probability; }

}  // namespace frugal::study
