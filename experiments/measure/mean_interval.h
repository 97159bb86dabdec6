#pragma once
// The mean of a handful of values (repeats of a study cell) and its two-sided Student-t interval.

#include <vector>

namespace frugal::measure {

// Mean and interval of `values` at `confidence` (Student 1908): mean ± t_{(1+c)/2, n−1}·s/√n.
// Bounds are NaN with fewer than 2 values; everything is NaN with none.
void mean_interval(const std::vector<double>& values, double confidence, double& mean, double& lower, double& upper);

}  // namespace frugal::measure
