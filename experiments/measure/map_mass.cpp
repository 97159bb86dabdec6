#include "experiments/measure/map_mass.h"

#include <cmath>
#include <cstdint>
#include <limits>
#include <sstream>
#include <vector>

#include "phantoms/distance_transform.h"
#include "phantoms/subject.h"
#include "phantoms/user_error.h"

namespace frugal::measure {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

double ratio(double mass, double per) { return per > 0.0 ? mass / per : kNaN; }

// 1 within radius of a voxel labelled `code`, else 0.
std::vector<std::uint8_t> neighbourhood(const LabelImage& labels, std::uint8_t code, double radius_mm) {
  LabelImage features(labels.geometry(), 0);
  bool any = false;
  for (std::size_t i = 0; i < labels.size(); ++i)
    if (labels.data()[i] == code) features.data()[i] = 1, any = true;
  if (!any) return std::vector<std::uint8_t>(labels.size(), 0);
  const std::vector<double> squared = squared_distance_to_features_mm2(features);
  std::vector<std::uint8_t> near(labels.size(), 0);
  // A hair over the radius, so a voxel exactly radius_mm away counts on every platform.
  const double limit = radius_mm * radius_mm * (1.0 + 1e-9);
  for (std::size_t i = 0; i < squared.size(); ++i) near[i] = squared[i] <= limit ? 1 : 0;
  return near;
}

}  // namespace

std::string MapMassOptions::validate() const {
  if (!(radius_mm >= 0.0) || !std::isfinite(radius_mm)) {
    std::ostringstream message;
    message << "radius_mm = " << radius_mm << ": must be a finite distance >= 0";
    return message.str();
  }
  return "";
}

MapMass& MapMass::operator+=(const MapMass& other) {
  total += other.total;
  on_lesions += other.on_lesions;
  on_dots += other.on_dots;
  on_lines += other.on_lines;
  elsewhere += other.elsewhere;
  objects.lesions += other.objects.lesions;
  objects.dots += other.objects.dots;
  objects.lines += other.objects.lines;
  return *this;
}

double MapMass::per_lesion() const { return ratio(on_lesions, objects.lesions); }
double MapMass::per_dot() const { return ratio(on_dots, objects.dots); }
double MapMass::per_line() const { return ratio(on_lines, objects.lines); }
double MapMass::share_on_lesions() const { return total != 0.0 ? on_lesions / total : kNaN; }
double MapMass::share_elsewhere() const { return total != 0.0 ? elsewhere / total : kNaN; }

MapMass map_mass(const FloatImage& map, const LabelImage& truth_labels, const ObjectCounts& objects,
                 const MapMassOptions& options) {
  if (const std::string problem = options.validate(); !problem.empty()) throw UserError(problem);
  if (map.shape() != truth_labels.shape()) {
    const Shape& a = map.shape();
    const Shape& b = truth_labels.shape();
    std::ostringstream message;
    message << "map is " << a.x << "x" << a.y << "x" << a.z << " but the truth labels are " << b.x << "x" << b.y
            << "x" << b.z << "; map mass needs both on the same grid";
    throw UserError(message.str());
  }
  const std::vector<std::uint8_t> near_lesion = neighbourhood(truth_labels, kLesion, options.radius_mm);
  const std::vector<std::uint8_t> near_dot = neighbourhood(truth_labels, kDotDistractor, options.radius_mm);
  const std::vector<std::uint8_t> near_line = neighbourhood(truth_labels, kLineDistractor, options.radius_mm);
  MapMass mass;
  mass.objects = objects;
  for (std::size_t i = 0; i < map.size(); ++i) {
    const double value = map.data()[i];
    mass.total += value;
    if (near_lesion[i] != 0)
      mass.on_lesions += value;
    else if (near_dot[i] != 0)
      mass.on_dots += value;
    else if (near_line[i] != 0)
      mass.on_lines += value;
    else
      mass.elsewhere += value;
  }
  return mass;
}

}  // namespace frugal::measure
