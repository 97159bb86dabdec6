#include "experiments/measure/ratings_table.h"

#include <algorithm>
#include <cctype>
#include <charconv>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <sstream>

#include "phantoms/csv_table.h"
#include "phantoms/user_error.h"

namespace frugal::measure {
namespace {

struct Row {
  int line = 0;
  std::vector<std::string> fields;
};

std::string lower(std::string text) {
  std::transform(text.begin(), text.end(), text.begin(),
                 [](unsigned char c) { return static_cast<char>(std::tolower(c)); });
  return text;
}

std::vector<Row> read_rows(std::istream& input, const std::string& source) {
  std::vector<Row> rows;
  std::string line;
  int number = 0;
  while (std::getline(input, line)) {
    ++number;
    if (number == 1 && line.rfind("\xEF\xBB\xBF", 0) == 0) line.erase(0, 3);  // UTF-8 mark
    if (!line.empty() && line.back() == '\r') line.pop_back();
    const std::string content = trim_whitespace(line);
    if (content.empty() || content[0] == '#') continue;
    rows.push_back({number, split_csv_line(line, source, number)});
  }
  return rows;
}

std::string cell_place(const std::string& source, int line, int column, const std::string& header) {
  return source + " line " + std::to_string(line) + ", column " + std::to_string(column) + " (" + header + ")";
}

double parse_rating(const std::string& text, const std::string& place) {
  if (text.empty()) {
    throw UserError(place +
                    ": the rating is missing; every subject needs a rating from every "
                    "rater: fill the cell or remove the subject");
  }
  double value = 0.0;
  const char* begin = text.data();
  const char* end = text.data() + text.size();
  if (*begin == '+') ++begin;  // from_chars does not take a leading plus
  const auto [stop, error] = std::from_chars(begin, end, value);
  if (error != std::errc() || stop != end) {
    throw UserError(place + ": " + in_quotes(text) +
                    " is not a number; allowed: a decimal number such as 3, -1 or 2.5");
  }
  if (!std::isfinite(value)) {
    throw UserError(place + ": " + in_quotes(text) +
                    " is not a finite number; allowed: a decimal "
                    "number such as 3, -1 or 2.5");
  }
  if (std::fabs(value) > kLargestRating) {
    throw UserError(place + ": " + in_quotes(text) +
                    " is too large in magnitude for the sums of "
                    "squares; allowed: a number from -1e150 to 1e150");
  }
  return value;
}

bool is_long_header(const std::vector<std::string>& header) {
  if (header.size() != 3) return false;
  const std::string value = lower(header[2]);
  return lower(header[0]) == "subject" && lower(header[1]) == "rater" && (value == "value" || value == "rating");
}

void read_wide(const std::vector<Row>& rows, RatingsTable& table) {
  const Row& header = rows.front();
  const std::size_t columns = header.fields.size();
  for (std::size_t c = 1; c < columns; ++c) {
    std::string name = header.fields[c].empty() ? "column " + std::to_string(c + 1) : header.fields[c];
    if (std::find(table.raters.begin(), table.raters.end(), name) != table.raters.end()) {
      throw UserError(table.source + " line " + std::to_string(header.line) + ", column " + std::to_string(c + 1) +
                      ": rater " + in_quotes(name) +
                      " appears twice in the header; allowed: one column per rater, each with its own name");
    }
    table.raters.push_back(name);
  }
  std::map<std::string, int> subject_lines;
  std::vector<std::vector<double>> values;
  for (std::size_t r = 1; r < rows.size(); ++r) {
    const Row& row = rows[r];
    if (row.fields.size() != columns) {
      throw UserError(table.source + " line " + std::to_string(row.line) + ": has " +
                      std::to_string(row.fields.size()) + " fields but the header (line " +
                      std::to_string(header.line) + ") has " + std::to_string(columns) +
                      "; allowed: every row holds a subject id and one rating per rater column");
    }
    const std::string& subject = row.fields[0];
    if (subject.empty()) {
      throw UserError(cell_place(table.source, row.line, 1, "subject id") +
                      ": the subject id is missing; allowed: a non-empty id in the first column");
    }
    if (const auto seen = subject_lines.find(subject); seen != subject_lines.end()) {
      throw UserError(table.source + " line " + std::to_string(row.line) + ": subject " + in_quotes(subject) +
                      " already appears on line " + std::to_string(seen->second) +
                      "; allowed: one row per subject in the wide layout (use the long layout "
                      "subject,rater,value for other shapes)");
    }
    subject_lines[subject] = row.line;
    table.subjects.push_back(subject);
    std::vector<double> subject_values;
    for (std::size_t c = 1; c < columns; ++c) {
      const int column = static_cast<int>(c) + 1;
      subject_values.push_back(parse_rating(
          row.fields[c], cell_place(table.source, row.line, column, "rater " + in_quotes(table.raters[c - 1]))));
      table.cell_lines.push_back(row.line);
      table.cell_columns.push_back(column);
    }
    values.push_back(std::move(subject_values));
  }
  table.ratings.resize(static_cast<Eigen::Index>(values.size()), static_cast<Eigen::Index>(table.raters.size()));
  for (std::size_t s = 0; s < values.size(); ++s) {
    for (std::size_t c = 0; c < values[s].size(); ++c) {
      table.ratings(static_cast<Eigen::Index>(s), static_cast<Eigen::Index>(c)) = values[s][c];
    }
  }
}

void read_long(const std::vector<Row>& rows, RatingsTable& table) {
  const Row& header = rows.front();
  struct Cell {
    double value;
    int line;
  };
  std::map<std::pair<std::size_t, std::size_t>, Cell> cells;
  std::map<std::string, std::size_t> subject_index;
  std::map<std::string, std::size_t> rater_index;
  std::vector<int> subject_first_line;
  for (std::size_t r = 1; r < rows.size(); ++r) {
    const Row& row = rows[r];
    if (row.fields.size() != 3) {
      throw UserError(table.source + " line " + std::to_string(row.line) + ": has " +
                      std::to_string(row.fields.size()) + " fields but the header (line " +
                      std::to_string(header.line) + ") has 3; allowed: subject,rater,value on every row");
    }
    const char* names[2] = {"subject", "rater"};
    for (int c = 0; c < 2; ++c) {
      if (row.fields[static_cast<std::size_t>(c)].empty()) {
        throw UserError(cell_place(table.source, row.line, c + 1, names[c]) + ": the " + names[c] +
                        " is missing; allowed: a non-empty name");
      }
    }
    const auto [subject, new_subject] = subject_index.try_emplace(row.fields[0], table.subjects.size());
    if (new_subject) {
      table.subjects.push_back(row.fields[0]);
      subject_first_line.push_back(row.line);
    }
    const auto [rater, new_rater] = rater_index.try_emplace(row.fields[1], table.raters.size());
    if (new_rater) table.raters.push_back(row.fields[1]);
    const double value = parse_rating(row.fields[2], cell_place(table.source, row.line, 3, header.fields[2]));
    const auto [cell, inserted] = cells.try_emplace({subject->second, rater->second}, Cell{value, row.line});
    if (!inserted) {
      throw UserError(table.source + " line " + std::to_string(row.line) + ": subject " + in_quotes(row.fields[0]) +
                      " already has a rating from rater " + in_quotes(row.fields[1]) + " on line " +
                      std::to_string(cell->second.line) + "; allowed: one rating per subject and rater");
    }
  }
  const auto subjects = static_cast<Eigen::Index>(table.subjects.size());
  const auto raters = static_cast<Eigen::Index>(table.raters.size());
  table.ratings.resize(subjects, raters);
  for (std::size_t s = 0; s < table.subjects.size(); ++s) {
    for (std::size_t r = 0; r < table.raters.size(); ++r) {
      const auto found = cells.find({s, r});
      if (found == cells.end()) {
        throw UserError(table.source + " line " + std::to_string(subject_first_line[s]) + ": subject " +
                        in_quotes(table.subjects[s]) + " (first seen here) has no rating from rater " +
                        in_quotes(table.raters[r]) +
                        "; every subject needs a rating from every rater: "
                        "add the row or remove the subject");
      }
      table.ratings(static_cast<Eigen::Index>(s), static_cast<Eigen::Index>(r)) = found->second.value;
      table.cell_lines.push_back(found->second.line);
      table.cell_columns.push_back(3);
    }
  }
}

}  // namespace

std::string in_quotes(const std::string& text) { return "\"" + text + "\""; }

std::string to_string(TableLayout layout) { return layout == TableLayout::wide ? "wide" : "long"; }

std::string RatingsTableOptions::validate() const {
  if (minimum_raters < 1 || minimum_subjects < 1) {
    return "minimum raters and minimum subjects must be at least 1";
  }
  return {};
}

std::string RatingsTable::where(int subject, int rater) const {
  const std::size_t cell = static_cast<std::size_t>(subject) * raters.size() + static_cast<std::size_t>(rater);
  return source + " line " + std::to_string(cell_lines[cell]) + ", column " + std::to_string(cell_columns[cell]) +
         " (subject " + in_quotes(subjects[static_cast<std::size_t>(subject)]) + ", rater " +
         in_quotes(raters[static_cast<std::size_t>(rater)]) + ")";
}

std::vector<double> RatingsTable::rater_column(int rater) const {
  std::vector<double> column(static_cast<std::size_t>(ratings.rows()));
  for (Eigen::Index s = 0; s < ratings.rows(); ++s) column[static_cast<std::size_t>(s)] = ratings(s, rater);
  return column;
}

RatingsTable parse_ratings_table(std::istream& input, const std::string& source, const RatingsTableOptions& options) {
  if (const std::string problem = options.validate(); !problem.empty()) throw UserError(problem);
  const std::vector<Row> rows = read_rows(input, source);
  RatingsTable table;
  table.source = source;
  if (rows.empty()) {
    throw UserError(source +
                    ": the table is empty; allowed: a header line, then one row per "
                    "subject (wide: subject,rater1,rater2,...) or per rating (long: subject,rater,value)");
  }
  const Row& header = rows.front();
  table.layout = is_long_header(header.fields) ? TableLayout::long_form : TableLayout::wide;
  if (table.layout == TableLayout::wide && header.fields.size() < 2) {
    throw UserError(source + " line " + std::to_string(header.line) + ": the header has " +
                    std::to_string(header.fields.size()) +
                    " column; allowed: a subject id column "
                    "followed by one column per rater, or the long header subject,rater,value");
  }
  if (table.layout == TableLayout::wide) {
    read_wide(rows, table);
  } else {
    read_long(rows, table);
  }

  const int subjects = static_cast<int>(table.subjects.size());
  const int raters = static_cast<int>(table.raters.size());
  if (raters < options.minimum_raters) {
    std::ostringstream message;
    message << source << " line " << header.line << ": found " << raters << " rater"
            << (raters == 1 ? " (" + in_quotes(table.raters.front()) + ")" : std::string("s")) << "; allowed: at least "
            << options.minimum_raters << " raters ("
            << (table.layout == TableLayout::wide ? "columns after the subject id"
                                                  : "distinct names in the rater column")
            << ")";
    throw UserError(message.str());
  }
  if (subjects < options.minimum_subjects) {
    std::ostringstream message;
    message << source << ": found " << subjects << " subject" << (subjects == 1 ? "" : "s") << "; allowed: at least "
            << options.minimum_subjects << " subjects rated by every rater";
    throw UserError(message.str());
  }
  if (options.reject_constant && (table.ratings.array() == table.ratings(0, 0)).all()) {
    std::ostringstream message;
    message << source << " lines " << rows[1].line << "-" << rows.back().line << ": all " << table.ratings.size()
            << " ratings equal " << table.ratings(0, 0)
            << "; agreement statistics are undefined without any variation; allowed: a table in "
               "which at least two ratings differ";
    throw UserError(message.str());
  }
  return table;
}

RatingsTable read_ratings_table(const std::string& path, const RatingsTableOptions& options) {
  // Checked first: an ifstream opens a directory without complaint and then reads nothing.
  std::error_code error;
  const std::filesystem::file_status status = std::filesystem::status(path, error);
  if (std::filesystem::is_directory(status)) {
    throw UserError(path + ": is a directory, not a ratings table; allowed: a CSV file");
  }
  if (std::filesystem::exists(status) && !std::filesystem::is_regular_file(status)) {
    throw UserError(path +
                    ": is not a regular file (a device, pipe or socket), not a ratings table; "
                    "allowed: a CSV file");
  }
  std::ifstream file(path, std::ios::binary);
  if (!file) {
    throw UserError(path + ": cannot open the ratings table; allowed: a readable CSV file");
  }
  return parse_ratings_table(file, path, options);
}

}  // namespace frugal::measure
