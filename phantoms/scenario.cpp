#include "phantoms/scenario.h"

#include <cmath>
#include <cstdio>
#include <sstream>

#include "phantoms/text_format.h"

namespace frugal {

namespace {

constexpr int kMinSize = 16;
constexpr int kMaxSize = 1024;
constexpr int kMaxObjects = 2000;

std::string check_count(const CountDistribution& distribution, const std::string& where) {
  return distribution.validate(where, kMaxObjects);
}

std::string validate_geometry(const GeometryOptions& geometry) {
  std::ostringstream error;
  if (geometry.dims != 2 && geometry.dims != 3) {
    error << "geometry.dims is " << geometry.dims << "; allowed 2 or 3";
    return error.str();
  }
  for (int size : geometry.size_2d)
    if (size < kMinSize || size > kMaxSize)
      return "geometry.size_2d entry " + format_number(size) + " is out of range; allowed " +
             format_number(kMinSize) + ".." + format_number(kMaxSize);
  for (int size : geometry.size_3d)
    if (size < kMinSize || size > kMaxSize / 2)
      return "geometry.size_3d entry " + format_number(size) + " is out of range; allowed " +
             format_number(kMinSize) + ".." + format_number(kMaxSize / 2);
  for (double spacing : geometry.spacing_mm)
    if (!(spacing >= 0.05 && spacing <= 20.0)) {
      error << "geometry.spacing_mm entry " << spacing << " is out of range; allowed 0.05..20 mm";
      return error.str();
    }
  if (geometry.reference_slice < -1 || geometry.reference_slice >= geometry.size_3d[2])
    return "geometry.reference_slice is " + format_number(geometry.reference_slice) +
           "; allowed -1 (middle) or 0.." + format_number(geometry.size_3d[2] - 1);
  for (double size : geometry.anatomy_size_mm)
    if (!(size >= 10.0 && size <= 1000.0))
      return "geometry.anatomy_size_mm entry " + format_number(size) + " is out of range; allowed 10..1000 mm";
  return {};
}

std::string validate_streaks(const StreaksOptions& s, int dims) {
  std::string error;
  const auto first = [&](const std::string& message) {
    if (error.empty()) error = message;
  };
  first(check_count(s.count, "streaks.count"));
  first(s.length_mm.validate("streaks.length_mm", 0.5, 200.0));
  first(s.width_mm.validate("streaks.width_mm", 0.2, 50.0));
  first(s.contrast.validate("streaks.contrast", -1.0, 10.0));
  first(check_count(s.dots, "streaks.dots"));
  first(s.dot_diameter_mm.validate("streaks.dot_diameter_mm", 0.2, 50.0));
  first(s.dot_contrast.validate("streaks.dot_contrast", -1.0, 10.0));
  first(check_count(s.lines, "streaks.lines"));
  first(s.line_length_mm.validate("streaks.line_length_mm", 1.0, 500.0));
  first(s.line_width_mm.validate("streaks.line_width_mm", 0.1, 20.0));
  first(s.line_contrast.validate("streaks.line_contrast", -1.0, 10.0));
  if (!error.empty()) return error;
  if (!(s.min_separation_mm >= 0.0 && s.min_separation_mm <= 50.0))
    return "streaks.min_separation_mm is " + format_number(s.min_separation_mm) + "; allowed 0..50 mm";
  if (!(s.clustering.fraction >= 0.0 && s.clustering.fraction <= 1.0))
    return "streaks.clustering.fraction is " + format_number(s.clustering.fraction) + "; allowed 0..1";
  if (!(s.clustering.radius_mm > 0.0 && s.clustering.radius_mm <= 500.0))
    return "streaks.clustering.radius_mm is " + format_number(s.clustering.radius_mm) + "; allowed (0, 500] mm";
  const auto& axis = s.orientation.axis;
  if (!s.orientation.isotropic && !(std::hypot(axis[0], axis[1], axis[2]) > 1e-9))
    return "streaks.orientation.axis must be a non-zero vector";
  if (!s.orientation.isotropic && dims == 2 && !(std::hypot(axis[0], axis[1]) > 1e-9))
    return "streaks.orientation.axis has no in-plane (x, y) part, which a 2D scenario needs";
  if (!(s.orientation.spread_deg >= 0.0 && s.orientation.spread_deg <= 180.0))
    return "streaks.orientation.spread_deg is " + format_number(s.orientation.spread_deg) + "; allowed 0..180";
  if (!(s.line_bend_deg >= 0.0 && s.line_bend_deg <= 90.0))
    return "streaks.line_bend_deg is " + format_number(s.line_bend_deg) + "; allowed 0..90";
  if (!(s.line_taper >= 0.1 && s.line_taper <= 1.0))
    return "streaks.line_taper is " + format_number(s.line_taper) + "; allowed 0.1..1 (end width / start width)";
  if (!(s.placement.decay_mm >= 0.5 && s.placement.decay_mm <= 100.0))
    return "streaks.placement.decay_mm is " + format_number(s.placement.decay_mm) + "; allowed 0.5..100 mm";
  if (!(s.placement.radial_spread_deg >= 0.0 && s.placement.radial_spread_deg <= 90.0))
    return "streaks.placement.radial_spread_deg is " + format_number(s.placement.radial_spread_deg) + "; allowed 0..90";
  if (s.placement.orientation == LesionOrientation::radial && !s.orientation.isotropic)
    return "streaks.placement.orientation is radial, which sets every lesion's direction; "
           "streaks.orientation.isotropic must then stay true";
  for (double intensity : {s.white_matter, s.grey_matter, s.csf})
    if (!(intensity >= 0.0 && intensity <= 100.0))
      return "streaks.tissue intensities must lie in 0..100 (white_matter, grey_matter, csf)";
  return {};
}

std::string validate_tree(const TreeOptions& t) {
  const auto range = [](const char* key, double value, double low, double high, const char* unit) {
    if (value >= low && value <= high) return std::string();
    return std::string("voids.tree.") + key + " is " + format_number(value) + "; allowed " + format_number(low) + ".." +
           format_number(high) + unit;
  };
  for (const std::string& error :
       {range("generations", t.generations, 0, 8, ""), range("vessel_trunks", t.vessel_trunks, 0, 12, ""),
        range("airway_trunks", t.airway_trunks, 0, 12, ""), range("trunk_length_mm", t.trunk_length_mm, 2, 300, " mm"),
        range("vessel_radius_mm", t.vessel_radius_mm, 0.1, 15, " mm"),
        range("airway_radius_mm", t.airway_radius_mm, 0.1, 15, " mm"),
        range("airway_wall_fraction", t.airway_wall_fraction, 0.05, 0.9, ""),
        range("min_radius_mm", t.min_radius_mm, 0.05, 10, " mm"), range("bend_deg", t.bend_deg, 0, 90, ""),
        range("vessel_hu", t.vessel_hu, -500, 3000, " HU")})
    if (!error.empty()) return error;
  return {};
}

std::string validate_voids(const VoidsOptions& v) {
  if (!(v.parenchyma_hu > -1000.0 && v.parenchyma_hu < 0.0))
    return "voids.parenchyma_hu is " + format_number(v.parenchyma_hu) + "; allowed -1000 < value < 0 HU";
  if (!(v.texture_sd_hu >= 0.0 && v.texture_sd_hu <= 300.0))
    return "voids.texture_sd_hu is " + format_number(v.texture_sd_hu) + "; allowed 0..300 HU";
  if (!(v.texture_scale_mm > 0.0 && v.texture_scale_mm <= 100.0))
    return "voids.texture_scale_mm is " + format_number(v.texture_scale_mm) + "; allowed (0, 100] mm";
  if (!(v.body_hu >= -200.0 && v.body_hu <= 3000.0))
    return "voids.body_hu is " + format_number(v.body_hu) + "; allowed -200..3000 HU";
  if (!(v.threshold_hu > -1000.0 && v.threshold_hu < v.parenchyma_hu))
    return "voids.threshold_hu is " + format_number(v.threshold_hu) +
           "; allowed between -1000 HU and voids.parenchyma_hu";
  if (std::string error = v.target.validate("voids.target", 0.0, 0.9); !error.empty()) return error;
  if (v.patterns.empty()) return "voids.patterns is empty; list at least one pattern";
  for (const auto& [pattern, hu] : v.void_hu)
    if (!(hu >= -1000.0 && hu < v.parenchyma_hu))
      return "voids.void_hu." + to_string(pattern) + " is " + format_number(hu) +
             "; allowed -1000 HU up to (not including) voids.parenchyma_hu";
  if (std::string error = validate_tree(v.tree); !error.empty()) return error;
  if (v.tree.generations > 0 && !(v.tree.vessel_hu > v.parenchyma_hu))
    return "voids.tree.vessel_hu is " + format_number(v.tree.vessel_hu) +
           "; vessels are denser than the parenchyma: allowed above voids.parenchyma_hu";
  return {};
}

std::string validate_confounder(const ScenarioOptions& o) {
  const ConfounderOptions& c = o.confounder;
  if (!(c.correlation >= -1.0 && c.correlation <= 1.0))
    return "confounder.correlation is " + format_number(c.correlation) + "; allowed -1..1";
  const bool hu_shift = o.family == Family::voids && c.factor == ConfounderFactor::global_intensity;
  if (hu_shift) {
    if (!(c.spread >= 1.0 && c.spread <= 200.0))
      return "confounder.spread is " + format_number(c.spread) + "; a voids global_intensity shift is in HU: allowed 1..200";
    if (o.voids.parenchyma_hu - 3.0 * c.spread <= o.voids.threshold_hu || o.voids.parenchyma_hu + 3.0 * c.spread >= 0.0)
      return "confounder.spread of " + format_number(c.spread) + " HU would move the parenchyma (" + format_number(o.voids.parenchyma_hu) +
             " HU) below voids.threshold_hu or above 0 HU within 3 SD; use a smaller spread";
    return {};
  }
  const bool size = c.factor == ConfounderFactor::field_size;
  const double limit = size ? 0.1 : 0.3;
  if (!(c.spread >= 0.0 && c.spread <= limit))
    return "confounder.spread is " + format_number(c.spread) + "; allowed 0.." + format_number(limit) +
           (size ? " for field_size (a relative SD; size factors are bounded to 0.7..1.3)"
                 : " (a relative SD of the intensity gain)");
  return {};
}

}  // namespace

std::string ScenarioOptions::validate() const {
  if (name.empty()) return "name is empty; give the scenario a name";
  if (!is_printable_name(name))
    return "name holds only blanks or control characters; give the scenario a printable name";
  if (std::string error = validate_geometry(geometry); !error.empty()) return error;
  if (!(psf_fwhm_mm >= 0.0 && psf_fwhm_mm <= 20.0))
    return "psf_fwhm_mm is " + format_number(psf_fwhm_mm) + "; allowed 0..20 mm";
  if (!(noise.sigma >= 0.0 && noise.sigma <= 1000.0))
    return "noise.sigma is " + format_number(noise.sigma) + "; allowed 0..1000 (image units)";
  if (!(noise.correlation_mm >= 0.0 && noise.correlation_mm <= 20.0))
    return "noise.correlation_mm is " + format_number(noise.correlation_mm) + "; allowed 0..20 mm";
  if (family == Family::voids && noise.model == NoiseModel::rician)
    return "noise.model is rician, which describes magnitude MR; a voids (CT-like) scenario allows gaussian or none";
  if (noise.model == NoiseModel::rician && noise.correlation_mm > 0.0)
    return "noise.correlation_mm must be 0 with rician noise (MR noise is white in image space here)";
  if (!(bias_field.amplitude >= 0.0 && bias_field.amplitude < 1.0))
    return "bias_field.amplitude is " + format_number(bias_field.amplitude) + "; allowed 0 <= value < 1";
  if (!(bias_field.scale_mm >= 5.0 && bias_field.scale_mm <= 1000.0))
    return "bias_field.scale_mm is " + format_number(bias_field.scale_mm) + "; allowed 5..1000 mm";
  if (std::string error = validate_confounder(*this); !error.empty()) return error;
  if (family == Family::voids && bias_field.amplitude != 0.0)
    return "bias_field.amplitude is " + format_number(bias_field.amplitude) +
           "; a voids (CT-like) scenario has no multiplicative bias field, so it must be 0";
  if (!(rescan.max_rotation_deg >= 0.0 && rescan.max_rotation_deg <= 30.0))
    return "rescan.max_rotation_deg is " + format_number(rescan.max_rotation_deg) + "; allowed 0..30";
  if (!(rescan.max_shift_mm >= 0.0 && rescan.max_shift_mm <= 20.0))
    return "rescan.max_shift_mm is " + format_number(rescan.max_shift_mm) + "; allowed 0..20 mm";
  std::string family_error = family == Family::streaks ? validate_streaks(streaks, geometry.dims) : validate_voids(voids);
  if (!family_error.empty()) return family_error;
  const bool fixed_target = family == Family::streaks ? streaks.count.spread() == 0.0 : voids.target.spread() == 0.0;
  if (confounder.factor != ConfounderFactor::none && confounder.correlation != 0.0 && fixed_target)
    return "confounder.correlation is non-zero but the target quantity is fixed, so nothing can correlate with it";
  return {};
}

ScenarioOptions default_scenario(Family family) {
  ScenarioOptions options;
  options.family = family;
  if (family == Family::voids) {
    options.name = "voids";
    options.noise.model = NoiseModel::gaussian;
    options.noise.sigma = 15.0;  // HU
    options.noise.correlation_mm = 0.7;
    options.bias_field.amplitude = 0.0;
    options.geometry.anatomy_size_mm = {320.0, 220.0, 280.0};  // adult chest, from memory
  } else {
    options.name = "streaks";
  }
  return options;
}

std::string to_string(Family family) { return family == Family::streaks ? "streaks" : "voids"; }

std::string to_string(NoiseModel model) {
  switch (model) {
    case NoiseModel::none: return "none";
    case NoiseModel::gaussian: return "gaussian";
    case NoiseModel::rician: return "rician";
  }
  return "none";
}

std::string to_string(ConfounderFactor factor) {
  switch (factor) {
    case ConfounderFactor::none: return "none";
    case ConfounderFactor::field_size: return "field_size";
    case ConfounderFactor::global_intensity: return "global_intensity";
  }
  return "none";
}

std::string to_string(VoidPattern pattern) {
  switch (pattern) {
    case VoidPattern::scattered_holes: return "scattered_holes";
    case VoidPattern::diffuse_thinning: return "diffuse_thinning";
    case VoidPattern::confluent_spaces: return "confluent_spaces";
    case VoidPattern::peripheral_band: return "peripheral_band";
  }
  return "scattered_holes";
}

std::string to_string(VoidsTarget target) {
  return target == VoidsTarget::affected_fraction ? "affected_fraction" : "densitometry";
}

std::string to_string(AnatomyScale scale) { return scale == AnatomyScale::fit_image ? "fit_image" : "physical"; }

std::string to_string(LesionDensity density) {
  return density == LesionDensity::uniform ? "uniform" : "periventricular";
}

std::string to_string(LesionOrientation orientation) {
  return orientation == LesionOrientation::free ? "free" : "radial";
}

std::string to_string(LineShape shape) { return shape == LineShape::straight ? "straight" : "tube"; }

}  // namespace frugal
