#include "phantoms/yaml_fields.h"

#include <gtest/gtest.h>
#include <sys/stat.h>

#include <chrono>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <future>
#include <string>

#include "phantoms/user_error.h"

namespace frugal {
namespace {

std::string temp_file(const std::string& name, const std::string& text) {
  const std::string path = ::testing::TempDir() + "/" + name;
  std::ofstream(path, std::ios::binary) << text;
  return path;
}

// The message load_yaml_file gives for `text`, or "" when it accepts the file.
std::string load_error(const std::string& name, const std::string& text) {
  try {
    load_yaml_file(temp_file(name, text));
  } catch (const UserError& error) {
    return error.what();
  }
  return "";
}

// The message of reading `key` of the top-level mapping as type T, or "" when accepted.
template <class T>
std::string read_error(const std::string& text, const std::string& key, T& value) {
  try {
    YamlFields fields(YAML::Load(text), "f.yaml", "");
    fields.read(key, value);
  } catch (const UserError& error) {
    return error.what();
  }
  return "";
}

void expect_contains(const std::string& message, const std::string& fragment) {
  EXPECT_NE(message.find(fragment), std::string::npos) << "message: " << message << "\nexpected: " << fragment;
}

struct BadFile {
  const char* name;
  const char* yaml;
  const char* expected;  // file, 1-based line, key path and what is allowed
};

class BadYamlFiles : public ::testing::TestWithParam<BadFile> {};

// Expected messages: common practice, no source (frugal's "FILE:LINE: key path ...; allowed:" form).
TEST_P(BadYamlFiles, AreRefusedWithFileLineAndWhatIsAllowed) {
  const BadFile& c = GetParam();
  const std::string message = load_error(std::string(c.name) + ".yaml", c.yaml);
  ASSERT_FALSE(message.empty()) << "accepted: " << c.yaml;
  expect_contains(message, c.expected);
  expect_contains(message, "allowed:");
}

INSTANTIATE_TEST_SUITE_P(
    Catalogue, BadYamlFiles,
    ::testing::Values(
        // yaml-cpp keeps the first of two equal keys silently; frugal refuses the second.
        BadFile{"duplicate_top", "family: streaks\nname: a\nfamily: voids\n",
                "duplicate_top.yaml:3: 'family' appears twice in one mapping (first on line 1)"},
        BadFile{"duplicate_nested", "family: streaks\nnoise:\n  sigma: 1\n  sigma: 2\n",
                "duplicate_nested.yaml:4: 'noise.sigma' appears twice"},
        BadFile{"duplicate_flow", "geometry: {dims: 2, dims: 3}\n",
                "duplicate_flow.yaml:1: 'geometry.dims' appears twice"},
        BadFile{"duplicate_in_list", "items:\n  - {a: 1, a: 2}\n", "duplicate_in_list.yaml:2: 'items.a' appears twice"},
        BadFile{"duplicate_quoted", "dims: 2\n\"dims\": 3\n", "duplicate_quoted.yaml:2: 'dims' appears twice"},
        BadFile{"second_document", "family: streaks\n---\nfamily: voids\n",
                "second_document.yaml:2: a second YAML document starts here"},
        BadFile{"trailing_separator", "family: streaks\n---\n", "trailing_separator.yaml:2: a second YAML document"},
        BadFile{"list_key", "[1]: 2\n", "list_key.yaml:1: the top level has a list as a key"},
        BadFile{"mapping_key", "family: streaks\n{a: 1}: 2\n",
                "mapping_key.yaml:2: the top level has a mapping as a key"},
        BadFile{"empty_key", "noise:\n  : 2\n", "empty_key.yaml:2: 'noise' has an empty key"},
        BadFile{"alias_key", "a: &x k\n*x : 2\n", "alias_key.yaml:2: the top level has an alias"},
        BadFile{"syntax", "family: streaks\nnoise: {sigma: [1, 2\n", "YAML syntax error"},
        BadFile{"empty", "", "empty.yaml: the file is empty; allowed: a YAML mapping"},
        BadFile{"only_comments", "# nothing here\n", "only_comments.yaml: the file is empty"}),
    [](const ::testing::TestParamInfo<BadFile>& param_info) { return std::string(param_info.param.name); });

TEST(YamlFields, NestingIsLimitedBeforeTheParserRecurses) {
  // 100k levels would exhaust the stack of a recursive parser; each must fail fast and cleanly
  // (common practice, no source: the limit is frugal's own kMaxYamlDepth).
  const std::string open(100000, '[');
  const std::string closed = open + std::string(100000, ']');
  std::string mappings;
  for (int i = 0; i < 100000; ++i) mappings += "{a: ";
  std::string dashes;
  for (int i = 0; i < 100000; ++i) dashes += "- ";
  const auto start = std::chrono::steady_clock::now();
  for (const std::string& text : {open, closed, mappings, dashes + "1"}) {
    const std::string message = load_error("deep.yaml", text + "\n");
    expect_contains(message, "deep.yaml:1:");
    expect_contains(message, "more than 64 levels deep; allowed: at most 64 levels");
  }
  EXPECT_LT(std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count(), 10.0);
  // Block style: the line of the first mapping too deep, with its key path.
  std::string block;
  for (int i = 0; i < 100; ++i)
    block += std::string(static_cast<std::size_t>(i), ' ') + "k" + std::to_string(i) + ":\n";
  const std::string message = load_error("deep-block.yaml", block);
  expect_contains(message, "deep-block.yaml:65: 'k0.k1.");
  expect_contains(message, "k63' nests lists and mappings more than 64 levels deep");
}

TEST(YamlFields, SixtyFourLevelsAreAccepted) {
  const std::string text = std::string(64, '[') + std::string(64, ']');
  EXPECT_EQ(load_error("deep-64.yaml", "a: " + text.substr(1, text.size() - 2) + "\n"), "");  // 63 under a mapping
  EXPECT_NE(load_error("deep-65.yaml", "a: " + text + "\n"), "");                             // 64 under a mapping
}

TEST(YamlFields, NumbersMustBePlainDecimalText) {
  double number = 0.0;
  int integer = 0;
  // Accepted forms (YAML 1.2 core schema, decimal only) and the values they give.
  EXPECT_EQ(read_error("x: 2.5e-1\n", "x", number), "");
  EXPECT_DOUBLE_EQ(number, 0.25);
  EXPECT_EQ(read_error("x: -.5\n", "x", number), "");
  EXPECT_DOUBLE_EQ(number, -0.5);
  EXPECT_EQ(read_error("x: 010\n", "x", integer), "");
  EXPECT_EQ(integer, 10);  // decimal, not octal 8
  EXPECT_EQ(read_error("x: !!int 7\n", "x", integer), "");
  EXPECT_EQ(integer, 7);
  // Refused forms: common practice, no source.
  expect_contains(read_error("a: 1\ndims: \"2\"\n", "dims", integer),
                  "f.yaml:2: 'dims' is \"2\" (in quotes), which is not an integer; allowed: a whole decimal number");
  expect_contains(read_error("sigma: '2.5'\n", "sigma", number), "which is not a number; allowed: a decimal number");
  expect_contains(read_error("sigma: 0x10\n", "sigma", number), "'sigma' is '0x10', which is not a decimal number");
  expect_contains(read_error("count: 0x10\n", "count", integer), "'count' is '0x10', which is not an integer");
  expect_contains(read_error("sigma: .inf\n", "sigma", number), "is '.inf', which is not a decimal number");
  expect_contains(read_error("sigma: 1e999\n", "sigma", number), "is '1e999', which is not a finite number");
  expect_contains(read_error("count: 99999999999\n", "count", integer),
                  "which is not an integer frugal can hold; allowed: a whole decimal number without quotes, such as 3, "
                  "from -2147483648 to 2147483647");
  expect_contains(read_error("count: 2.5\n", "count", integer), "is '2.5', which is not an integer");
  expect_contains(read_error("count: [1]\n", "count", integer), "'count' must be an integer; allowed:");
  std::array<double, 3> triple{};
  try {
    YamlFields fields(YAML::Load("spacing_mm: [1, \"2\", 3]\n"), "f.yaml", "");
    fields.read("spacing_mm", triple);
    ADD_FAILURE() << "accepted a quoted list entry";
  } catch (const UserError& error) {
    expect_contains(error.what(), "'spacing_mm' entry 2 is not a number (\"2\" (in quotes)); allowed:");
  }
  bool flag = false;
  expect_contains(read_error("flag: \"true\"\n", "flag", flag), "which is not true or false; allowed: true or false");
}

TEST(YamlFields, NodesBuiltElsewhereAreCheckedToo) {
  // YAML::Load keeps both entries of a repeated key; the constructor refuses them.
  try {
    YamlFields fields(YAML::Load("a: 1\nb: 2\na: 3\n"), "f.yaml", "");
    ADD_FAILURE() << "accepted a repeated key";
  } catch (const UserError& error) {
    expect_contains(error.what(), "f.yaml:3: 'a' appears twice in one mapping (first on line 1)");
  }
  EXPECT_THROW(YamlFields(YAML::Load("[1]: 2\n"), "f.yaml", ""), UserError);  // not a yaml-cpp bad conversion
}

TEST(YamlFields, BlockKeysAreReportedOnTheirOwnLine) {
  // `streakz:` is on line 2; its block value starts on line 3, which was reported before.
  const YAML::Node root = YAML::Load("family: streaks\nstreakz:\n  count: 3\n");
  YamlFields fields(root, "f.yaml", "");
  std::string family;
  fields.read("family", family);
  try {
    fields.finish();
    ADD_FAILURE() << "accepted an unknown key";
  } catch (const UserError& error) {
    expect_contains(error.what(), "f.yaml:2: 'streakz' is not a key frugal knows here; allowed: family");
  }
  EXPECT_EQ(line_of_key_path(root, "streakz"), 2);
  EXPECT_EQ(line_of_key_path(root, "streakz.count"), 3);
  EXPECT_EQ(line_of_key_path(root, "streakz.length_mm"), 2);  // absent: the enclosing key's line
  EXPECT_EQ(line_of_key_path(root, "noise.sigma"), 0);
  // A missing required key points at the section's own key.
  YamlFields section = YamlFields(root, "f.yaml", "").child("streakz");
  try {
    section.require("min");
    ADD_FAILURE() << "accepted a missing key";
  } catch (const UserError& error) {
    expect_contains(error.what(), "f.yaml:2: 'streakz' is missing the required key 'min'");
  }
}

TEST(YamlFields, OnlyRegularFilesAreOpened) {
  const std::string folder = ::testing::TempDir() + "/a-folder.yaml";
  std::filesystem::create_directories(folder);
  const std::string pipe = ::testing::TempDir() + "/a-pipe.yaml";
  std::filesystem::remove(pipe);
  ASSERT_EQ(mkfifo(pipe.c_str(), 0600), 0);
  // A pipe with no writer blocked forever before; the check must answer without opening it.
  auto answer = std::async(std::launch::async, [&] {
    try {
      load_yaml_file(pipe);
    } catch (const UserError& error) {
      return std::string(error.what());
    }
    return std::string();
  });
  if (answer.wait_for(std::chrono::seconds(10)) != std::future_status::ready) {
    ADD_FAILURE() << "load_yaml_file blocked on a pipe";
    std::_Exit(1);  // the blocked thread cannot be joined
  }
  // Common practice, no source.
  expect_contains(answer.get(), "a-pipe.yaml: not a regular file (a pipe, device or socket); allowed: a YAML file");
  for (const auto& [path, expected] :
       {std::pair<std::string, std::string>{folder, "a-folder.yaml: is a folder, not a file; allowed: a YAML file"},
        {"/dev/null", "/dev/null: not a regular file"},
        {::testing::TempDir() + "/missing.yaml", "missing.yaml: no such file; allowed: a YAML file"}}) {
    try {
      load_yaml_file(path);
      ADD_FAILURE() << "accepted " << path;
    } catch (const UserError& error) {
      expect_contains(error.what(), expected);
    }
  }
  std::filesystem::remove(pipe);
}

}  // namespace
}  // namespace frugal
