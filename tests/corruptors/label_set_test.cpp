#include "corruptors/label_set.h"

#include <gtest/gtest.h>

#include <algorithm>

#include <nlohmann/json.hpp>

#include "tests/support/schema_columns.h"

#include "frugal_version.h"

namespace frugal {
namespace {

// The written headers must match the versioned description in results_schema/.
TEST(LabelSet, HeadersMatchTheVersionedSchema) {
  const nlohmann::json schema = testing_support::load_schema("label_set_v1.json");
  EXPECT_EQ(schema.at("schema_version").get<int>(), kOutputSchemaVersion);
  EXPECT_EQ(labels_csv_header(), testing_support::schema_header(schema, "labels.csv"));
  EXPECT_EQ(clicks_csv_header(), testing_support::schema_header(schema, "clicks.csv"));
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
