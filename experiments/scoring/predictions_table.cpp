#include "experiments/scoring/predictions_table.h"

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <map>
#include <utility>

#include "phantoms/csv_table.h"
#include "phantoms/user_error.h"

namespace frugal::scoring {

namespace fs = std::filesystem;

namespace {

constexpr struct {
  MapKind kind;
  const char* name;
} kMapKindNames[] = {
    {MapKind::none, "NA"},
    {MapKind::probability, "probability"},
    {MapKind::density, "density"},
    {MapKind::response, "response"},
};

std::string number(double value) {
  if (std::isnan(value)) return "NA";
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.9g", value);
  return buffer;
}

std::string index_or_na(int value) { return value < 0 ? "NA" : std::to_string(value); }

}  // namespace

std::string to_string(MapKind kind) {
  for (const auto& entry : kMapKindNames)
    if (entry.kind == kind) return entry.name;
  return "NA";
}

MapKind map_kind_from_string(const std::string& name) {
  std::string allowed;
  for (const auto& entry : kMapKindNames) {
    if (name == entry.name) return entry.kind;
    allowed += std::string(allowed.empty() ? "" : ", ") + entry.name;
  }
  throw UserError("map kind \"" + name + "\" is unknown; allowed: " + allowed);
}

std::string predictions_csv_header() {
  return "subject,rescan,image,count,affected_fraction,presence_probability,grade,burden_mm3,map,map_kind\n";
}

std::string predictions_csv_row(const PredictionRow& row) {
  return index_or_na(row.subject) + "," + index_or_na(row.rescan) + "," + csv_field(row.image) + "," +
         number(row.count) + "," + number(row.affected_fraction) + "," + number(row.presence_probability) + "," +
         number(row.grade) + "," + number(row.burden_mm3) + "," +
         (row.map.empty() ? std::string("NA") : csv_field(row.map)) + "," +
         to_string(row.map.empty() ? MapKind::none : row.map_kind) + "\n";
}

std::string PredictionsTable::map_path(const PredictionRow& row) const {
  const fs::path path(row.map);
  return path.is_absolute() ? path.string() : (fs::path(folder) / path).string();
}

std::string PredictionsTable::where(const PredictionRow& row) const {
  return source + " line " + std::to_string(row.line);
}

PredictionsTable read_predictions_table(const std::string& path) {
  const CsvTable table = read_csv_table(path);
  PredictionsTable result;
  result.source = path;
  result.folder = fs::path(path).parent_path().string();
  if (table.column("subject") < 0)
    throw UserError(path + " line " + std::to_string(table.header_line) +
                    ": the header has no column \"subject\"; frugal score matches rows to the truth by subject "
                    "(and rescan); see docs/score.md for the columns");
  const int subject = table.column("subject");
  const int rescan = table.column("rescan");
  const int image = table.column("image");
  const int count = table.column("count");
  const int fraction = table.column("affected_fraction");
  const int presence = table.column("presence_probability");
  const int grade = table.column("grade");
  const int burden = table.column("burden_mm3");
  const int map = table.column("map");
  const int map_kind = table.column("map_kind");
  result.has_rescan = rescan >= 0;
  result.has_count = count >= 0;
  result.has_affected_fraction = fraction >= 0;
  result.has_presence_probability = presence >= 0;
  result.has_grade = grade >= 0;
  result.has_burden_mm3 = burden >= 0;
  result.has_map = map >= 0;
  for (std::size_t c = 0; c < table.columns.size(); ++c) {
    const int position = static_cast<int>(c);
    if (position != subject && position != rescan && position != image && position != count && position != fraction &&
        position != presence && position != grade && position != burden && position != map && position != map_kind)
      result.ignored_columns.push_back(table.columns[c]);
  }

  std::map<std::pair<int, int>, int> lines;
  for (std::size_t r = 0; r < table.rows.size(); ++r) {
    PredictionRow row;
    row.line = table.lines[r];
    if (table.missing(r, subject))
      throw UserError(table.where(r, subject) +
                      ": the subject is missing; frugal score matches rows to the truth by subject, so every row "
                      "needs one (a whole number, as in the phantom set's truth.csv)");
    row.subject = static_cast<int>(table.integer(r, subject, 0, 100'000'000));
    row.rescan = rescan >= 0 ? static_cast<int>(table.integer(r, rescan, 0, 20)) : 0;
    if (image >= 0 && !table.missing(r, image)) row.image = table.text(r, image);
    const auto read = [&](int column) { return column >= 0 ? table.number(r, column) : PredictionRow::kMissing; };
    row.count = read(count);
    row.affected_fraction = read(fraction);
    row.presence_probability = read(presence);
    row.grade = read(grade);
    row.burden_mm3 = read(burden);
    // Bounds of what the quantity can be: a negative count or burden, or a fraction above 1, is a
    // bug in the method that wrote the table, and 1e308 would turn MAE and RMSE into overflow.
    const auto require_range = [&](double value, int column, double low, double high, const char* what,
                                   const char* allowed) {
      if (std::isnan(value) || (value >= low && value <= high)) return;
      throw UserError(table.where(r, column) + ": " + table.text(r, column) + " is not " + what + "; allowed: " +
                      allowed + ", or NA");
    };
    require_range(row.presence_probability, presence, 0.0, 1.0, "a probability", "a number from 0 to 1");
    require_range(row.count, count, 0.0, 1e9, "a lesion count", "a number from 0 to 1e9");
    require_range(row.affected_fraction, fraction, 0.0, 1.0, "a fraction", "a number from 0 to 1");
    require_range(row.grade, grade, 0.0, 1000.0, "a grade (a bin index)", "a number from 0 to 1000");
    require_range(row.burden_mm3, burden, 0.0, 1e12, "a burden in mm3", "a number from 0 to 1e12");
    if (map >= 0 && !table.missing(r, map)) {
      row.map = table.text(r, map);
      row.map_kind = MapKind::probability;
      if (map_kind >= 0 && !table.missing(r, map_kind)) {
        try {
          row.map_kind = map_kind_from_string(table.text(r, map_kind));
        } catch (const UserError& error) {
          throw UserError(table.where(r, map_kind) + ": " + error.what());
        }
        if (row.map_kind == MapKind::none)
          throw UserError(table.where(r, map_kind) +
                          ": the row gives a map file but map kind NA; allowed: probability, "
                          "density or response");
      }
    }
    const auto key = std::make_pair(row.subject, row.rescan);
    if (const auto earlier = lines.find(key); earlier != lines.end())
      throw UserError(table.where(r) + ": a second row for subject " + std::to_string(row.subject) + ", rescan " +
                      std::to_string(row.rescan) + " (the first is on line " + std::to_string(earlier->second) +
                      "); allowed: one row per subject and acquisition");
    lines[key] = row.line;
    result.rows.push_back(std::move(row));
  }
  return result;
}

}  // namespace frugal::scoring
