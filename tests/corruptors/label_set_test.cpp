#include "corruptors/label_set.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <fstream>

#include <nlohmann/json.hpp>

#include "frugal_version.h"

namespace frugal {
namespace {

std::string columns_from_schema(const nlohmann::json& table) {
  std::string header;
  for (const auto& column : table) header += (header.empty() ? "" : ",") + column.at("name").get<std::string>();
  return header + "\n";
}

// The written headers must match the versioned description in results_schema/.
TEST(LabelSet, HeadersMatchTheVersionedSchema) {
  std::ifstream file(std::string(FRUGAL_SOURCE_DIR) + "/results_schema/label_set_v1.json");
  ASSERT_TRUE(file);
  const nlohmann::json schema = nlohmann::json::parse(file);
  EXPECT_EQ(schema.at("schema_version").get<int>(), kOutputSchemaVersion);
  EXPECT_EQ(labels_csv_header(), columns_from_schema(schema.at("tables").at("labels.csv")));
  EXPECT_EQ(clicks_csv_header(), columns_from_schema(schema.at("tables").at("clicks.csv")));
}

TEST(LabelSet, RowsHaveOneFieldPerColumn) {
  Label label;
  label.kind = LabelKind::points;
  label.clicks.resize(3);
  const auto fields = [](const std::string& line) { return std::count(line.begin(), line.end(), ',') + 1; };
  EXPECT_EQ(fields(labels_csv_row(label, "NA")), fields(labels_csv_header()));
  const std::string rows = clicks_csv_rows(label);
  EXPECT_EQ(std::count(rows.begin(), rows.end(), '\n'), 3);
  EXPECT_EQ(fields(rows.substr(0, rows.find('\n') + 1)), fields(clicks_csv_header()));
  label.kind = LabelKind::count;
  label.value = 7;
  EXPECT_NE(labels_csv_row(label, "NA").find(",count,7,"), std::string::npos);
}

}  // namespace
}  // namespace frugal
