#include "phantoms/scenario_yaml.h"

#include "phantoms/key_path.h"
#include "phantoms/user_error.h"
#include "phantoms/yaml_fields.h"

namespace frugal {

namespace {

const std::map<std::string, Family> kFamilies{{"streaks", Family::streaks}, {"voids", Family::voids}};
const std::map<std::string, NoiseModel> kNoiseModels{
    {"none", NoiseModel::none}, {"gaussian", NoiseModel::gaussian}, {"rician", NoiseModel::rician}};
const std::map<std::string, ConfounderFactor> kFactors{{"none", ConfounderFactor::none},
                                                       {"field_size", ConfounderFactor::field_size},
                                                       {"global_intensity", ConfounderFactor::global_intensity}};
const std::map<std::string, VoidPattern> kPatterns{{"scattered_holes", VoidPattern::scattered_holes},
                                                   {"diffuse_thinning", VoidPattern::diffuse_thinning},
                                                   {"confluent_spaces", VoidPattern::confluent_spaces},
                                                   {"peripheral_band", VoidPattern::peripheral_band}};
const std::map<std::string, VoidsTarget> kTargets{{"affected_fraction", VoidsTarget::affected_fraction},
                                                  {"densitometry", VoidsTarget::densitometry}};
const std::map<std::string, AnatomyScale> kAnatomyScales{{"fit_image", AnatomyScale::fit_image},
                                                          {"physical", AnatomyScale::physical}};
const std::map<std::string, LesionDensity> kDensities{{"uniform", LesionDensity::uniform},
                                                      {"periventricular", LesionDensity::periventricular}};
const std::map<std::string, LesionOrientation> kOrientations{{"free", LesionOrientation::free},
                                                             {"radial", LesionOrientation::radial}};
const std::map<std::string, LineShape> kLineShapes{{"straight", LineShape::straight}, {"tube", LineShape::tube}};
const std::map<std::string, Distribution::Kind> kDistributions{{"fixed", Distribution::Kind::fixed},
                                                               {"uniform", Distribution::Kind::uniform},
                                                               {"normal", Distribution::Kind::normal},
                                                               {"lognormal", Distribution::Kind::lognormal}};
const std::map<std::string, CountDistribution::Kind> kCountDistributions{
    {"fixed", CountDistribution::Kind::fixed},
    {"poisson", CountDistribution::Kind::poisson},
    {"negative_binomial", CountDistribution::Kind::negative_binomial},
    {"uniform", CountDistribution::Kind::uniform}};

void read_distribution(YamlFields& parent, const std::string& key, Distribution& value) {
  if (!parent.has(key)) return;
  YamlFields fields = parent.child(key);
  fields.require("distribution");
  fields.read_choice("distribution", kDistributions, value.kind);
  const auto need = [&](std::initializer_list<const char*> keys) {
    for (const char* name : keys) fields.require(name);
  };
  switch (value.kind) {
    case Distribution::Kind::fixed:
      need({"value"});
      fields.read("value", value.value);
      break;
    case Distribution::Kind::uniform:
      need({"min", "max"});
      break;
    case Distribution::Kind::normal:
      need({"mean", "sd", "min", "max"});
      fields.read("mean", value.mean);
      fields.read("sd", value.sd);
      break;
    case Distribution::Kind::lognormal:
      need({"median", "sigma", "min", "max"});
      fields.read("median", value.median);
      fields.read("sigma", value.sigma);
      break;
  }
  if (value.kind != Distribution::Kind::fixed) {
    fields.read("min", value.min);
    fields.read("max", value.max);
  }
  fields.finish();
}

void read_count(YamlFields& parent, const std::string& key, CountDistribution& value) {
  if (!parent.has(key)) return;
  YamlFields fields = parent.child(key);
  fields.require("distribution");
  fields.read_choice("distribution", kCountDistributions, value.kind);
  switch (value.kind) {
    case CountDistribution::Kind::fixed:
      fields.require("value");
      fields.read("value", value.value);
      break;
    case CountDistribution::Kind::poisson:
      fields.require("mean");
      fields.read("mean", value.mean);
      break;
    case CountDistribution::Kind::negative_binomial:
      fields.require("mean");
      fields.require("dispersion");
      fields.read("mean", value.mean);
      fields.read("dispersion", value.dispersion);
      break;
    case CountDistribution::Kind::uniform:
      fields.require("min");
      fields.require("max");
      fields.read("min", value.min);
      fields.read("max", value.max);
      break;
  }
  fields.finish();
}

void read_streaks(YamlFields& fields, StreaksOptions& s) {
  read_count(fields, "count", s.count);
  read_distribution(fields, "length_mm", s.length_mm);
  read_distribution(fields, "width_mm", s.width_mm);
  read_distribution(fields, "contrast", s.contrast);
  if (fields.has("orientation")) {
    YamlFields orientation = fields.child("orientation");
    orientation.read("isotropic", s.orientation.isotropic);
    orientation.read("axis", s.orientation.axis);
    orientation.read("spread_deg", s.orientation.spread_deg);
    orientation.finish();
  }
  if (fields.has("clustering")) {
    YamlFields clustering = fields.child("clustering");
    clustering.read("fraction", s.clustering.fraction);
    clustering.read("radius_mm", s.clustering.radius_mm);
    clustering.finish();
  }
  fields.read("min_separation_mm", s.min_separation_mm);
  read_count(fields, "dots", s.dots);
  read_distribution(fields, "dot_diameter_mm", s.dot_diameter_mm);
  read_distribution(fields, "dot_contrast", s.dot_contrast);
  read_count(fields, "lines", s.lines);
  read_distribution(fields, "line_length_mm", s.line_length_mm);
  read_distribution(fields, "line_width_mm", s.line_width_mm);
  read_distribution(fields, "line_contrast", s.line_contrast);
  fields.read_choice("line_shape", kLineShapes, s.line_shape);
  fields.read("line_bend_deg", s.line_bend_deg);
  fields.read("line_taper", s.line_taper);
  if (fields.has("placement")) {
    YamlFields placement = fields.child("placement");
    placement.read_choice("density", kDensities, s.placement.density);
    placement.read("decay_mm", s.placement.decay_mm);
    placement.read_choice("orientation", kOrientations, s.placement.orientation);
    placement.read("radial_spread_deg", s.placement.radial_spread_deg);
    placement.finish();
  }
  if (fields.has("tissue")) {
    YamlFields tissue = fields.child("tissue");
    tissue.read("white_matter", s.white_matter);
    tissue.read("grey_matter", s.grey_matter);
    tissue.read("csf", s.csf);
    tissue.finish();
  }
  fields.finish();
}

void read_voids(YamlFields& fields, VoidsOptions& v) {
  fields.read("parenchyma_hu", v.parenchyma_hu);
  fields.read("texture_sd_hu", v.texture_sd_hu);
  fields.read("texture_scale_mm", v.texture_scale_mm);
  fields.read("body_hu", v.body_hu);
  fields.read("threshold_hu", v.threshold_hu);
  read_distribution(fields, "target", v.target);
  fields.read_choice("target_kind", kTargets, v.target_kind);
  if (fields.has("patterns")) {
    std::vector<std::string> names;
    fields.read("patterns", names);
    v.patterns.clear();
    for (const auto& name : names) {
      const auto found = kPatterns.find(name);
      if (found == kPatterns.end())
        fields.fail("patterns", "holds '" + name +
                                    "'; allowed: scattered_holes, diffuse_thinning, confluent_spaces, peripheral_band");
      v.patterns.push_back(found->second);
    }
  }
  if (fields.has("void_hu")) {
    YamlFields levels = fields.child("void_hu");
    for (auto& [pattern, hu] : v.void_hu) levels.read(to_string(pattern), hu);
    levels.finish();
  }
  if (fields.has("tree")) {
    YamlFields tree = fields.child("tree");
    TreeOptions& t = v.tree;
    tree.read("generations", t.generations);
    tree.read("vessel_trunks", t.vessel_trunks);
    tree.read("airway_trunks", t.airway_trunks);
    tree.read("trunk_length_mm", t.trunk_length_mm);
    tree.read("vessel_radius_mm", t.vessel_radius_mm);
    tree.read("airway_radius_mm", t.airway_radius_mm);
    tree.read("airway_wall_fraction", t.airway_wall_fraction);
    tree.read("min_radius_mm", t.min_radius_mm);
    tree.read("bend_deg", t.bend_deg);
    tree.read("vessel_hu", t.vessel_hu);
    tree.finish();
  }
  fields.finish();
}

}  // namespace

ScenarioOptions read_scenario(const YAML::Node& root, const std::string& file) {
  YamlFields fields(root, file, "");
  fields.require("family");
  Family family = Family::streaks;
  fields.read_choice("family", kFamilies, family);
  ScenarioOptions options = default_scenario(family);
  fields.read("name", options.name);
  if (fields.has("geometry")) {
    YamlFields geometry = fields.child("geometry");
    geometry.read("dims", options.geometry.dims);
    geometry.read("size_2d", options.geometry.size_2d);
    geometry.read("size_3d", options.geometry.size_3d);
    geometry.read("spacing_mm", options.geometry.spacing_mm);
    geometry.read("reference_slice", options.geometry.reference_slice);
    geometry.read_choice("anatomy_scale", kAnatomyScales, options.geometry.anatomy_scale);
    geometry.read("anatomy_size_mm", options.geometry.anatomy_size_mm);
    geometry.finish();
  }
  fields.read("psf_fwhm_mm", options.psf_fwhm_mm);
  if (fields.has("noise")) {
    YamlFields noise = fields.child("noise");
    noise.read_choice("model", kNoiseModels, options.noise.model);
    noise.read("sigma", options.noise.sigma);
    noise.read("correlation_mm", options.noise.correlation_mm);
    noise.finish();
  }
  if (fields.has("bias_field")) {
    YamlFields bias = fields.child("bias_field");
    bias.read("amplitude", options.bias_field.amplitude);
    bias.read("scale_mm", options.bias_field.scale_mm);
    bias.finish();
  }
  if (fields.has("confounder")) {
    YamlFields confounder = fields.child("confounder");
    confounder.read_choice("factor", kFactors, options.confounder.factor);
    confounder.read("correlation", options.confounder.correlation);
    confounder.read("spread", options.confounder.spread);
    confounder.finish();
  }
  if (fields.has("rescan")) {
    YamlFields rescan = fields.child("rescan");
    rescan.read("max_rotation_deg", options.rescan.max_rotation_deg);
    rescan.read("max_shift_mm", options.rescan.max_shift_mm);
    rescan.finish();
  }
  const std::string own_section = to_string(family);
  const std::string other_section = family == Family::streaks ? "voids" : "streaks";
  if (fields.has(other_section))
    fields.fail(other_section, "belongs to the " + other_section + " family; this scenario's family is " + own_section);
  if (fields.has(own_section)) {
    YamlFields section = fields.child(own_section);
    if (family == Family::streaks)
      read_streaks(section, options.streaks);
    else
      read_voids(section, options.voids);
  }
  fields.finish();
  if (std::string error = options.validate(); !error.empty()) {
    const int line = line_of_key_path(root, key_path_of(error));
    throw UserError(file + (line > 0 ? ":" + std::to_string(line) : std::string()) + ": " + error +
                    " (see docs/scenarios.md)");
  }
  return options;
}

ScenarioOptions read_scenario_file(const std::string& file) { return read_scenario(load_yaml_file(file), file); }

namespace {

YAML::Node distribution_node(const Distribution& d) {
  YAML::Node node;
  node["distribution"] = to_string(d.kind);
  switch (d.kind) {
    case Distribution::Kind::fixed: node["value"] = d.value; return node;
    case Distribution::Kind::uniform: break;
    case Distribution::Kind::normal:
      node["mean"] = d.mean;
      node["sd"] = d.sd;
      break;
    case Distribution::Kind::lognormal:
      node["median"] = d.median;
      node["sigma"] = d.sigma;
      break;
  }
  node["min"] = d.min;
  node["max"] = d.max;
  return node;
}

YAML::Node count_node(const CountDistribution& d) {
  YAML::Node node;
  node["distribution"] = to_string(d.kind);
  switch (d.kind) {
    case CountDistribution::Kind::fixed: node["value"] = d.value; break;
    case CountDistribution::Kind::poisson: node["mean"] = d.mean; break;
    case CountDistribution::Kind::negative_binomial:
      node["mean"] = d.mean;
      node["dispersion"] = d.dispersion;
      break;
    case CountDistribution::Kind::uniform:
      node["min"] = d.min;
      node["max"] = d.max;
      break;
  }
  return node;
}

template <class Array>
YAML::Node flow_list(const Array& values) {
  YAML::Node node;
  for (const auto& value : values) node.push_back(value);
  node.SetStyle(YAML::EmitterStyle::Flow);
  return node;
}

// The keys added with anatomy (physical scale, lesion placement, tube-shaped look-alikes, the
// lung tree) are written only when one of them differs from its default: a scenario that does
// not use them resolves to the same text as before they existed, so its phantom sets, label sets
// and study cell keys stay byte for byte the same. Reading treats an absent key as its default,
// so the round trip holds either way.
bool anatomy_geometry_is_default(const ScenarioOptions& o) {
  const GeometryOptions defaults = default_scenario(o.family).geometry;
  return o.geometry.anatomy_scale == defaults.anatomy_scale && o.geometry.anatomy_size_mm == defaults.anatomy_size_mm;
}

bool placement_is_default(const PlacementOptions& p) {
  const PlacementOptions defaults;
  return p.density == defaults.density && p.decay_mm == defaults.decay_mm && p.orientation == defaults.orientation &&
         p.radial_spread_deg == defaults.radial_spread_deg;
}

bool line_shape_is_default(const StreaksOptions& s) {
  const StreaksOptions defaults;
  return s.line_shape == defaults.line_shape && s.line_bend_deg == defaults.line_bend_deg &&
         s.line_taper == defaults.line_taper;
}

bool tree_is_default(const TreeOptions& t) {
  const TreeOptions d;
  return t.generations == d.generations && t.vessel_trunks == d.vessel_trunks && t.airway_trunks == d.airway_trunks &&
         t.trunk_length_mm == d.trunk_length_mm && t.vessel_radius_mm == d.vessel_radius_mm &&
         t.airway_radius_mm == d.airway_radius_mm && t.airway_wall_fraction == d.airway_wall_fraction &&
         t.min_radius_mm == d.min_radius_mm && t.bend_deg == d.bend_deg && t.vessel_hu == d.vessel_hu;
}

}  // namespace

std::string scenario_to_yaml(const ScenarioOptions& o) {
  YAML::Node root;
  root["name"] = o.name;
  root["family"] = to_string(o.family);
  root["geometry"]["dims"] = o.geometry.dims;
  root["geometry"]["size_2d"] = flow_list(o.geometry.size_2d);
  root["geometry"]["size_3d"] = flow_list(o.geometry.size_3d);
  root["geometry"]["spacing_mm"] = flow_list(o.geometry.spacing_mm);
  root["geometry"]["reference_slice"] = o.geometry.reference_slice;
  if (!anatomy_geometry_is_default(o)) {
    root["geometry"]["anatomy_scale"] = to_string(o.geometry.anatomy_scale);
    root["geometry"]["anatomy_size_mm"] = flow_list(o.geometry.anatomy_size_mm);
  }
  root["psf_fwhm_mm"] = o.psf_fwhm_mm;
  root["noise"]["model"] = to_string(o.noise.model);
  root["noise"]["sigma"] = o.noise.sigma;
  root["noise"]["correlation_mm"] = o.noise.correlation_mm;
  root["bias_field"]["amplitude"] = o.bias_field.amplitude;
  root["bias_field"]["scale_mm"] = o.bias_field.scale_mm;
  root["confounder"]["factor"] = to_string(o.confounder.factor);
  root["confounder"]["correlation"] = o.confounder.correlation;
  root["confounder"]["spread"] = o.confounder.spread;
  root["rescan"]["max_rotation_deg"] = o.rescan.max_rotation_deg;
  root["rescan"]["max_shift_mm"] = o.rescan.max_shift_mm;
  if (o.family == Family::streaks) {
    const StreaksOptions& s = o.streaks;
    YAML::Node node;
    node["count"] = count_node(s.count);
    node["length_mm"] = distribution_node(s.length_mm);
    node["width_mm"] = distribution_node(s.width_mm);
    node["contrast"] = distribution_node(s.contrast);
    node["orientation"]["isotropic"] = s.orientation.isotropic;
    node["orientation"]["axis"] = flow_list(s.orientation.axis);
    node["orientation"]["spread_deg"] = s.orientation.spread_deg;
    node["clustering"]["fraction"] = s.clustering.fraction;
    node["clustering"]["radius_mm"] = s.clustering.radius_mm;
    node["min_separation_mm"] = s.min_separation_mm;
    node["dots"] = count_node(s.dots);
    node["dot_diameter_mm"] = distribution_node(s.dot_diameter_mm);
    node["dot_contrast"] = distribution_node(s.dot_contrast);
    node["lines"] = count_node(s.lines);
    node["line_length_mm"] = distribution_node(s.line_length_mm);
    node["line_width_mm"] = distribution_node(s.line_width_mm);
    node["line_contrast"] = distribution_node(s.line_contrast);
    if (!line_shape_is_default(s)) {
      node["line_shape"] = to_string(s.line_shape);
      node["line_bend_deg"] = s.line_bend_deg;
      node["line_taper"] = s.line_taper;
    }
    if (!placement_is_default(s.placement)) {
      node["placement"]["density"] = to_string(s.placement.density);
      node["placement"]["decay_mm"] = s.placement.decay_mm;
      node["placement"]["orientation"] = to_string(s.placement.orientation);
      node["placement"]["radial_spread_deg"] = s.placement.radial_spread_deg;
    }
    node["tissue"]["white_matter"] = s.white_matter;
    node["tissue"]["grey_matter"] = s.grey_matter;
    node["tissue"]["csf"] = s.csf;
    root["streaks"] = node;
  } else {
    const VoidsOptions& v = o.voids;
    YAML::Node node;
    node["parenchyma_hu"] = v.parenchyma_hu;
    node["texture_sd_hu"] = v.texture_sd_hu;
    node["texture_scale_mm"] = v.texture_scale_mm;
    node["body_hu"] = v.body_hu;
    node["threshold_hu"] = v.threshold_hu;
    node["target"] = distribution_node(v.target);
    node["target_kind"] = to_string(v.target_kind);
    std::vector<std::string> patterns;
    for (VoidPattern pattern : v.patterns) patterns.push_back(to_string(pattern));
    node["patterns"] = flow_list(patterns);
    for (const auto& [pattern, hu] : v.void_hu) node["void_hu"][to_string(pattern)] = hu;
    if (!tree_is_default(v.tree)) {
      const TreeOptions& t = v.tree;
      YAML::Node tree;
      tree["generations"] = t.generations;
      tree["vessel_trunks"] = t.vessel_trunks;
      tree["airway_trunks"] = t.airway_trunks;
      tree["trunk_length_mm"] = t.trunk_length_mm;
      tree["vessel_radius_mm"] = t.vessel_radius_mm;
      tree["airway_radius_mm"] = t.airway_radius_mm;
      tree["airway_wall_fraction"] = t.airway_wall_fraction;
      tree["min_radius_mm"] = t.min_radius_mm;
      tree["bend_deg"] = t.bend_deg;
      tree["vessel_hu"] = t.vessel_hu;
      node["tree"] = tree;
    }
    root["voids"] = node;
  }
  YAML::Emitter out;
  out.SetDoublePrecision(17);
  out << root;
  return std::string(out.c_str()) + "\n";
}

}  // namespace frugal
