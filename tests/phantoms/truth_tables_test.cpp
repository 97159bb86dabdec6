#include "phantoms/truth_tables.h"

#include <gtest/gtest.h>

#include <fstream>
#include <sstream>

#include <nlohmann/json.hpp>

#include "frugal_version.h"

namespace frugal {
namespace {

std::string columns_from_schema(const nlohmann::json& table) {
  std::string header;
  for (const auto& column : table) header += (header.empty() ? "" : ",") + column.at("name").get<std::string>();
  return header + "\n";
}

// The written headers must match the versioned description users and other tools rely on.
TEST(TruthTables, HeadersMatchTheVersionedSchema) {
  std::ifstream file(std::string(FRUGAL_SOURCE_DIR) + "/results_schema/phantom_set_v1.json");
  ASSERT_TRUE(file);
  const nlohmann::json schema = nlohmann::json::parse(file);
  EXPECT_EQ(schema.at("schema_version").get<int>(), kOutputSchemaVersion);
  EXPECT_EQ(truth_csv_header(), columns_from_schema(schema.at("tables").at("truth.csv")));
  EXPECT_EQ(objects_csv_header(), columns_from_schema(schema.at("tables").at("objects.csv")));
}

TEST(TruthTables, RowsHaveOneFieldPerColumnAndNaForStreaksDensitometry) {
  SubjectTruth truth;
  truth.family = Family::streaks;
  truth.objects.resize(2);
  truth.objects[0].id = 1;
  truth.objects[1].id = 2;
  const auto fields = [](const std::string& line) { return std::count(line.begin(), line.end(), ',') + 1; };
  EXPECT_EQ(fields(truth_csv_row(truth, "a.nii.gz", "b.nii.gz")), fields(truth_csv_header()));
  EXPECT_NE(truth_csv_row(truth, "a", "b").find(",NA,"), std::string::npos);
  std::istringstream rows(objects_csv_rows(truth));
  std::string line;
  int count = 0;
  while (std::getline(rows, line)) {
    EXPECT_EQ(fields(line), fields(objects_csv_header()));
    ++count;
  }
  EXPECT_EQ(count, 2);
  EXPECT_EQ(csv_version_comment("phantom truth").rfind("# frugal ", 0), 0U);
}

}  // namespace
}  // namespace frugal
