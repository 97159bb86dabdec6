#include "phantoms/truth_tables.h"

#include <gtest/gtest.h>

#include <sstream>

#include <nlohmann/json.hpp>

#include "tests/support/schema_columns.h"

#include "frugal_version.h"

namespace frugal {
namespace {

// The written headers must match the versioned description users and other tools rely on.
TEST(TruthTables, HeadersMatchTheVersionedSchema) {
  const nlohmann::json schema = testing_support::load_schema("phantom_set_v1.json");
  EXPECT_EQ(schema.at("schema_version").get<int>(), kOutputSchemaVersion);
  EXPECT_EQ(truth_csv_header(), testing_support::schema_header(schema, "truth.csv"));
  EXPECT_EQ(objects_csv_header(), testing_support::schema_header(schema, "objects.csv"));
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
