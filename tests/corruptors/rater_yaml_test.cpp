#include "corruptors/rater_yaml.h"

#include <gtest/gtest.h>

#include <fstream>
#include <string>

#include "phantoms/user_error.h"
#include "phantoms/yaml_fields.h"

namespace frugal {
namespace {

std::string read_error(const std::string& text) {
  try {
    read_rater(YAML::Load(text), "bad.yaml");
  } catch (const UserError& error) {
    return error.what();
  }
  return "";
}

struct BadRater {
  const char* name;
  const char* yaml;
  const char* expected;  // a fragment the message must contain
};

class BadRaters : public ::testing::TestWithParam<BadRater> {};

TEST_P(BadRaters, AreRejectedWithFileLineKeyAndWhatIsAllowed) {
  const BadRater& c = GetParam();
  const std::string message = read_error(c.yaml);
  ASSERT_FALSE(message.empty()) << "accepted: " << c.yaml;
  EXPECT_NE(message.find(c.expected), std::string::npos) << message;
}

INSTANTIATE_TEST_SUITE_P(
    Catalogue, BadRaters,
    ::testing::Values(
        BadRater{"not_a_mapping", "- a\n- b\n", "bad.yaml:1: the document must be a mapping"},
        BadRater{"unknown_top_key", "name: x\ndetecton: {lapse: 0.1}\n",
                 "bad.yaml:2: 'detecton' is not a key frugal knows here; allowed: clicks, cost, counting, detection, "
                 "grading, name, outline, panel, region_grow"},
        BadRater{"unknown_nested_key", "name: x\ndetection:\n  size_50_mm: 3\n",
                 "bad.yaml:3: 'detection.size_50_mm' is not a key frugal knows here; allowed: contrast50, "
                 "contrast_slope, dot_confusion, lapse, line_confusion, size50_mm, size_slope"},
        BadRater{"section_not_a_mapping", "name: x\ncost: 12\n",
                 "bad.yaml:2: 'cost' must be a mapping of keys to values"},
        BadRater{"not_a_number", "name: x\ngrading:\n  perception_sd: wide\n",
                 "bad.yaml:3: 'grading.perception_sd' is 'wide', which is not a number"},
        BadRater{"not_an_integer", "name: x\ncounting:\n  cap: 2.5\n",
                 "bad.yaml:3: 'counting.cap' is '2.5', which is not an integer"},
        BadRater{"edges_not_a_list", "name: x\ngrading:\n  bin_edges: 0.1\n",
                 "bad.yaml:3: 'grading.bin_edges' must be a list of numbers"},
        BadRater{"edge_not_a_number", "name: x\ngrading:\n  bin_edges: [0, 0.1, lots]\n",
                 "bad.yaml:3: 'grading.bin_edges' entry 3 is not a number"},
        BadRater{"edges_decreasing", "name: x\n\ngrading:\n  bin_edges: [0, 0.2, 0.1]\n",
                 "bad.yaml:4: grading.bin_edges entry 3 is 0.1; edges must increase strictly (previous 0.2) (see "
                 "docs/raters.md)"},
        BadRater{"range_with_line", "name: x\ndetection:\n  size_slope: 3\n  lapse: 0.9\n",
                 "bad.yaml:4: detection.lapse is 0.9; allowed 0..0.5 (probability) (see docs/raters.md)"},
        BadRater{"range_of_a_default_points_at_section", "name: x\npanel: {raters: 0}\n",
                 "bad.yaml:2: panel.raters is 0; allowed 1..100"},
        BadRater{"empty_name", "name: ''\n", "bad.yaml:1: name is empty"},
        BadRater{"boolean_for_number", "name: x\nclicks: {jitter_mm: [1, 2]}\n",
                 "bad.yaml:2: 'clicks.jitter_mm' must be a number"},
        BadRater{"negative_cost", "name: x\ncost:\n  outline_per_lesion_s: -20\n",
                 "bad.yaml:3: cost.outline_per_lesion_s is -20; allowed 0..86400 s"}),
    [](const ::testing::TestParamInfo<BadRater>& param_info) { return std::string(param_info.param.name); });

TEST(RaterFile, EmptyMappingGivesTheDefaults) {
  const RaterOptions options = read_rater(YAML::Load("{}"), "empty.yaml");
  EXPECT_EQ(rater_to_yaml(options), rater_to_yaml(RaterOptions{}));
}

TEST(RaterFile, SyntaxErrorsAndMissingFilesNameTheFile) {
  const std::string path = ::testing::TempDir() + "/broken-rater.yaml";
  std::ofstream(path) << "name: x\ngrading: {bin_edges: [0, 0.1\n";
  try {
    read_rater_file(path);
    FAIL() << "accepted a broken file";
  } catch (const UserError& error) {
    EXPECT_NE(std::string(error.what()).find("broken-rater.yaml:"), std::string::npos) << error.what();
    EXPECT_NE(std::string(error.what()).find("YAML syntax error"), std::string::npos) << error.what();
  }
  EXPECT_THROW(read_rater_file(::testing::TempDir() + "/no-such-rater.yaml"), UserError);
}

// Every key is written and reads back to the same options (the shipped examples and a rater
// with every value changed from its default).
TEST(RaterFile, ResolvedYamlRoundTrips) {
  for (const char* file : {"careful-reader.yaml", "quick-reader.yaml"}) {
    const RaterOptions original = read_rater_file(std::string(FRUGAL_SOURCE_DIR) + "/raters/" + file);
    const std::string text = rater_to_yaml(original);
    const RaterOptions again = read_rater(YAML::Load(text), "resolved.yaml");
    EXPECT_EQ(rater_to_yaml(again), text) << file;
  }
  RaterOptions o;
  o.name = "everything changed";
  o.detection = {2.5, 4.0, 0.15, 9.0, 0.03, 0.2, 0.05};
  o.counting = {0.1, 12};
  o.grading.bin_edges = {0.01, 0.2, 0.4};
  o.grading.perception_sd = 0.1 / 3.0;  // a value that needs all 17 digits
  o.grading.bias = -0.2;
  o.clicks.jitter_mm = 0.7;
  o.region_grow = {2, 0.3, 8, 200.0};
  o.outline = {0.8, 3.0, 0.4, 0.3, 0.2, 0.5};
  o.cost = {1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11};
  o.panel = {3, 0.2, 0.1};
  ASSERT_EQ(o.validate(), "");
  const std::string text = rater_to_yaml(o);
  const RaterOptions again = read_rater(YAML::Load(text), "resolved.yaml");
  EXPECT_EQ(rater_to_yaml(again), text);
  EXPECT_EQ(again.grading.perception_sd, o.grading.perception_sd);
  EXPECT_EQ(again.cost.outline_per_boundary_mm_s, 11.0);
  EXPECT_EQ(again.region_grow.connectivity, 8);
  EXPECT_EQ(again.grading.bin_edges, o.grading.bin_edges);
}

// Found by fuzz/rater_yaml_fuzz: a name that is a lone carriage return was read, and the resolved
// YAML written of it did not read back. Blank names and control characters are refused, with the
// file and key; any printable name round-trips (common practice, no source).
TEST(RaterFile, AControlCharacterOrBlankNameIsRefusedAndAPrintableOneRoundTrips) {
  for (const std::string& text : {std::string("name: \r"), std::string("name: \"a\\tb\""), std::string("name: \"  \"")}) {
    try {
      read_rater(parse_yaml_text(text, "fuzz.yaml"), "fuzz.yaml");
      ADD_FAILURE() << "accepted " << text;
    } catch (const UserError& error) {
      EXPECT_NE(std::string(error.what()).find("fuzz.yaml"), std::string::npos) << error.what();
      EXPECT_NE(std::string(error.what()).find("name"), std::string::npos) << error.what();
    }
  }
  const RaterOptions read = read_rater(parse_yaml_text("name: \"reader: 'A' #1, ünïcode\"", "ok.yaml"), "ok.yaml");
  const RaterOptions again = read_rater(parse_yaml_text(rater_to_yaml(read), "resolved.yaml"), "resolved.yaml");
  EXPECT_EQ(again.name, read.name);
}

}  // namespace
}  // namespace frugal
