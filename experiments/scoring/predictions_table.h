#pragma once
// The predictions table (predictions.csv): one row per image with the quantities a method reads
// from it and, optionally, a voxel map. `frugal predict` writes it; any method, in any language,
// can write it too and have it scored against a phantom set's truth (`frugal score`). Columns:
// results_schema/predictions_v1.json and docs/score.md.

#include <limits>
#include <string>
#include <vector>

namespace frugal::scoring {

// What the values of a map file mean, which decides how it can be scored.
enum class MapKind {
  none,         // no map
  probability,  // lesion probability in [0, 1] (a 0/1 mask included): map > 0.5 is lesion
  density,      // lesions per voxel (count-map): the map sums to the count; not thresholded
  response,     // a filter response without a fixed scale (line-filter); not thresholded
};
std::string to_string(MapKind kind);
MapKind map_kind_from_string(const std::string& name);  // throws UserError listing the names

struct PredictionRow {
  static constexpr double kMissing = std::numeric_limits<double>::quiet_NaN();
  int subject = -1;  // -1 when unknown (an image that is not part of a phantom set)
  int rescan = -1;   // -1 when unknown
  std::string image;
  double count = kMissing;
  double affected_fraction = kMissing;
  double presence_probability = kMissing;
  double grade = kMissing;
  double burden_mm3 = kMissing;
  std::string map;  // path as written in the table; empty when there is none
  MapKind map_kind = MapKind::none;
  int line = 0;  // line in the file it was read from
};

// The header frugal writes, in schema order, with a line break.
std::string predictions_csv_header();
// One row in the header's columns; missing values and unknown subjects are written as NA,
// numbers with up to 9 significant digits.
std::string predictions_csv_row(const PredictionRow& row);

struct PredictionsTable {
  std::string source;  // the file name used in messages
  std::string folder;  // relative map paths are taken from here
  std::vector<PredictionRow> rows;
  bool has_rescan = false;
  // Which quantity columns the file has (a missing column is not scored).
  bool has_count = false;
  bool has_affected_fraction = false;
  bool has_presence_probability = false;
  bool has_grade = false;
  bool has_burden_mm3 = false;
  bool has_map = false;
  std::vector<std::string> ignored_columns;  // columns the format does not know, in file order

  // The map file of a row as a path that can be opened (absolute, or relative to the table's folder).
  std::string map_path(const PredictionRow& row) const;
  // "predictions.csv line 4"
  std::string where(const PredictionRow& row) const;
};

// Reads a predictions table for scoring. Needs a `subject` column; `rescan` is optional. Throws
// UserError naming the file, line and column for a missing subject, a non-numeric value, a
// presence probability outside [0, 1], an unknown map kind, or a second row of one subject
// and rescan.
PredictionsTable read_predictions_table(const std::string& path);

}  // namespace frugal::scoring
