#include "experiments/scoring/predictions_table.h"

#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <string>

#include "frugal_version.h"
#include "phantoms/truth_tables.h"
#include "phantoms/user_error.h"
#include "tests/support/schema_columns.h"

namespace frugal::scoring {
namespace {

namespace fs = std::filesystem;

std::string write_file(const std::string& name, const std::string& text) {
  const std::string path = ::testing::TempDir() + "/" + name;
  std::ofstream(path) << text;
  return path;
}

// Expects read_predictions_table to refuse `text` with a message holding every piece of `parts`.
void expect_refused(const std::string& text, const std::vector<std::string>& parts) {
  const std::string path = write_file("refused.csv", text);
  try {
    read_predictions_table(path);
    ADD_FAILURE() << "accepted:\n" << text;
  } catch (const UserError& error) {
    for (const std::string& part : parts)
      EXPECT_NE(std::string(error.what()).find(part), std::string::npos) << "'" << part << "' not in: " << error.what();
  }
}

// The written header must match the versioned description in results_schema/.
TEST(PredictionsTable, HeaderMatchesTheVersionedSchema) {
  const nlohmann::json schema = testing_support::load_schema("predictions_v1.json");
  EXPECT_EQ(schema.at("schema_version").get<int>(), kOutputSchemaVersion);
  EXPECT_EQ(predictions_csv_header(), testing_support::schema_header(schema, "predictions.csv"));
}

TEST(PredictionsTable, WrittenRowsReadBack) {
  PredictionRow row;
  row.subject = 12;
  row.rescan = 1;
  row.image = "set, with comma/images/subject_000012_rescan1.nii.gz";
  row.count = 3.25;
  row.presence_probability = 0.875;
  row.grade = 2;
  row.map = "maps/subject_000012_rescan1.nii.gz";
  row.map_kind = MapKind::density;
  PredictionRow unknown;  // an image outside a phantom set, nothing predicted
  unknown.image = "scan.nii";
  const std::string text = csv_version_comment("predictions") + predictions_csv_header() + predictions_csv_row(row);
  EXPECT_NE(predictions_csv_row(unknown).find("NA,NA,scan.nii,NA,NA,NA,NA,NA,NA,NA"), std::string::npos);

  const PredictionsTable table = read_predictions_table(write_file("round-trip.csv", text));
  ASSERT_EQ(table.rows.size(), 1U);
  const PredictionRow& back = table.rows[0];
  EXPECT_EQ(back.subject, 12);
  EXPECT_EQ(back.rescan, 1);
  EXPECT_EQ(back.image, row.image);
  EXPECT_EQ(back.count, 3.25);
  EXPECT_TRUE(std::isnan(back.affected_fraction));
  EXPECT_EQ(back.presence_probability, 0.875);
  EXPECT_EQ(back.grade, 2.0);
  EXPECT_EQ(back.map_kind, MapKind::density);
  EXPECT_EQ(back.line, 3);  // after the version comment and the header
  EXPECT_EQ(fs::path(table.map_path(back)).lexically_normal(),
            (fs::path(::testing::TempDir()) / row.map).lexically_normal());
  EXPECT_TRUE(table.has_rescan && table.has_count && table.has_grade && table.has_map);
  EXPECT_TRUE(table.ignored_columns.empty());
}

TEST(PredictionsTable, AUsersMinimalTableNeedsOnlySubjects) {
  // What pandas writes with index=False; an empty cell is a missing value.
  const PredictionsTable table =
      read_predictions_table(write_file("minimal.csv", "subject,count,method\n0,1.5,mine\n1,,mine\n"));
  ASSERT_EQ(table.rows.size(), 2U);
  EXPECT_EQ(table.rows[1].rescan, 0);
  EXPECT_TRUE(std::isnan(table.rows[1].count));
  EXPECT_FALSE(table.has_rescan || table.has_map || table.has_affected_fraction);
  EXPECT_EQ(table.ignored_columns, std::vector<std::string>{"method"});
}

TEST(PredictionsTable, BadInputNamesTheFileLineAndColumn) {
  expect_refused("subject,count\n0,1\n1,three\n", {"refused.csv line 3", "column count", "\"three\"", "not a number"});
  expect_refused("subject,count\n0,1\n0,2\n", {"line 3", "second row for subject 0", "line 2"});
  expect_refused("image,count\na.nii,1\n", {"no column \"subject\""});
  expect_refused("subject,count\nNA,1\n", {"line 2", "subject is missing"});
  expect_refused("subject,presence_probability\n0,1.5\n", {"line 2", "not a probability"});
  expect_refused("subject,map,map_kind\n0,m.nii.gz,heat\n", {"line 2", "column map_kind", "heat", "probability"});
  expect_refused("subject,count\n0,1,2\n", {"line 2", "3 fields", "2 columns"});
  expect_refused("subject,rescan\n0,-1\n", {"line 2", "column rescan"});
  EXPECT_THROW(read_predictions_table(::testing::TempDir() + "/no-such-file.csv"), UserError);
}

}  // namespace
}  // namespace frugal::scoring
