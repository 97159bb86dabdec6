#pragma once
// Parameter distributions that scenarios draw from: continuous (lesion length, contrast, affected
// fraction) and counts (lesions per subject).

#include <cstdint>
#include <string>

#include "phantoms/random.h"

namespace frugal {

struct Distribution {
  enum class Kind { fixed, uniform, normal, lognormal };
  Kind kind = Kind::fixed;
  double value = 0.0;               // fixed
  double min = 0.0, max = 0.0;      // uniform bounds; truncation bounds of normal and lognormal
  double mean = 0.0, sd = 0.0;      // normal
  double median = 0.0, sigma = 0.0; // lognormal (sigma of the log)

  static Distribution fixed_at(double v);
  static Distribution uniform_between(double low, double high);
  // Truncated draws use rejection with a bounded number of tries; validate() keeps the
  // truncation interval wide enough for that to succeed.
  double sample(RandomStream& random) const;
  // Mean and standard deviation ignoring truncation (used to standardise confounders).
  double expected() const;
  double spread() const;
  // Empty when valid; otherwise what is wrong, with `where` and what is allowed.
  std::string validate(const std::string& where, double allowed_min, double allowed_max) const;
};

struct CountDistribution {
  enum class Kind { fixed, poisson, negative_binomial, uniform };
  Kind kind = Kind::poisson;
  double mean = 5.0;        // poisson, negative_binomial
  double dispersion = 2.0;  // negative_binomial: variance = mean + mean^2 / dispersion
  int value = 0;            // fixed
  int min = 0, max = 0;     // uniform (inclusive)

  int sample(RandomStream& random) const;
  double expected() const;
  double spread() const;
  std::string validate(const std::string& where, int allowed_max) const;
};

std::string to_string(Distribution::Kind kind);
std::string to_string(CountDistribution::Kind kind);

}  // namespace frugal
