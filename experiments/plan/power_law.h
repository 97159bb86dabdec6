#pragma once
// The inverse power law of a learning curve, err(h) = a·h^(−b) + c: error falls with annotator-hours
// h at rate b towards a floor c (Mukherjee et al. 2003; Figueroa et al. 2012, BMC Med Inform Decis
// Mak 12:8). Fitted by (weighted) nonlinear least squares with Eigen's Levenberg–Marquardt.

#include <string>
#include <vector>

namespace frugal::plan {

struct PowerLaw {
  double a = 0.0;
  double b = 0.0;
  double c = 0.0;
  double operator()(double hours) const;
  // Hours at which the curve reaches `error`: (a / (error − c))^(1/b); +inf when error ≤ c (the
  // floor is never crossed) or the curve does not fall (a ≤ 0 or b ≤ 0).
  double hours_to_reach(double error) const;
};

struct PowerLawFit {
  PowerLaw curve;
  bool converged = false;
  // The free optimum put the floor below 0, which no error can have: the fit was repeated with
  // c held at 0 (a two-parameter power law).
  bool floor_held_at_zero = false;
  double weighted_ssr = 0.0;  // Σ w·(y − f)² at the optimum
};

// Fits `y` against `x` (all x > 0, finite y; at least 3 points and 2 distinct x). `weights` are the
// w of Σ w·(y − f)² (1/σ² in curve_fit's terms); empty means unweighted. Several starts are tried —
// `start` (if given), then ones read off the data — and the lowest weighted SSR wins.
PowerLawFit fit_power_law(const std::vector<double>& x, const std::vector<double>& y,
                          const std::vector<double>& weights = {}, const PowerLaw* start = nullptr);

// Figueroa et al. (2012)'s weights: points measured at more annotation count more, w_i = x_i / Σx.
std::vector<double> figueroa_weights(const std::vector<double>& x);

}  // namespace frugal::plan
