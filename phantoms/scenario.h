#pragma once
// A phantom scenario: everything needed to draw subjects, with defaults in the declarations.
// scenario_yaml.h fills it from a YAML file; validate() reports the first problem found.

#include <array>
#include <map>
#include <string>
#include <vector>

#include "phantoms/distribution.h"

namespace frugal {

enum class Family { streaks, voids };
enum class NoiseModel { none, gaussian, rician };
enum class ConfounderFactor { none, field_size, global_intensity };
enum class VoidPattern { scattered_holes, diffuse_thinning, confluent_spaces, peripheral_band };
// What a voids subject's drawn target value means: the extent of the low-density region, or
// the densitometry value (fraction of the field below the threshold) that the generator matches.
enum class VoidsTarget { affected_fraction, densitometry };
// How big the anatomy is: a fixed share of the image (the head or chest grows with the image in
// voxels), or a size in mm that the image samples at its spacing (a smaller image is a coarser
// sampling or a crop of the same head or chest, never a shrunken one).
enum class AnatomyScale { fit_image, physical };
// Where lesion centres go: uniform in the white and grey matter, or concentrated near the
// ventricle walls (deep, periventricular tissue).
enum class LesionDensity { uniform, periventricular };
// Which way lesions point: as streaks.orientation says, or outward from the nearer ventricle.
enum class LesionOrientation { free, radial };
// Vessel-like look-alikes: straight capsules, or smooth curved tubes with tapering width.
enum class LineShape { straight, tube };

struct GeometryOptions {
  int dims = 2;
  std::array<int, 2> size_2d{128, 128};
  std::array<int, 3> size_3d{64, 64, 64};
  std::array<double, 3> spacing_mm{1.0, 1.0, 1.0};  // 2D uses the third entry as slice thickness
  int reference_slice = -1;                         // 3D: slice for per-slice counts; -1 = middle
  AnatomyScale anatomy_scale = AnatomyScale::fit_image;
  // Full extent x, y, z of the head (streaks) or the body (voids) when physical; default_scenario()
  // sets the voids value. Typical adult intracranial extent, from memory.
  std::array<double, 3> anatomy_size_mm{140.0, 175.0, 120.0};
};

struct NoiseOptions {
  NoiseModel model = NoiseModel::rician;
  double sigma = 0.04;           // image units: white-matter = 1 for streaks, HU for voids
  double correlation_mm = 0.0;   // Gaussian correlation length of the noise (CT-like); 0 = white
};

struct BiasFieldOptions {
  double amplitude = 0.1;   // peak fractional deviation of the multiplicative field
  double scale_mm = 80.0;   // spacing of its random control points
};

struct ConfounderOptions {
  ConfounderFactor factor = ConfounderFactor::none;
  double correlation = 0.0;  // target correlation with the subject's target quantity, in [-1, 1]
  double spread = 0.1;       // SD of the factor: relative for size (<= 0.1) and gain, HU for a voids shift
};

struct RescanOptions {
  double max_rotation_deg = 3.0;
  double max_shift_mm = 2.0;
};

struct OrientationOptions {
  bool isotropic = true;
  std::array<double, 3> axis{1.0, 0.0, 0.0};  // preferred direction when not isotropic
  double spread_deg = 15.0;                   // SD of the angle about the preferred axis
};

struct ClusteringOptions {
  double fraction = 0.0;     // share of lesions placed in one cluster region
  double radius_mm = 20.0;
};

struct PlacementOptions {
  LesionDensity density = LesionDensity::uniform;
  double decay_mm = 6.0;  // periventricular: density falls as exp(-distance / decay) from the ventricle wall
  LesionOrientation orientation = LesionOrientation::free;
  double radial_spread_deg = 10.0;  // radial: SD of the angle between a lesion and the radial direction
};

struct StreaksOptions {
  CountDistribution count{CountDistribution::Kind::poisson, 6.0};
  Distribution length_mm = Distribution::uniform_between(3.0, 10.0);
  Distribution width_mm = Distribution::uniform_between(1.0, 2.0);
  Distribution contrast = Distribution::uniform_between(0.3, 0.8);  // added intensity, WM = 1
  OrientationOptions orientation;
  ClusteringOptions clustering;
  double min_separation_mm = 2.0;  // surface-to-surface gap between any two objects
  CountDistribution dots{CountDistribution::Kind::poisson, 3.0};
  Distribution dot_diameter_mm = Distribution::uniform_between(1.5, 3.0);
  Distribution dot_contrast = Distribution::uniform_between(0.3, 0.8);
  CountDistribution lines{CountDistribution::Kind::poisson, 1.5};
  Distribution line_length_mm = Distribution::uniform_between(25.0, 50.0);
  Distribution line_width_mm = Distribution::uniform_between(0.6, 1.0);
  Distribution line_contrast = Distribution::uniform_between(0.2, 0.5);
  LineShape line_shape = LineShape::straight;
  double line_bend_deg = 30.0;  // tube: each of its three arcs turns by an angle uniform in +-this
  double line_taper = 0.5;      // tube: end width / start width (line_width_mm is the start width)
  PlacementOptions placement;
  // FLAIR-like: grey matter a little brighter than white matter, CSF dark, lesions bright.
  double white_matter = 1.0, grey_matter = 1.15, csf = 0.3;
};

// A branching vessel tree and airway tree growing from the hilum of each lung (voids.tree).
struct TreeOptions {
  int generations = 0;              // branchings from a trunk to its finest branches; 0 = no tree
  int vessel_trunks = 3;            // vessel trees per lung
  int airway_trunks = 2;            // airway trees per lung
  double trunk_length_mm = 30.0;    // each generation is 0.75 times as long as its parent
  double vessel_radius_mm = 2.5;    // trunk radius; children follow Murray's law
  double airway_radius_mm = 3.0;    // outer trunk radius (wall included)
  double airway_wall_fraction = 0.3;  // wall thickness / outer radius; the rest is air-filled lumen
  double min_radius_mm = 0.5;       // thinner branches are not drawn (below what CT resolves)
  double bend_deg = 20.0;           // each branch turns by an angle uniform in +-this
  double vessel_hu = 40.0;          // vessels and airway walls (blood and soft tissue)
};

struct VoidsOptions {
  double parenchyma_hu = -850.0;  // typical inflated lung parenchyma (common practice)
  double texture_sd_hu = 20.0;
  double texture_scale_mm = 3.0;
  double body_hu = 40.0;          // soft tissue around the lungs
  double threshold_hu = -950.0;   // densitometry threshold (Gevenois et al. 1995)
  Distribution target = Distribution::uniform_between(0.0, 0.3);
  VoidsTarget target_kind = VoidsTarget::affected_fraction;
  std::vector<VoidPattern> patterns{VoidPattern::scattered_holes, VoidPattern::diffuse_thinning,
                                    VoidPattern::confluent_spaces, VoidPattern::peripheral_band};
  std::map<VoidPattern, double> void_hu{{VoidPattern::scattered_holes, -990.0},
                                        {VoidPattern::diffuse_thinning, -965.0},
                                        {VoidPattern::confluent_spaces, -995.0},
                                        {VoidPattern::peripheral_band, -975.0}};
  TreeOptions tree;
};

struct ScenarioOptions {
  std::string name = "unnamed";
  Family family = Family::streaks;
  GeometryOptions geometry;
  double psf_fwhm_mm = 1.0;  // partial-volume blur; 0 = none
  NoiseOptions noise;
  BiasFieldOptions bias_field;
  ConfounderOptions confounder;
  RescanOptions rescan;
  StreaksOptions streaks;
  VoidsOptions voids;

  // Empty when the scenario can be generated; otherwise the key path, the value and what is allowed.
  std::string validate() const;
};

// Defaults suited to each family (noise in the family's units, no bias field for CT).
ScenarioOptions default_scenario(Family family);

std::string to_string(Family family);
std::string to_string(NoiseModel model);
std::string to_string(ConfounderFactor factor);
std::string to_string(VoidPattern pattern);
std::string to_string(VoidsTarget target);
std::string to_string(AnatomyScale scale);
std::string to_string(LesionDensity density);
std::string to_string(LesionOrientation orientation);
std::string to_string(LineShape shape);

}  // namespace frugal
