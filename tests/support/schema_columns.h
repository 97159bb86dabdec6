#pragma once
// Test helper: the CSV header a table's entry in results_schema/*.json describes.

#include <fstream>
#include <string>

#include <nlohmann/json.hpp>

namespace frugal::testing_support {

// The parsed schema file results_schema/<file>; a missing file throws, failing the calling test.
inline nlohmann::json load_schema(const std::string& file) {
  std::ifstream stream(std::string(FRUGAL_SOURCE_DIR) + "/results_schema/" + file);
  return nlohmann::json::parse(stream);
}

// "name1,name2,...\n" for the table `table` of `schema`.
inline std::string schema_header(const nlohmann::json& schema, const std::string& table) {
  std::string header;
  for (const auto& column : schema.at("tables").at(table))
    header += (header.empty() ? "" : ",") + column.at("name").get<std::string>();
  return header + "\n";
}

}  // namespace frugal::testing_support
