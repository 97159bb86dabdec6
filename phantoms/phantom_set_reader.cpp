#include "phantoms/phantom_set_reader.h"

#include <cmath>
#include <filesystem>
#include <fstream>
#include <nlohmann/json.hpp>

#include "phantoms/csv_table.h"
#include "phantoms/user_error.h"

namespace frugal {

namespace fs = std::filesystem;

PhantomSetIndex::PhantomSetIndex(std::string folder, std::string truth_file, std::vector<TruthRow> rows,
                                 PhantomSetOrigin origin)
    : folder_(std::move(folder)),
      truth_file_(std::move(truth_file)),
      rows_(std::move(rows)),
      origin_(std::move(origin)) {
  for (std::size_t i = 0; i < rows_.size(); ++i) {
    const auto key = std::make_pair(rows_[i].subject, rows_[i].rescan);
    if (const auto earlier = positions_.find(key); earlier != positions_.end())
      throw UserError(truth_file_ + " line " + std::to_string(rows_[i].line) + ": subject " +
                      std::to_string(key.first) + ", rescan " + std::to_string(key.second) +
                      " appears a second time (first on line " + std::to_string(rows_[earlier->second].line) +
                      "); allowed: one row per subject and acquisition");
    positions_[key] = i;
  }
}

const TruthRow* PhantomSetIndex::find(int subject, int rescan) const {
  const auto found = positions_.find({subject, rescan});
  return found == positions_.end() ? nullptr : &rows_[found->second];
}

namespace {

// The seed and resolved scenario from manifest.json, when the folder has a readable one; an index
// without them is still usable, it only cannot be checked against a label set's origin.
PhantomSetOrigin read_origin(const fs::path& root) {
  PhantomSetOrigin origin;
  std::ifstream stream(root / "manifest.json");
  if (!stream) return origin;
  try {
    const nlohmann::json manifest = nlohmann::json::parse(stream);
    if (manifest.value("kind", std::string()) != "phantom_set" || !manifest.contains("seed") ||
        !manifest.contains("scenario"))
      return origin;
    origin.seed = manifest.at("seed").get<std::uint64_t>();
    origin.scenario_json = manifest.at("scenario").dump();
    origin.known = true;
  } catch (const nlohmann::json::exception&) {
    return PhantomSetOrigin{};
  }
  return origin;
}

}  // namespace

PhantomSetIndex read_phantom_set(const std::string& folder) {
  const fs::path root(folder);
  std::error_code ignored;
  if (!fs::is_directory(root, ignored)) throw UserError(folder + ": no such phantom set folder");
  const fs::path truth = root / "truth.csv";
  if (!fs::exists(truth, ignored))
    throw UserError(folder +
                    ": no truth.csv, so not a finished phantom set (frugal phantoms writes it when the last "
                    "subject is done; docs/phantom-set.md)");
  const CsvTable table = read_csv_table(truth.string());
  const int subject = table.require_column("subject");
  const int rescan = table.require_column("rescan");
  const int family = table.require_column("family");
  const int count = table.require_column("count");
  const int burden = table.require_column("burden_mm3");
  const int fraction = table.require_column("affected_fraction");
  const int image = table.require_column("image");
  const int labels = table.require_column("labels");
  const int pattern = table.column("pattern");
  const int densitometry = table.column("densitometry");
  const int confounder = table.column("confounder");

  std::vector<TruthRow> rows;
  rows.reserve(table.rows.size());
  for (std::size_t r = 0; r < table.rows.size(); ++r) {
    TruthRow row;
    row.line = table.lines[r];
    row.subject = static_cast<int>(table.integer(r, subject, 0, 100'000'000));
    row.rescan = static_cast<int>(table.integer(r, rescan, 0, 20));
    row.family = table.text(r, family);
    if (row.family != "streaks" && row.family != "voids")
      throw UserError(table.where(r, family) + ": \"" + row.family + "\"; allowed: streaks or voids");
    row.pattern = pattern >= 0 ? table.text(r, pattern) : "none";
    const auto required = [&](int column) {
      const double value = table.number(r, column);
      if (std::isnan(value)) throw UserError(table.where(r, column) + ": the truth value is missing");
      return value;
    };
    row.count = required(count);
    row.burden_mm3 = required(burden);
    row.affected_fraction = required(fraction);
    row.densitometry = densitometry >= 0 ? table.number(r, densitometry) : std::nan("");
    row.confounder = confounder >= 0 ? table.number(r, confounder) : std::nan("");
    for (const auto& [column, path] :
         {std::make_pair(image, &row.image_path), std::make_pair(labels, &row.labels_path)}) {
      if (table.missing(r, column)) throw UserError(table.where(r, column) + ": the file name is missing");
      const fs::path name(table.text(r, column));
      *path = (name.is_absolute() ? name : root / name).string();
    }
    rows.push_back(std::move(row));
  }
  return PhantomSetIndex(folder, truth.string(), std::move(rows), read_origin(root));
}

}  // namespace frugal
