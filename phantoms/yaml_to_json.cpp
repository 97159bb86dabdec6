#include "phantoms/yaml_to_json.h"

namespace frugal {

nlohmann::json yaml_to_json(const YAML::Node& node) {
  switch (node.Type()) {
    case YAML::NodeType::Map: {
      nlohmann::json object = nlohmann::json::object();
      for (const auto& entry : node) object[entry.first.as<std::string>()] = yaml_to_json(entry.second);
      return object;
    }
    case YAML::NodeType::Sequence: {
      nlohmann::json array = nlohmann::json::array();
      for (const auto& item : node) array.push_back(yaml_to_json(item));
      return array;
    }
    case YAML::NodeType::Scalar: {
      const std::string& text = node.Scalar();
      long long integer = 0;
      double real = 0.0;
      bool flag = false;
      if (YAML::convert<long long>::decode(node, integer)) return integer;
      if (YAML::convert<double>::decode(node, real)) return real;
      if (YAML::convert<bool>::decode(node, flag)) return flag;
      return text;
    }
    default:
      return nullptr;
  }
}

}  // namespace frugal
