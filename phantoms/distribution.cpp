#include "phantoms/distribution.h"

#include <algorithm>
#include <cmath>
#include <sstream>

namespace frugal {

Distribution Distribution::fixed_at(double v) {
  Distribution d;
  d.kind = Kind::fixed;
  d.value = v;
  return d;
}

Distribution Distribution::uniform_between(double low, double high) {
  Distribution d;
  d.kind = Kind::uniform;
  d.min = low;
  d.max = high;
  return d;
}

double Distribution::sample(RandomStream& random) const {
  switch (kind) {
    case Kind::fixed:
      return value;
    case Kind::uniform:
      return random.uniform(min, max);
    case Kind::normal:
    case Kind::lognormal: {
      // validate() guarantees at least ~1% of the mass lies inside [min, max].
      for (int attempt = 0; attempt < 10000; ++attempt) {
        const double draw = kind == Kind::normal ? random.normal(mean, sd) : random.lognormal(median, sigma);
        if (draw >= min && draw <= max) return draw;
      }
      return std::clamp(kind == Kind::normal ? mean : median, min, max);
    }
  }
  return value;
}

double Distribution::expected() const {
  switch (kind) {
    case Kind::fixed: return value;
    case Kind::uniform: return 0.5 * (min + max);
    case Kind::normal: return mean;
    case Kind::lognormal: return median * std::exp(0.5 * sigma * sigma);
  }
  return value;
}

double Distribution::spread() const {
  switch (kind) {
    case Kind::fixed: return 0.0;
    case Kind::uniform: return (max - min) / std::sqrt(12.0);
    case Kind::normal: return sd;
    case Kind::lognormal: {
      const double s2 = sigma * sigma;
      return median * std::sqrt((std::exp(s2) - 1.0) * std::exp(s2));
    }
  }
  return 0.0;
}

namespace {
double normal_cdf(double z) { return 0.5 * std::erfc(-z / std::sqrt(2.0)); }
}  // namespace

std::string Distribution::validate(const std::string& where, double allowed_min, double allowed_max) const {
  std::ostringstream error;
  const auto in_range = [&](double v) { return std::isfinite(v) && v >= allowed_min && v <= allowed_max; };
  const auto range_text = [&] {
    std::ostringstream text;
    text << "[" << allowed_min << ", " << allowed_max << "]";
    return text.str();
  };
  switch (kind) {
    case Kind::fixed:
      if (!in_range(value)) error << where << ".value is " << value << "; allowed " << range_text();
      break;
    case Kind::uniform:
      if (!in_range(min) || !in_range(max) || min > max)
        error << where << ": uniform needs " << allowed_min << " <= min <= max <= " << allowed_max << " (got min "
              << min << ", max " << max << ")";
      break;
    case Kind::normal:
    case Kind::lognormal: {
      if (!in_range(min) || !in_range(max) || min > max) {
        error << where << ": truncation bounds need " << allowed_min << " <= min <= max <= " << allowed_max
              << " (got min " << min << ", max " << max << ")";
        break;
      }
      double inside = 0.0;
      if (kind == Kind::normal) {
        if (!(sd > 0.0) || !std::isfinite(mean)) {
          error << where << ": normal needs a finite mean and sd > 0";
          break;
        }
        inside = normal_cdf((max - mean) / sd) - normal_cdf((min - mean) / sd);
      } else {
        if (!(median > 0.0) || !(sigma > 0.0)) {
          error << where << ": lognormal needs median > 0 and sigma > 0";
          break;
        }
        const double low = min > 0.0 ? (std::log(min) - std::log(median)) / sigma : -INFINITY;
        inside = normal_cdf((std::log(max) - std::log(median)) / sigma) - normal_cdf(low);
      }
      if (inside < 0.01)
        error << where << ": less than 1% of the distribution lies within [min, max]; widen the bounds";
      break;
    }
  }
  return error.str();
}

int CountDistribution::sample(RandomStream& random) const {
  switch (kind) {
    case Kind::fixed: return value;
    case Kind::poisson: return static_cast<int>(random.poisson(mean));
    case Kind::negative_binomial: return static_cast<int>(random.negative_binomial(mean, dispersion));
    case Kind::uniform: return static_cast<int>(random.uniform_int(min, max));
  }
  return value;
}

double CountDistribution::expected() const {
  switch (kind) {
    case Kind::fixed: return value;
    case Kind::poisson:
    case Kind::negative_binomial: return mean;
    case Kind::uniform: return 0.5 * (min + max);
  }
  return value;
}

double CountDistribution::spread() const {
  switch (kind) {
    case Kind::fixed: return 0.0;
    case Kind::poisson: return std::sqrt(mean);
    case Kind::negative_binomial: return std::sqrt(mean + mean * mean / dispersion);
    case Kind::uniform: {
      const double width = max - min + 1.0;
      return std::sqrt((width * width - 1.0) / 12.0);
    }
  }
  return 0.0;
}

std::string CountDistribution::validate(const std::string& where, int allowed_max) const {
  std::ostringstream error;
  switch (kind) {
    case Kind::fixed:
      if (value < 0 || value > allowed_max) error << where << ".value is " << value << "; allowed 0.." << allowed_max;
      break;
    case Kind::poisson:
    case Kind::negative_binomial:
      if (!(mean >= 0.0) || mean > allowed_max || mean > 500.0)
        error << where << ".mean is " << mean << "; allowed 0.." << std::min(allowed_max, 500);
      else if (kind == Kind::negative_binomial && !(dispersion > 0.0))
        error << where << ".dispersion is " << dispersion << "; allowed > 0 (variance = mean + mean^2/dispersion)";
      break;
    case Kind::uniform:
      if (min < 0 || max < min || max > allowed_max)
        error << where << ": uniform needs 0 <= min <= max <= " << allowed_max << " (got " << min << ", " << max << ")";
      break;
  }
  return error.str();
}

std::string to_string(Distribution::Kind kind) {
  switch (kind) {
    case Distribution::Kind::fixed: return "fixed";
    case Distribution::Kind::uniform: return "uniform";
    case Distribution::Kind::normal: return "normal";
    case Distribution::Kind::lognormal: return "lognormal";
  }
  return "fixed";
}

std::string to_string(CountDistribution::Kind kind) {
  switch (kind) {
    case CountDistribution::Kind::fixed: return "fixed";
    case CountDistribution::Kind::poisson: return "poisson";
    case CountDistribution::Kind::negative_binomial: return "negative_binomial";
    case CountDistribution::Kind::uniform: return "uniform";
  }
  return "fixed";
}

}  // namespace frugal
