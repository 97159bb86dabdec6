#include "phantoms/scenario_yaml.h"

#include <gtest/gtest.h>

#include <fstream>
#include <string>

#include "phantoms/user_error.h"

namespace frugal {
namespace {

std::string read_error(const std::string& text) {
  try {
    read_scenario(YAML::Load(text), "bad.yaml");
  } catch (const UserError& error) {
    return error.what();
  }
  return "";
}

struct BadScenario {
  const char* name;
  const char* yaml;
  const char* expected;  // a fragment the message must contain
};

class BadScenarios : public ::testing::TestWithParam<BadScenario> {};

TEST_P(BadScenarios, AreRejectedWithFileKeyAndWhatIsAllowed) {
  const BadScenario& c = GetParam();
  const std::string message = read_error(c.yaml);
  ASSERT_FALSE(message.empty()) << "accepted: " << c.yaml;
  EXPECT_NE(message.find("bad.yaml"), std::string::npos) << message;
  EXPECT_NE(message.find(c.expected), std::string::npos) << message;
}

INSTANTIATE_TEST_SUITE_P(
    Catalogue, BadScenarios,
    ::testing::Values(
        BadScenario{"missing_family", "name: x\n", "missing the required key 'family'"},
        BadScenario{"unknown_family", "family: cells\n", "allowed: streaks, voids"},
        BadScenario{"unknown_top_key", "family: streaks\nnoize: {sigma: 1}\n", "'noize' is not a key"},
        BadScenario{"unknown_nested_key_with_line", "family: streaks\nstreaks:\n  lenght_mm: 3\n", "bad.yaml:3: 'streaks.lenght_mm'"},
        BadScenario{"wrong_type", "family: streaks\npsf_fwhm_mm: wide\n", "not a number"},
        BadScenario{"dims_out_of_range", "family: streaks\ngeometry: {dims: 4}\n", "allowed 2 or 3"},
        BadScenario{"size_too_small", "family: streaks\ngeometry: {size_2d: [8, 128]}\n", "geometry.size_2d"},
        BadScenario{"size_wrong_length", "family: streaks\ngeometry: {size_2d: [64, 64, 64]}\n", "list of 2"},
        BadScenario{"negative_spacing", "family: voids\ngeometry: {spacing_mm: [1, -1, 1]}\n", "spacing_mm"},
        BadScenario{"rician_ct", "family: voids\nnoise: {model: rician}\n", "allows gaussian or none"},
        BadScenario{"unknown_noise_model", "family: streaks\nnoise: {model: speckle}\n", "allowed: gaussian, none, rician"},
        BadScenario{"uniform_reversed", "family: streaks\nstreaks: {length_mm: {distribution: uniform, min: 9, max: 3}}\n",
                    "streaks.length_mm"},
        BadScenario{"normal_without_bounds", "family: streaks\nstreaks: {contrast: {distribution: normal, mean: 0.5, sd: 0.1}}\n",
                    "missing the required key 'min'"},
        BadScenario{"count_mean_too_large", "family: streaks\nstreaks: {count: {distribution: poisson, mean: 5000}}\n",
                    "streaks.count.mean"},
        BadScenario{"correlation_out_of_range", "family: streaks\nconfounder: {factor: field_size, correlation: 1.5}\n",
                    "allowed -1..1"},
        BadScenario{"confounded_fixed_target",
                    "family: streaks\nconfounder: {factor: field_size, correlation: 0.5}\n"
                    "streaks: {count: {distribution: fixed, value: 4}}\n",
                    "target quantity is fixed"},
        BadScenario{"wrong_family_section", "family: streaks\nvoids: {parenchyma_hu: -800}\n", "belongs to the voids family"},
        BadScenario{"unknown_pattern", "family: voids\nvoids: {patterns: [honeycomb]}\n", "holds 'honeycomb'"},
        BadScenario{"void_above_parenchyma", "family: voids\nvoids: {void_hu: {diffuse_thinning: -500}}\n",
                    "voids.void_hu.diffuse_thinning"},
        BadScenario{"not_a_mapping", "- just\n- a list\n", "must be a mapping"},
        BadScenario{"unknown_anatomy_scale", "family: streaks\ngeometry: {anatomy_scale: shrunk}\n",
                    "allowed: fit_image, physical"},
        BadScenario{"anatomy_too_small", "family: voids\ngeometry: {anatomy_size_mm: [320, 5, 280]}\n",
                    "bad.yaml:2: geometry.anatomy_size_mm entry 5 is out of range; allowed 10..1000 mm"},
        BadScenario{"radial_spread_too_wide", "family: streaks\nstreaks:\n  placement: {orientation: radial, radial_spread_deg: 200}\n",
                    "bad.yaml:3: streaks.placement.radial_spread_deg is 200; allowed 0..90"},
        BadScenario{"unknown_density", "family: streaks\nstreaks: {placement: {density: cortical}}\n",
                    "allowed: periventricular, uniform"},
        BadScenario{"decay_zero", "family: streaks\nstreaks: {placement: {decay_mm: 0}}\n", "streaks.placement.decay_mm is 0"},
        BadScenario{"radial_with_fixed_axis",
                    "family: streaks\nstreaks:\n  orientation: {isotropic: false}\n  placement: {orientation: radial}\n",
                    "streaks.orientation.isotropic must then stay true"},
        BadScenario{"unknown_line_shape", "family: streaks\nstreaks: {line_shape: spiral}\n", "allowed: straight, tube"},
        BadScenario{"taper_zero", "family: streaks\nstreaks: {line_taper: 0}\n", "streaks.line_taper is 0; allowed 0.1..1"},
        BadScenario{"tree_too_deep", "family: voids\nvoids:\n  tree: {generations: 12}\n",
                    "bad.yaml:3: voids.tree.generations is 12; allowed 0..8"},
        BadScenario{"tree_generations_not_integer", "family: voids\nvoids: {tree: {generations: 2.5}}\n", "integer"},
        BadScenario{"tree_unknown_key", "family: voids\nvoids: {tree: {trunks: 3}}\n", "'voids.tree.trunks' is not a key"},
        BadScenario{"dark_vessels", "family: voids\nvoids: {tree: {generations: 3, vessel_hu: -900}}\n",
                    "voids.tree.vessel_hu is -900"}),
    [](const ::testing::TestParamInfo<BadScenario>& param_info) { return std::string(param_info.param.name); });

TEST(ScenarioFile, SyntaxErrorsAndMissingFilesNameTheFile) {
  const std::string path = ::testing::TempDir() + "/broken.yaml";
  std::ofstream(path) << "family: streaks\nnoise: {sigma: [1, 2\n";
  try {
    read_scenario_file(path);
    FAIL() << "accepted a broken file";
  } catch (const UserError& error) {
    EXPECT_NE(std::string(error.what()).find("broken.yaml:"), std::string::npos) << error.what();
    EXPECT_NE(std::string(error.what()).find("YAML syntax error"), std::string::npos) << error.what();
  }
  EXPECT_THROW(read_scenario_file(::testing::TempDir() + "/does-not-exist.yaml"), UserError);
  const std::string empty = ::testing::TempDir() + "/empty.yaml";
  std::ofstream(empty) << "";
  EXPECT_THROW(read_scenario_file(empty), UserError);
}

// The resolved scenario written into every phantom set reads back to the same options.
TEST(ScenarioFile, ResolvedYamlRoundTrips) {
  for (const char* file : {"ageing-cohort-streaks.yaml", "screening-voids.yaml"}) {
    const ScenarioOptions original = read_scenario_file(std::string(FRUGAL_SOURCE_DIR) + "/scenarios/" + file);
    const std::string text = scenario_to_yaml(original);
    const ScenarioOptions again = read_scenario(YAML::Load(text), "resolved.yaml");
    EXPECT_EQ(scenario_to_yaml(again), text) << file;
  }
}

// The anatomy keys round-trip when set, and a scenario that leaves them at their defaults writes
// none of them, so its resolved text (recorded in every set and hashed into study cell keys) is
// what it was before they existed.
TEST(ScenarioFile, AnatomyKeysRoundTripAndStayOutWhenDefault) {
  const std::string streaks =
      "family: streaks\ngeometry: {anatomy_scale: physical, anatomy_size_mm: [130, 160, 110], spacing_mm: [1.5, 1.5, 1.5]}\n"
      "streaks:\n  line_shape: tube\n  line_bend_deg: 25\n  line_taper: 0.4\n"
      "  placement: {density: periventricular, decay_mm: 5, orientation: radial, radial_spread_deg: 12}\n";
  const std::string voids =
      "family: voids\ngeometry: {anatomy_scale: physical}\nvoids:\n  tree: {generations: 4, vessel_trunks: 2, airway_trunks: 1,"
      " trunk_length_mm: 35, vessel_radius_mm: 2, airway_radius_mm: 2.5, airway_wall_fraction: 0.25, min_radius_mm: 0.6,"
      " bend_deg: 15, vessel_hu: 35}\n";
  for (const std::string& text : {streaks, voids}) {
    const ScenarioOptions original = read_scenario(YAML::Load(text), "anatomy.yaml");
    const std::string written = scenario_to_yaml(original);
    const ScenarioOptions again = read_scenario(YAML::Load(written), "resolved.yaml");
    EXPECT_EQ(scenario_to_yaml(again), written);
    EXPECT_NE(written.find("anatomy_scale: physical"), std::string::npos) << written;
  }
  const ScenarioOptions s = read_scenario(YAML::Load(streaks), "anatomy.yaml");
  EXPECT_EQ(s.geometry.anatomy_size_mm[1], 160.0);
  EXPECT_EQ(s.streaks.placement.density, LesionDensity::periventricular);
  EXPECT_EQ(s.streaks.placement.radial_spread_deg, 12.0);
  EXPECT_EQ(s.streaks.line_shape, LineShape::tube);
  const ScenarioOptions v = read_scenario(YAML::Load(voids), "anatomy.yaml");
  EXPECT_EQ(v.geometry.anatomy_size_mm[0], 320.0);  // the voids default: an adult chest
  EXPECT_EQ(v.voids.tree.generations, 4);
  EXPECT_EQ(v.voids.tree.vessel_hu, 35.0);
  for (Family family : {Family::streaks, Family::voids}) {
    const std::string plain = scenario_to_yaml(default_scenario(family));
    for (const char* key : {"anatomy_scale", "anatomy_size_mm", "placement", "line_shape", "line_bend_deg", "line_taper", "tree"})
      EXPECT_EQ(plain.find(key), std::string::npos) << key << " in\n" << plain;
  }
}

}  // namespace
}  // namespace frugal
