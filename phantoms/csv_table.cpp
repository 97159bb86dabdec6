#include "phantoms/csv_table.h"

#include <algorithm>
#include <cctype>
#include <charconv>
#include <cmath>
#include <filesystem>
#include <fstream>

#include "phantoms/user_error.h"

namespace frugal {
namespace {

std::string in_quotes(const std::string& text) { return "\"" + text + "\""; }

}  // namespace

std::string trim_whitespace(const std::string& text) {
  std::size_t begin = 0;
  std::size_t end = text.size();
  while (begin < end && std::isspace(static_cast<unsigned char>(text[begin]))) ++begin;
  while (end > begin && std::isspace(static_cast<unsigned char>(text[end - 1]))) --end;
  return text.substr(begin, end - begin);
}

std::vector<std::string> split_csv_line(const std::string& line, const std::string& source, int number) {
  std::vector<std::string> fields;
  std::string field;
  bool inside_quotes = false;
  bool was_quoted = false;
  for (std::size_t i = 0; i < line.size(); ++i) {
    const char c = line[i];
    if (inside_quotes) {
      if (c == '"' && i + 1 < line.size() && line[i + 1] == '"') {
        field += '"';
        ++i;
      } else if (c == '"') {
        inside_quotes = false;
      } else {
        field += c;
      }
    } else if (c == '"' && trim_whitespace(field).empty()) {
      inside_quotes = was_quoted = true;
      field.clear();
    } else if (c == ',') {
      fields.push_back(was_quoted ? field : trim_whitespace(field));
      field.clear();
      was_quoted = false;
    } else {
      field += c;
    }
  }
  if (inside_quotes)
    throw UserError(source + " line " + std::to_string(number) +
                    ": a quoted field is not closed; allowed: fields in double quotes that end on the same line");
  fields.push_back(was_quoted ? field : trim_whitespace(field));
  return fields;
}

int CsvTable::column(const std::string& name) const {
  const auto found = std::find(columns.begin(), columns.end(), name);
  return found == columns.end() ? -1 : static_cast<int>(found - columns.begin());
}

int CsvTable::require_column(const std::string& name) const {
  const int position = column(name);
  if (position >= 0) return position;
  std::string have;
  for (const std::string& c : columns) have += (have.empty() ? "" : ",") + c;
  throw UserError(source + " line " + std::to_string(header_line) + ": the header has no column " + in_quotes(name) +
                  "; it has: " + have);
}

std::string CsvTable::where(std::size_t row) const { return source + " line " + std::to_string(lines.at(row)); }

std::string CsvTable::where(std::size_t row, int column) const {
  return where(row) + ", column " + columns.at(static_cast<std::size_t>(column));
}

const std::string& CsvTable::text(std::size_t row, int column) const {
  return rows.at(row).at(static_cast<std::size_t>(column));
}

bool CsvTable::missing(std::size_t row, int column) const {
  const std::string& value = text(row, column);
  return value.empty() || value == "NA" || value == "NaN" || value == "nan";
}

double CsvTable::number(std::size_t row, int column) const {
  if (missing(row, column)) return std::nan("");
  const std::string& value = text(row, column);
  const char* begin = value.data();
  const char* end = value.data() + value.size();
  if (*begin == '+') ++begin;  // from_chars does not take a leading plus
  double parsed = 0.0;
  const auto [stop, error] = std::from_chars(begin, end, parsed);
  if (error != std::errc() || stop != end || !std::isfinite(parsed))
    throw UserError(where(row, column) + ": " + in_quotes(value) +
                    " is not a number; allowed: a finite decimal number such as 3, 0.25 or 1e-3, or NA when missing");
  return parsed;
}

long long CsvTable::integer(std::size_t row, int column, long long low, long long high) const {
  const std::string& value = text(row, column);
  long long parsed = 0;
  const char* begin = value.data();
  const char* end = value.data() + value.size();
  if (begin != end && *begin == '+') ++begin;
  const auto [stop, error] = std::from_chars(begin, end, parsed);
  if (value.empty() || error != std::errc() || stop != end || parsed < low || parsed > high)
    throw UserError(where(row, column) + ": " + in_quotes(value) + " is not allowed; allowed: a whole number from " +
                    std::to_string(low) + " to " + std::to_string(high));
  return parsed;
}

CsvTable parse_csv_table(std::istream& input, const std::string& source) {
  CsvTable table;
  table.source = source;
  std::string line;
  int number = 0;
  bool have_header = false;
  while (std::getline(input, line)) {
    ++number;
    if (number == 1 && line.rfind("\xEF\xBB\xBF", 0) == 0) line.erase(0, 3);  // UTF-8 byte-order mark
    if (!line.empty() && line.back() == '\r') line.pop_back();
    const std::string content = trim_whitespace(line);
    if (content.empty() || content[0] == '#') continue;
    std::vector<std::string> fields = split_csv_line(line, source, number);
    if (!have_header) {
      for (std::size_t c = 0; c < fields.size(); ++c) {
        if (fields[c].empty())
          throw UserError(source + " line " + std::to_string(number) + ": header column " + std::to_string(c + 1) +
                          " has no name; allowed: a name for every column");
        if (std::find(fields.begin(), fields.begin() + static_cast<std::ptrdiff_t>(c), fields[c]) !=
            fields.begin() + static_cast<std::ptrdiff_t>(c))
          throw UserError(source + " line " + std::to_string(number) + ": column " + in_quotes(fields[c]) +
                          " appears twice in the header; allowed: each column once");
      }
      table.columns = std::move(fields);
      table.header_line = number;
      have_header = true;
      continue;
    }
    if (fields.size() != table.columns.size())
      throw UserError(source + " line " + std::to_string(number) + ": " + std::to_string(fields.size()) +
                      " fields, but the header (line " + std::to_string(table.header_line) + ") has " +
                      std::to_string(table.columns.size()) + " columns; allowed: one field per column on every row");
    table.rows.push_back(std::move(fields));
    table.lines.push_back(number);
  }
  if (!have_header)
    throw UserError(source +
                    ": no header line; allowed: a CSV table whose first line (after '#' comments) names "
                    "the columns");
  return table;
}

CsvTable read_csv_table(const std::string& path) {
  std::error_code error;
  if (!std::filesystem::exists(path, error)) throw UserError(path + ": no such file");
  if (!std::filesystem::is_regular_file(path, error)) throw UserError(path + ": not a regular file; give a CSV file");
  std::ifstream input(path, std::ios::binary);
  if (!input) throw UserError(path + ": cannot open for reading");
  return parse_csv_table(input, path);
}

std::string csv_field(const std::string& text) {
  if (text.find_first_of(",\"\n\r") == std::string::npos) return text;
  std::string out = "\"";
  for (char c : text) {
    if (c == '"') out += '"';
    out += c;
  }
  return out + "\"";
}

}  // namespace frugal
