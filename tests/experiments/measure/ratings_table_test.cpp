#include "experiments/measure/ratings_table.h"

#include <gtest/gtest.h>

#include <sstream>

#include "phantoms/user_error.h"

namespace frugal::measure {
namespace {

RatingsTable parse(const std::string& text) {
  std::istringstream input(text);
  return parse_ratings_table(input, "pilot.csv");
}

// Expects a UserError whose message contains every one of `parts`.
void expect_error(const std::string& text, const std::vector<std::string>& parts) {
  try {
    parse(text);
    ADD_FAILURE() << "no error for:\n" << text;
  } catch (const UserError& error) {
    const std::string message = error.what();
    for (const std::string& part : parts) {
      EXPECT_NE(message.find(part), std::string::npos) << "missing '" << part << "' in: " << message;
    }
  }
}

TEST(RatingsTable, ReadsWideLayout) {
  const RatingsTable table = parse("\xEF\xBB\xBFscan,reader A,reader B\r\ns1,1,2\r\n# note\n\ns2,3, 4.5\n\"s,3\",+2,0\n");
  EXPECT_EQ(table.layout, TableLayout::wide);
  EXPECT_EQ(table.raters, (std::vector<std::string>{"reader A", "reader B"}));
  EXPECT_EQ(table.subjects, (std::vector<std::string>{"s1", "s2", "s,3"}));
  EXPECT_DOUBLE_EQ(table.ratings(1, 1), 4.5);
  EXPECT_DOUBLE_EQ(table.ratings(2, 0), 2.0);
  EXPECT_EQ(table.where(1, 1), "pilot.csv line 5, column 3 (subject \"s2\", rater \"reader B\")");
}

TEST(RatingsTable, ReadsLongLayoutInAnyOrder) {
  const RatingsTable table = parse("Subject,Rater,Value\ns1,A,1\ns2,B,4\ns1,B,2\ns2,A,3\n");
  EXPECT_EQ(table.layout, TableLayout::long_form);
  EXPECT_EQ(table.raters, (std::vector<std::string>{"A", "B"}));
  EXPECT_DOUBLE_EQ(table.ratings(0, 1), 2.0);
  EXPECT_DOUBLE_EQ(table.ratings(1, 0), 3.0);
  EXPECT_EQ(table.where(1, 0), "pilot.csv line 5, column 3 (subject \"s2\", rater \"A\")");
}

TEST(RatingsTable, ErrorsNameFileLineColumnAndWhatIsAllowed) {
  expect_error("id,A,B\ns1,1,2\ns2,3\n", {"pilot.csv line 3", "2 fields", "header (line 1) has 3", "allowed"});
  expect_error("id,A,B\ns1,1,two\ns2,3,4\n", {"pilot.csv line 2, column 3", "\"two\" is not a number", "allowed"});
  expect_error("id,A,B\ns1,1,nan\ns2,3,4\n", {"line 2, column 3", "not a finite number"});
  expect_error("id,A\ns1,1\ns2,3\n", {"pilot.csv line 1", "1 rater", "at least 2 raters"});
  expect_error("id,A,B\ns1,2,2\ns2,2,2\n", {"pilot.csv lines 2-3", "all 4 ratings equal 2", "allowed"});
  expect_error("id,A,B\ns1,1,\ns2,3,4\n", {"line 2, column 3", "missing"});
  expect_error("id,A,B\ns1,1,2\ns1,3,4\n", {"line 3", "already appears on line 2"});
  expect_error("id,A,A\ns1,1,2\ns2,3,4\n", {"line 1, column 3", "appears twice"});
  expect_error("subject,rater,value\ns1,A,1\ns1,B,2\ns2,A,3\n", {"line 4", "no rating from rater \"B\""});
  expect_error("subject,rater,value\ns1,A,1\ns1,A,2\n", {"line 3", "already has a rating", "line 2"});
  expect_error("id,A,B\ns1,1,2\n", {"1 subject", "at least 2"});
  expect_error("", {"pilot.csv", "empty"});
  expect_error("id,A,B\n\"s1,1,2\n", {"line 2", "quoted field"});
}

TEST(RatingsTable, MissingFileIsAUserError) {
  EXPECT_THROW(read_ratings_table("/nonexistent/ratings.csv"), UserError);
}

TEST(RatingsTable, RejectsRatingsWhoseSquaresCouldOverflow) {
  // 1e150 squared is 1e300, below the largest double (about 1.8e308, IEEE 754): the bound is
  // accepted, anything beyond it is not. Common practice, no source.
  const RatingsTable table = parse("id,A,B\ns1,1e150,-1e150\ns2,0,1\n");
  EXPECT_DOUBLE_EQ(table.ratings(0, 0), 1e150);
  EXPECT_DOUBLE_EQ(table.ratings(0, 1), -1e150);
  expect_error("id,A,B\ns1,1e300,-1e300\ns2,0,1\n",
               {"pilot.csv line 2, column 2", "\"1e300\"", "allowed: a number from -1e150 to 1e150"});
  expect_error("subject,rater,value\ns1,A,1\ns1,B,-2e150\ns2,A,0\ns2,B,1\n",
               {"pilot.csv line 3, column 3", "-1e150 to 1e150"});
}

TEST(RatingsTable, DirectoryIsAUserErrorNamingThePath) {
  // An ifstream opens a directory on Linux and reads nothing; the message must not say "empty".
  const std::string directory = ::testing::TempDir();
  try {
    read_ratings_table(directory);
    ADD_FAILURE() << "no error for the directory " << directory;
  } catch (const UserError& error) {
    const std::string message = error.what();
    EXPECT_NE(message.find(directory), std::string::npos) << message;
    EXPECT_NE(message.find("is a directory, not a ratings table"), std::string::npos) << message;
  }
}

TEST(RatingsTable, QuotesNamesInMessages) {
  EXPECT_EQ(in_quotes("reader B"), "\"reader B\"");
}

}  // namespace
}  // namespace frugal::measure
