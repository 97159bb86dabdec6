#pragma once
// A user's ratings table (CSV), read into subjects x raters with the place of every cell kept
// for error messages. Two layouts, told apart by the header:
// - long:  header exactly `subject,rater,value` (or `subject,rater,rating`), one rating a row;
// - wide:  any other header; first column the subject id, then one column per rater.
// Blank lines and lines starting with '#' are skipped; fields may be double-quoted.
// Every problem a user can cause throws UserError naming the file, line, column and what is
// allowed.

#include <Eigen/Core>

#include <iosfwd>
#include <string>
#include <vector>

namespace frugal::measure {

enum class TableLayout { wide, long_form };
std::string to_string(TableLayout layout);

// The largest rating magnitude accepted: squares of ratings stay finite (1e300 < DBL_MAX), so the
// sums of squares behind ICC, limits of agreement and correlation cannot overflow to inf.
inline constexpr double kLargestRating = 1e150;

// "text" in double quotes, as every message names a file's subjects, raters and cells.
std::string in_quotes(const std::string& text);

struct RatingsTableOptions {
  int minimum_raters = 2;
  int minimum_subjects = 2;
  bool reject_constant = true;   // all-equal ratings make every agreement statistic undefined
  std::string validate() const;  // empty when valid
};

struct RatingsTable {
  std::string source;  // the file name used in messages
  TableLayout layout = TableLayout::wide;
  std::vector<std::string> subjects;  // in order of first appearance
  std::vector<std::string> raters;    // in order of first appearance
  Eigen::MatrixXd ratings;            // subjects x raters
  // 1-based line and column of each rating, row-major subjects x raters.
  std::vector<int> cell_lines;
  std::vector<int> cell_columns;

  // "ratings.csv line 4, column 3 (subject "s2", rater "B")"
  std::string where(int subject, int rater) const;
  std::vector<double> rater_column(int rater) const;
};

// Throws UserError when `path` is missing, unreadable or not a regular file (a directory, say).
RatingsTable read_ratings_table(const std::string& path, const RatingsTableOptions& options = {});
RatingsTable parse_ratings_table(std::istream& input, const std::string& source,
                                 const RatingsTableOptions& options = {});

}  // namespace frugal::measure
