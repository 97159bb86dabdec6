#pragma once
// A CSV table read whole, with the file line of every row kept for error messages: the tables
// frugal writes (labels.csv, truth.csv, predictions.csv, each after a '#' version line) and tables
// a user writes in the same layout from pandas or R. Blank lines and lines starting with '#' are
// skipped; a field may be double-quoted ("" stands for a quote); "NA", "NaN" and an empty field
// are missing values.

#include <cstddef>
#include <iosfwd>
#include <string>
#include <vector>

namespace frugal {

struct CsvTable {
  std::string source;                          // the file name used in messages
  std::vector<std::string> columns;            // header names, in order
  int header_line = 0;                         // 1-based line of the header
  std::vector<std::vector<std::string>> rows;  // one field per column
  std::vector<int> lines;                      // 1-based file line of each row

  // Position of a column, or -1 when the table has none of that name.
  int column(const std::string& name) const;
  // Throws UserError naming the file, the column and the columns it does have.
  int require_column(const std::string& name) const;

  std::string where(std::size_t row) const;              // "labels.csv line 7"
  std::string where(std::size_t row, int column) const;  // "labels.csv line 7, column value"
  const std::string& text(std::size_t row, int column) const;
  bool missing(std::size_t row, int column) const;  // empty, NA or NaN
  // A finite decimal number; NaN for a missing value. Throws UserError naming the cell otherwise.
  double number(std::size_t row, int column) const;
  // An integer in [low, high]; missing values and text throw UserError naming the cell.
  long long integer(std::size_t row, int column, long long low, long long high) const;
};

// Throws UserError when the file is missing, not a regular file, has no header, repeats a column
// name or has a row with another number of fields than the header.
CsvTable read_csv_table(const std::string& path);
CsvTable parse_csv_table(std::istream& input, const std::string& source);

// One CSV line split into fields: a field may be double-quoted ("" stands for a quote); unquoted
// fields are trimmed of surrounding white space. Throws UserError "<source> line <number>: ..."
// when a quoted field is not closed on the line.
std::vector<std::string> split_csv_line(const std::string& line, const std::string& source, int number);
// `text` without leading and trailing white space.
std::string trim_whitespace(const std::string& text);

// `text` as one CSV field: unchanged, or double-quoted when it holds a comma, a quote or a line break.
std::string csv_field(const std::string& text);

}  // namespace frugal
