#pragma once
// Strict reading of one YAML mapping: every key read is remembered, unknown keys and wrong types
// become UserErrors naming the file, line, key path and what is allowed. Shared by every part
// that reads YAML (scenarios, rater models, studies).

#include <yaml-cpp/yaml.h>

#include <array>
#include <map>
#include <set>
#include <string>
#include <vector>

namespace frugal {

class YamlFields {
 public:
  // `path` is the key path of this mapping ("" at the top), used in messages.
  YamlFields(const YAML::Node& node, std::string file, std::string path);

  // Also records `key` as allowed here, for the message about unknown keys.
  bool has(const std::string& key) const;
  YamlFields child(const std::string& key);  // the key must hold a mapping
  const YAML::Node& node() const { return node_; }

  void read(const std::string& key, double& value);
  void read(const std::string& key, int& value);
  void read(const std::string& key, bool& value);
  void read(const std::string& key, std::string& value);
  template <std::size_t N>
  void read(const std::string& key, std::array<double, N>& value);
  template <std::size_t N>
  void read(const std::string& key, std::array<int, N>& value);
  void read(const std::string& key, std::vector<std::string>& value);
  void read(const std::string& key, std::vector<double>& value);
  // A string that must be one of `choices` (name -> value).
  template <class Enum>
  void read_choice(const std::string& key, const std::map<std::string, Enum>& choices, Enum& value);
  void require(const std::string& key);

  // Rejects keys that were never read; call after all reads. `allowed` lists them in the message.
  void finish();

  // "file:line: key path" for messages about the value of `key` (or this mapping when empty).
  std::string where(const std::string& key = "") const;
  [[noreturn]] void fail(const std::string& key, const std::string& message) const;

 private:
  const YAML::Node& value_node(const std::string& key);
  std::string key_path(const std::string& key) const;
  template <class T>
  T scalar_as(const std::string& key, const char* type_name);

  YAML::Node node_;
  std::string file_;
  std::string path_;
  std::vector<std::string> known_keys_;
  std::set<std::string> read_keys_;
  mutable std::set<std::string> allowed_keys_;  // every key a reader asked for
  YAML::Node scratch_;
};

// Loads a YAML file whose top level must be a mapping; syntax errors name the file and line.
YAML::Node load_yaml_file(const std::string& file);

// 1-based line of a dotted key path ("streaks.count.mean") in `node`, so that validate()
// messages, which start with the key path, can name a line. When the last keys are absent (the
// value is a default), the line of the deepest enclosing key the file does have; 0 when none.
int line_of_key_path(const YAML::Node& node, const std::string& path);

template <std::size_t N>
void YamlFields::read(const std::string& key, std::array<double, N>& value) {
  if (!has(key)) return;
  const YAML::Node& list = value_node(key);
  if (!list.IsSequence() || list.size() != N)
    fail(key, "must be a list of " + std::to_string(N) + " numbers");
  for (std::size_t i = 0; i < N; ++i) {
    try {
      value[i] = list[i].as<double>();
    } catch (const YAML::Exception&) {
      fail(key, "entry " + std::to_string(i + 1) + " is not a number");
    }
  }
}

template <std::size_t N>
void YamlFields::read(const std::string& key, std::array<int, N>& value) {
  if (!has(key)) return;
  const YAML::Node& list = value_node(key);
  if (!list.IsSequence() || list.size() != N)
    fail(key, "must be a list of " + std::to_string(N) + " integers");
  for (std::size_t i = 0; i < N; ++i) {
    try {
      value[i] = list[i].as<int>();
    } catch (const YAML::Exception&) {
      fail(key, "entry " + std::to_string(i + 1) + " is not an integer");
    }
  }
}

template <class Enum>
void YamlFields::read_choice(const std::string& key, const std::map<std::string, Enum>& choices, Enum& value) {
  if (!has(key)) return;
  std::string text;
  read(key, text);
  const auto found = choices.find(text);
  if (found == choices.end()) {
    std::string allowed;
    for (const auto& [name, unused] : choices) allowed += (allowed.empty() ? "" : ", ") + name;
    fail(key, "is '" + text + "'; allowed: " + allowed);
  }
  value = found->second;
}

}  // namespace frugal
