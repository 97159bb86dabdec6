#include "experiments/plan/power_law.h"

#include <Eigen/Core>
#include <algorithm>
#include <cmath>
#include <limits>
#include <unsupported/Eigen/NonLinearOptimization>

#include "phantoms/image.h"  // FRUGAL_CHECK

namespace frugal::plan {
namespace {

constexpr double kInfinity = std::numeric_limits<double>::infinity();

// Residuals r_i = √w_i (y_i − a x_i^−b − c) over the free parameters: (a, b, c), or (a, b) with c = 0.
struct Residuals {
  using Scalar = double;
  using InputType = Eigen::VectorXd;
  using ValueType = Eigen::VectorXd;
  using JacobianType = Eigen::MatrixXd;
  enum { InputsAtCompileTime = Eigen::Dynamic, ValuesAtCompileTime = Eigen::Dynamic };

  const std::vector<double>& x;
  const std::vector<double>& y;
  std::vector<double> root_weight;
  bool free_floor;

  int inputs() const { return free_floor ? 3 : 2; }
  int values() const { return static_cast<int>(x.size()); }

  int operator()(const Eigen::VectorXd& p, Eigen::VectorXd& r) const {
    const double c = free_floor ? p[2] : 0.0;
    for (std::size_t i = 0; i < x.size(); ++i)
      r[static_cast<Eigen::Index>(i)] = root_weight[i] * (y[i] - p[0] * std::pow(x[i], -p[1]) - c);
    return 0;
  }
  int df(const Eigen::VectorXd& p, Eigen::MatrixXd& jacobian) const {
    for (std::size_t i = 0; i < x.size(); ++i) {
      const auto row = static_cast<Eigen::Index>(i);
      const double power = std::pow(x[i], -p[1]);
      jacobian(row, 0) = -root_weight[i] * power;
      jacobian(row, 1) = root_weight[i] * p[0] * std::log(x[i]) * power;
      if (free_floor) jacobian(row, 2) = -root_weight[i];
    }
    return 0;
  }
};

double weighted_ssr(const PowerLaw& curve, const std::vector<double>& x, const std::vector<double>& y,
                    const std::vector<double>& weights) {
  double sum = 0.0;
  for (std::size_t i = 0; i < x.size(); ++i) {
    const double residual = y[i] - curve(x[i]);
    sum += weights[i] * residual * residual;
  }
  return sum;
}

PowerLawFit fit_from(const PowerLaw& start, bool free_floor, const std::vector<double>& x,
                     const std::vector<double>& y, const std::vector<double>& weights) {
  Residuals residuals{x, y, {}, free_floor};
  for (double w : weights) residuals.root_weight.push_back(std::sqrt(w));
  Eigen::VectorXd p(free_floor ? 3 : 2);
  p[0] = start.a;
  p[1] = start.b;
  if (free_floor) p[2] = start.c;
  Eigen::LevenbergMarquardt<Residuals> solver(residuals);
  solver.parameters.maxfev = 4000;
  solver.parameters.xtol = 1e-14;
  solver.parameters.ftol = 1e-14;
  const Eigen::LevenbergMarquardtSpace::Status status = solver.minimize(p);
  PowerLawFit fit;
  fit.curve = {p[0], p[1], free_floor ? p[2] : 0.0};
  fit.converged = std::isfinite(p[0]) && std::isfinite(p[1]) && std::isfinite(fit.curve.c) &&
                  (status == Eigen::LevenbergMarquardtSpace::RelativeReductionTooSmall ||
                   status == Eigen::LevenbergMarquardtSpace::RelativeErrorTooSmall ||
                   status == Eigen::LevenbergMarquardtSpace::RelativeErrorAndReductionTooSmall ||
                   status == Eigen::LevenbergMarquardtSpace::CosinusTooSmall ||
                   status == Eigen::LevenbergMarquardtSpace::FtolTooSmall ||
                   status == Eigen::LevenbergMarquardtSpace::XtolTooSmall ||
                   status == Eigen::LevenbergMarquardtSpace::GtolTooSmall);
  fit.weighted_ssr = fit.converged ? weighted_ssr(fit.curve, x, y, weights) : kInfinity;
  return fit;
}

// Starts read off the data: the floor at 0 and at half the smallest y, the rate from the log-log
// slope between the smallest and the largest x, and three rates around it.
std::vector<PowerLaw> data_starts(const std::vector<double>& x, const std::vector<double>& y) {
  const auto [low, high] = std::minmax_element(x.begin(), x.end());
  const double y_low = y[static_cast<std::size_t>(low - x.begin())];
  const double y_high = y[static_cast<std::size_t>(high - x.begin())];
  const double y_min = *std::min_element(y.begin(), y.end());
  std::vector<PowerLaw> starts;
  for (double floor : {0.0, 0.5 * y_min}) {
    double rate = 0.5;
    if (y_low - floor > 0.0 && y_high - floor > 0.0 && y_low != y_high)
      rate = std::clamp(std::log((y_low - floor) / (y_high - floor)) / std::log(*high / *low), 0.05, 3.0);
    for (double b : {rate, 0.3, 1.0}) {
      const double a = std::max(y_low - floor, 1e-6) * std::pow(*low, b);
      starts.push_back({a, b, floor});
    }
  }
  return starts;
}

}  // namespace

double PowerLaw::operator()(double hours) const { return a * std::pow(hours, -b) + c; }

double PowerLaw::hours_to_reach(double error) const {
  if (!(a > 0.0) || !(b > 0.0) || !(error > c)) return kInfinity;
  return std::pow(a / (error - c), 1.0 / b);
}

std::vector<double> figueroa_weights(const std::vector<double>& x) {
  double total = 0.0;
  for (double v : x) total += v;
  std::vector<double> weights;
  for (double v : x) weights.push_back(v / total);
  return weights;
}

PowerLawFit fit_power_law(const std::vector<double>& x, const std::vector<double>& y,
                          const std::vector<double>& weights, const PowerLaw* start) {
  FRUGAL_CHECK(x.size() == y.size() && x.size() >= 3);
  FRUGAL_CHECK(weights.empty() || weights.size() == x.size());
  for (std::size_t i = 0; i < x.size(); ++i) FRUGAL_CHECK(x[i] > 0.0 && std::isfinite(x[i]) && std::isfinite(y[i]));
  FRUGAL_CHECK(*std::min_element(x.begin(), x.end()) < *std::max_element(x.begin(), x.end()));
  const std::vector<double> w = weights.empty() ? std::vector<double>(x.size(), 1.0) : weights;

  std::vector<PowerLaw> starts;
  if (start) starts.push_back(*start);
  for (const PowerLaw& s : data_starts(x, y)) starts.push_back(s);

  PowerLawFit best;
  best.weighted_ssr = kInfinity;
  for (const PowerLaw& s : starts) {
    PowerLawFit fit = fit_from(s, true, x, y, w);
    if (fit.converged && fit.weighted_ssr < best.weighted_ssr) best = fit;
  }
  if (best.converged && best.curve.c >= 0.0) return best;
  // No error can lie below 0: hold the floor there and fit a and b alone.
  PowerLawFit held;
  held.weighted_ssr = kInfinity;
  for (const PowerLaw& s : starts) {
    PowerLawFit fit = fit_from({s.a, s.b, 0.0}, false, x, y, w);
    if (fit.converged && fit.weighted_ssr < held.weighted_ssr) held = fit;
  }
  held.floor_held_at_zero = true;
  return held;
}

}  // namespace frugal::plan
