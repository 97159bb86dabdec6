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
        BadScenario{"not_a_mapping", "- just\n- a list\n", "must be a mapping"}),
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

}  // namespace
}  // namespace frugal
