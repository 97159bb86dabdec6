#include "phantoms/yaml_fields.h"

#include <filesystem>
#include <fstream>

#include "phantoms/user_error.h"

namespace frugal {

YamlFields::YamlFields(const YAML::Node& node, std::string file, std::string path)
    : node_(node), file_(std::move(file)), path_(std::move(path)) {
  if (!node_.IsMap()) {
    const int line = node_.Mark().line + 1;
    throw UserError(file_ + ":" + std::to_string(line) + ": " + (path_.empty() ? "the document" : "'" + path_ + "'") +
                    " must be a mapping of keys to values");
  }
  for (const auto& entry : node_) known_keys_.push_back(entry.first.as<std::string>());
}

bool YamlFields::has(const std::string& key) const {
  allowed_keys_.insert(key);
  for (const auto& known : known_keys_)
    if (known == key) return true;
  return false;
}

std::string YamlFields::key_path(const std::string& key) const {
  if (key.empty()) return path_;
  return path_.empty() ? key : path_ + "." + key;
}

std::string YamlFields::where(const std::string& key) const {
  YAML::Mark mark = node_.Mark();
  if (!key.empty() && has(key)) mark = node_[key].Mark();
  const std::string path = key_path(key);
  return file_ + ":" + std::to_string(mark.line + 1) + ": " + (path.empty() ? std::string("the top level") : "'" + path + "'");
}

void YamlFields::fail(const std::string& key, const std::string& message) const {
  throw UserError(where(key) + " " + message);
}

const YAML::Node& YamlFields::value_node(const std::string& key) {
  read_keys_.insert(key);
  scratch_.reset(node_[key]);
  return scratch_;
}

void YamlFields::require(const std::string& key) {
  if (!has(key)) throw UserError(where() + " is missing the required key '" + key + "'");
}

YamlFields YamlFields::child(const std::string& key) {
  allowed_keys_.insert(key);
  const YAML::Node& value = value_node(key);
  if (!value.IsMap()) fail(key, "must be a mapping of keys to values");
  return YamlFields(value, file_, key_path(key));
}

template <class T>
T YamlFields::scalar_as(const std::string& key, const char* type_name) {
  const YAML::Node& value = value_node(key);
  if (!value.IsScalar()) fail(key, std::string("must be ") + type_name);
  try {
    return value.as<T>();
  } catch (const YAML::Exception&) {
    fail(key, "is '" + value.Scalar() + "', which is not " + type_name);
  }
}

void YamlFields::read(const std::string& key, double& value) {
  if (has(key)) value = scalar_as<double>(key, "a number");
}
void YamlFields::read(const std::string& key, int& value) {
  if (has(key)) value = scalar_as<int>(key, "an integer");
}
void YamlFields::read(const std::string& key, bool& value) {
  if (has(key)) value = scalar_as<bool>(key, "true or false");
}
void YamlFields::read(const std::string& key, std::string& value) {
  if (has(key)) value = scalar_as<std::string>(key, "a text value");
}

void YamlFields::read(const std::string& key, std::vector<std::string>& value) {
  if (!has(key)) return;
  const YAML::Node& list = value_node(key);
  if (!list.IsSequence()) fail(key, "must be a list");
  value.clear();
  for (const auto& item : list) {
    if (!item.IsScalar()) fail(key, "must be a list of text values");
    value.push_back(item.Scalar());
  }
}

void YamlFields::read(const std::string& key, std::vector<double>& value) {
  if (!has(key)) return;
  const YAML::Node& list = value_node(key);
  if (!list.IsSequence()) fail(key, "must be a list of numbers");
  value.clear();
  for (std::size_t i = 0; i < list.size(); ++i) {
    if (!list[i].IsScalar()) fail(key, "entry " + std::to_string(i + 1) + " is not a number");
    try {
      value.push_back(list[i].as<double>());
    } catch (const YAML::Exception&) {
      fail(key, "entry " + std::to_string(i + 1) + " is not a number");
    }
  }
}

void YamlFields::finish() {
  for (const auto& key : known_keys_) {
    if (read_keys_.count(key) != 0) continue;
    std::string allowed;
    for (const auto& known : allowed_keys_) allowed += (allowed.empty() ? "" : ", ") + known;
    throw UserError(where(key) + " is not a key frugal knows here; allowed: " + allowed);
  }
}

int line_of_key_path(const YAML::Node& node, const std::string& path) {
  const auto dot = path.find('.');
  const std::string key = path.substr(0, dot);
  if (!node.IsMap() || !node[key]) return 0;
  const YAML::Node value = node[key];
  if (dot == std::string::npos) return value.Mark().line + 1;
  const int deeper = line_of_key_path(value, path.substr(dot + 1));
  return deeper > 0 ? deeper : value.Mark().line + 1;
}

YAML::Node load_yaml_file(const std::string& file) {
  std::error_code ignored;
  if (std::filesystem::is_directory(file, ignored)) throw UserError(file + ": is a folder, not a YAML file");
  std::ifstream stream(file);
  if (!stream) throw UserError(file + ": cannot open the file for reading");
  try {
    YAML::Node root = YAML::Load(stream);
    if (!root.IsDefined() || root.IsNull()) throw UserError(file + ": the file is empty; expected a YAML mapping");
    return root;
  } catch (const YAML::ParserException& error) {
    throw UserError(file + ":" + std::to_string(error.mark.line + 1) + ":" + std::to_string(error.mark.column + 1) +
                    ": YAML syntax error: " + error.msg);
  }
}

}  // namespace frugal
