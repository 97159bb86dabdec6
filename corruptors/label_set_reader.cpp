#include "corruptors/label_set_reader.h"

#include <yaml-cpp/yaml.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <map>
#include <nlohmann/json.hpp>
#include <tuple>

#include "corruptors/rater_yaml.h"
#include "phantoms/csv_table.h"
#include "phantoms/nifti_io.h"
#include "phantoms/user_error.h"

namespace frugal {

namespace fs = std::filesystem;

std::string LabelSetReadOptions::validate() const {
  if (rater < -1) return "rater = " + std::to_string(rater) + ": allowed -1 (every rater) or a panel member 0, 1, ...";
  return "";
}

namespace {

// Subject and rescan ranges of `frugal phantoms` (docs/phantom-set.md).
constexpr long long kLargestSubject = 100'000'000;
constexpr long long kLargestRescan = 20;

using LabelKey = std::tuple<int, int, int>;  // subject, rescan, rater

template <class Value>
Value manifest_value(const nlohmann::json& manifest, const char* key, const std::string& file) {
  if (!manifest.contains(key))
    throw UserError(file + ": no \"" + std::string(key) + "\" entry; not a label set written by frugal labels");
  try {
    return manifest.at(key).get<Value>();
  } catch (const nlohmann::json::exception&) {
    throw UserError(file + ": \"" + std::string(key) +
                    "\" has the wrong type; not a label set written by frugal labels");
  }
}

LabelSetInfo read_manifest(const fs::path& root) {
  const std::string file = (root / "manifest.json").string();
  std::error_code ignored;
  if (!fs::is_directory(root, ignored)) throw UserError(root.string() + ": no such label set folder");
  if (!fs::exists(file, ignored))
    throw UserError(root.string() +
                    ": no manifest.json, so not a finished label set (frugal labels writes it last; "
                    "run frugal labels again to finish the set)");
  std::ifstream stream(file);
  nlohmann::json manifest;
  try {
    manifest = nlohmann::json::parse(stream);
  } catch (const nlohmann::json::exception& error) {
    throw UserError(file + ": not valid JSON (" + std::string(error.what()) + ")");
  }
  if (!manifest.is_object() || manifest.value("kind", std::string()) != "label_set")
    throw UserError(file +
                    ": not a label set manifest (its \"kind\" is not \"label_set\"); give a folder written by "
                    "frugal labels");
  LabelSetInfo info;
  info.folder = root.string();
  info.kind = label_kind_from_string(manifest_value<std::string>(manifest, "label_kind", file));
  if (manifest.contains("count_scope"))
    info.scope = count_scope_from_string(manifest_value<std::string>(manifest, "count_scope", file));
  info.raters = manifest_value<int>(manifest, "raters", file);
  info.first = manifest_value<int>(manifest, "first", file);
  info.count = manifest_value<int>(manifest, "count", file);
  info.seed = manifest_value<std::uint64_t>(manifest, "seed", file);
  info.annotator_hours = manifest_value<double>(manifest, "annotator_hours", file);
  info.scenario_file = manifest.value("scenario_file", std::string());
  info.rater_file = manifest.value("rater_file", std::string());
  if (info.raters < 1)
    throw UserError(file + ": \"raters\" is " + std::to_string(info.raters) + "; must be at least 1");
  if (manifest.contains("scenario")) info.scenario_json = manifest.at("scenario").dump();
  if (manifest.contains("rater")) {
    // The resolved rater as JSON; JSON is YAML, so the rater reader checks it like a rater file.
    info.rater = read_rater(YAML::Load(manifest.at("rater").dump()), file + " (rater)");
  }
  return info;
}

bool has_mask(LabelKind kind) { return kind == LabelKind::partial_mask || kind == LabelKind::outline; }
bool has_value(LabelKind kind) {
  return kind == LabelKind::presence || kind == LabelKind::count || kind == LabelKind::grade;
}

LabelImage read_mask(const fs::path& root, const CsvTable& table, std::size_t row, int column) {
  const std::string& name = table.text(row, column);
  if (table.missing(row, column))
    throw UserError(table.where(row, column) + ": no mask file; allowed: the mask's path relative to the set folder");
  const fs::path path = fs::path(name).is_absolute() ? fs::path(name) : root / name;
  std::error_code ignored;
  if (!fs::is_regular_file(path, ignored))
    throw UserError(table.where(row, column) + ": mask file " + path.string() + " does not exist");
  LabelImage mask = read_nifti_labels(path.string());
  for (std::uint8_t value : mask.voxels())
    if (value > 1)
      throw UserError(path.string() + " (" + table.where(row) + "): mask value " + std::to_string(value) +
                      "; allowed: 0 and 1");
  return mask;
}

void read_clicks(const fs::path& root, std::vector<Label>& labels, const std::map<LabelKey, std::size_t>& positions,
                 const std::vector<std::size_t>& expected, const CsvTable& labels_table,
                 const std::vector<std::size_t>& label_rows) {
  const CsvTable table = read_csv_table((root / "clicks.csv").string());
  const int subject = table.require_column("subject");
  const int rescan = table.require_column("rescan");
  const int rater = table.require_column("rater");
  const int x = table.require_column("x_mm");
  const int y = table.require_column("y_mm");
  const int z = table.require_column("z_mm");
  for (std::size_t r = 0; r < table.rows.size(); ++r) {
    const LabelKey key{static_cast<int>(table.integer(r, subject, 0, kLargestSubject)),
                       static_cast<int>(table.integer(r, rescan, 0, kLargestRescan)),
                       static_cast<int>(table.integer(r, rater, 0, 1'000'000))};
    const auto found = positions.find(key);
    if (found == positions.end()) continue;  // a rater filtered out, or checked below by the counts
    Click click;
    for (int axis = 0; axis < 3; ++axis) {
      const int column = axis == 0 ? x : axis == 1 ? y : z;
      click.position_mm[static_cast<std::size_t>(axis)] = table.number(r, column);
      if (std::isnan(click.position_mm[static_cast<std::size_t>(axis)]))
        throw UserError(table.where(r, column) + ": the click position is missing; allowed: a number in mm");
    }
    labels[found->second].clicks.push_back(click);
  }
  for (std::size_t i = 0; i < labels.size(); ++i)
    if (labels[i].clicks.size() != expected[i])
      throw UserError(labels_table.where(label_rows[i]) + ": the label lists " + std::to_string(expected[i]) +
                      " clicks but " + (root / "clicks.csv").string() + " holds " +
                      std::to_string(labels[i].clicks.size()) + " for subject " + std::to_string(labels[i].subject) +
                      ", rater " + std::to_string(labels[i].rater));
}

}  // namespace

LabelSet read_label_set(const std::string& folder, const LabelSetReadOptions& options) {
  if (const std::string error = options.validate(); !error.empty()) throw UserError(error);
  const fs::path root(folder);
  LabelSet set;
  set.info = read_manifest(root);
  const LabelSetInfo& info = set.info;
  if (options.rater >= info.raters)
    throw UserError(folder + ": rater " + std::to_string(options.rater) + " was asked for, but the panel has " +
                    std::to_string(info.raters) + " raters; allowed: 0 to " + std::to_string(info.raters - 1));

  const CsvTable table = read_csv_table((root / "labels.csv").string());
  const int subject = table.require_column("subject");
  const int rescan = table.require_column("rescan");
  const int rater = table.require_column("rater");
  const int kind = table.require_column("kind");
  const int value = table.require_column("value");
  const int capped = table.require_column("capped");
  const int clicks = table.require_column("clicks");
  const int cost = table.require_column("cost_seconds");
  const int mask = table.require_column("mask");
  const std::string kind_name = to_string(info.kind);

  std::map<LabelKey, std::size_t> positions;
  std::map<LabelKey, int> lines;
  std::vector<std::size_t> expected_clicks;
  std::vector<std::size_t> label_rows;
  for (std::size_t r = 0; r < table.rows.size(); ++r) {
    Label label;
    label.subject = static_cast<int>(table.integer(r, subject, 0, kLargestSubject));
    label.rescan = static_cast<int>(table.integer(r, rescan, 0, kLargestRescan));
    label.rater = static_cast<int>(table.integer(r, rater, 0, info.raters - 1));
    label.kind = info.kind;
    if (table.text(r, kind) != kind_name)
      throw UserError(table.where(r, kind) + ": \"" + table.text(r, kind) + "\" but manifest.json says the set holds " +
                      kind_name + " labels; allowed: one kind per set");
    const LabelKey key{label.subject, label.rescan, label.rater};
    if (const auto earlier = lines.find(key); earlier != lines.end())
      throw UserError(table.where(r) + ": a second label for subject " + std::to_string(label.subject) + ", rescan " +
                      std::to_string(label.rescan) + ", rater " + std::to_string(label.rater) +
                      " (the first is on line " + std::to_string(earlier->second) +
                      "); allowed: one label per subject, rescan and rater");
    lines[key] = table.lines[r];
    label.cost_seconds = table.number(r, cost);
    if (std::isnan(label.cost_seconds) || label.cost_seconds < 0.0)
      throw UserError(table.where(r, cost) + ": \"" + table.text(r, cost) +
                      "\"; allowed: annotator seconds, 0 or more");
    label.capped = table.integer(r, capped, 0, 1) == 1;
    const std::size_t click_count = static_cast<std::size_t>(table.integer(r, clicks, 0, 1'000'000));
    if (has_value(info.kind)) {
      label.value = table.number(r, value);
      const bool whole = std::floor(label.value) == label.value;
      const bool allowed = !std::isnan(label.value) && whole && label.value >= 0.0 &&
                           (info.kind != LabelKind::presence || label.value <= 1.0) &&
                           (info.kind != LabelKind::grade || label.value < info.rater.grading.bins());
      if (!allowed)
        throw UserError(table.where(r, value) + ": \"" + table.text(r, value) + "\" is not a " + kind_name +
                        (info.kind == LabelKind::presence ? "; allowed: 0 or 1"
                         : info.kind == LabelKind::grade
                             ? "; allowed: a bin index 0 to " + std::to_string(info.rater.grading.bins() - 1)
                             : "; allowed: a whole number of lesions, 0 or more"));
    } else if (!table.missing(r, value)) {
      throw UserError(table.where(r, value) + ": \"" + table.text(r, value) + "\"; " + kind_name +
                      " labels have no value; allowed: NA");
    }
    if (options.rater >= 0 && label.rater != options.rater) continue;
    if (has_mask(info.kind) && options.read_masks) label.mask = read_mask(root, table, r, mask);
    set.annotator_seconds += label.cost_seconds;
    positions[key] = set.labels.size();
    expected_clicks.push_back(click_count);
    label_rows.push_back(r);
    set.labels.push_back(std::move(label));
  }
  if (info.kind == LabelKind::points) read_clicks(root, set.labels, positions, expected_clicks, table, label_rows);
  return set;
}

std::string check_label_set_origin(const LabelSetInfo& labels, const PhantomSetIndex& phantoms) {
  const PhantomSetOrigin& origin = phantoms.origin();
  if (!origin.known || labels.scenario_json.empty()) return "";
  if (origin.seed != labels.seed)
    return labels.folder + " was made for the subjects of seed " + std::to_string(labels.seed) + " but " +
           phantoms.folder() + " was drawn with seed " + std::to_string(origin.seed) +
           ", so the labels describe other images; use labels and phantoms made with the same scenario and seed";
  if (origin.scenario_json != labels.scenario_json)
    return labels.folder + " was made from another scenario than " + phantoms.folder() +
           " (their manifest.json files record different resolved scenarios, or different --dims), so the labels "
           "describe other images; use labels and phantoms made with the same scenario and seed";
  return "";
}

void check_labels_in_phantom_set(const LabelSet& labels, const PhantomSetIndex& phantoms) {
  if (const std::string problem = check_label_set_origin(labels.info, phantoms); !problem.empty())
    throw UserError(problem);
  for (const Label& label : labels.labels)
    if (phantoms.find(label.subject, label.rescan) == nullptr)
      throw UserError(labels.info.folder + "/labels.csv: subject " + std::to_string(label.subject) + ", rescan " +
                      std::to_string(label.rescan) + " has no image in " + phantoms.truth_file() +
                      "; allowed: labels of subjects the phantom set holds (draw it with the same --first and a "
                      "--count that covers the labelled subjects)");
}

}  // namespace frugal
