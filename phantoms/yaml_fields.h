#pragma once
// Strict reading of one YAML mapping: every key read is remembered, unknown keys and wrong types
// become UserErrors naming the file, line, key path and what is allowed. Shared by every part
// that reads YAML (scenarios, rater models, studies).

#include <yaml-cpp/yaml.h>

#include <array>
#include <map>
#include <set>
#include <string>
#include <utility>
#include <vector>

namespace frugal {

// Lists and mappings nest at most this deep in a YAML file; frugal's own files need about 4
// levels, and the limit keeps hostile input away from the YAML library's recursive parser.
constexpr int kMaxYamlDepth = 64;

class YamlFields {
 public:
  // `path` is the key path of this mapping ("" at the top), used in messages. Rejects a node that
  // is not a mapping, keys that are not plain text and keys that appear twice.
  YamlFields(const YAML::Node& node, std::string file, std::string path);

  // Also records `key` as allowed here, for the message about unknown keys.
  bool has(const std::string& key) const;
  YamlFields child(const std::string& key);  // the key must hold a mapping
  const YAML::Node& node() const { return node_; }

  // Numbers must be plain decimal text: quoted numbers ("2"), hex (0x10), octal and .inf/.nan
  // are refused, as are integers outside int and numbers that overflow a double.
  void read(const std::string& key, double& value);
  void read(const std::string& key, int& value);
  void read(const std::string& key, bool& value);  // unquoted true/false (YAML's yes/no/on/off too)
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
  // The line is the key's own line, not its value's (a block value starts on the next line).
  std::string where(const std::string& key = "") const;
  [[noreturn]] void fail(const std::string& key, const std::string& message) const;

 private:
  const YAML::Node& value_node(const std::string& key);
  std::string key_path(const std::string& key) const;
  // The value of `key` (or its list entry `entry`, 1-based, when non-zero) as a number.
  double number_at(const std::string& key, const YAML::Node& value, std::size_t entry) const;
  int integer_at(const std::string& key, const YAML::Node& value, std::size_t entry) const;

  YAML::Node node_;
  std::string file_;
  std::string path_;
  YAML::Mark mark_;  // where this mapping's key is (its first entry at the top level)
  std::vector<std::pair<std::string, YAML::Mark>> known_keys_;  // in file order, with each key's place
  std::set<std::string> read_keys_;
  mutable std::set<std::string> allowed_keys_;  // every key a reader asked for
  YAML::Node scratch_;
};

// Loads a YAML file whose top level must be a mapping. Refuses up front what is not a regular
// file (a pipe would block), then, before any node is built: a second document, keys that repeat
// in one mapping or are not plain text, and nesting deeper than kMaxYamlDepth. Syntax errors
// name the file and line.
YAML::Node load_yaml_file(const std::string& file);
// The same checks on text already in memory (the file's contents); `file` names it in messages.
YAML::Node parse_yaml_text(const std::string& text, const std::string& file);

// 1-based line of a dotted key path ("streaks.count.mean") in `node`, so that validate()
// messages, which start with the key path, can name a line. When the last keys are absent (the
// value is a default), the line of the deepest enclosing key the file does have; 0 when none.
int line_of_key_path(const YAML::Node& node, const std::string& path);

template <std::size_t N>
void YamlFields::read(const std::string& key, std::array<double, N>& value) {
  if (!has(key)) return;
  const YAML::Node& list = value_node(key);
  if (!list.IsSequence() || list.size() != N) fail(key, "must be a list of " + std::to_string(N) + " numbers");
  for (std::size_t i = 0; i < N; ++i) value[i] = number_at(key, list[i], i + 1);
}

template <std::size_t N>
void YamlFields::read(const std::string& key, std::array<int, N>& value) {
  if (!has(key)) return;
  const YAML::Node& list = value_node(key);
  if (!list.IsSequence() || list.size() != N) fail(key, "must be a list of " + std::to_string(N) + " integers");
  for (std::size_t i = 0; i < N; ++i) value[i] = integer_at(key, list[i], i + 1);
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
