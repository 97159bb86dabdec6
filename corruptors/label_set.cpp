#include "corruptors/label_set.h"

#include <chrono>
#include <cstdio>
#include <filesystem>

#include <nlohmann/json.hpp>
#include <yaml-cpp/yaml.h>

#include "corruptors/labeler.h"
#include "corruptors/rater_yaml.h"
#include "frugal_version.h"
#include "phantoms/text_format.h"
#include "phantoms/folder_manifest.h"
#include "phantoms/nifti_io.h"
#include "phantoms/ordered_pipeline.h"
#include "phantoms/phantom.h"
#include "phantoms/phantom_set.h"
#include "phantoms/scenario_yaml.h"
#include "phantoms/truth_tables.h"
#include "phantoms/user_error.h"
#include "phantoms/whole_file.h"
#include "phantoms/yaml_to_json.h"

namespace frugal {

namespace fs = std::filesystem;

std::string LabelSetOptions::validate() const { return validate_subject_range(out_dir, count, first, threads); }

namespace {

bool has_mask(LabelKind kind) { return kind == LabelKind::partial_mask || kind == LabelKind::outline; }

// Removes what a label set writes, manifest first, so that a killed overwrite never looks finished
// and no table or mask of an earlier set (another kind, more subjects) is left behind.
void remove_label_set(const fs::path& root) {
  std::error_code ignored;
  for (const char* name : {"manifest.json", "labels.csv", "clicks.csv"}) fs::remove(root / name, ignored);
  if (!fs::is_directory(root / "masks", ignored)) return;
  for (const auto& entry : fs::directory_iterator(root / "masks", ignored))
    if (entry.path().filename().string().rfind("subject_", 0) == 0) fs::remove(entry.path(), ignored);
}

struct LabelledSubject {
  std::string label_rows;
  std::string click_rows;
  double seconds = 0.0;
};

}  // namespace

std::string labels_csv_header() { return "subject,rescan,rater,kind,value,capped,clicks,cost_seconds,mask\n"; }

std::string labels_csv_row(const Label& label, const std::string& mask_file) {
  const bool scalar = label.kind == LabelKind::presence || label.kind == LabelKind::count || label.kind == LabelKind::grade;
  return std::to_string(label.subject) + "," + std::to_string(label.rescan) + "," + std::to_string(label.rater) + "," +
         to_string(label.kind) + "," + (scalar ? exact_decimal(label.value) : std::string("NA")) + "," +
         (label.capped ? "1" : "0") + "," + std::to_string(label.clicks.size()) + "," + exact_decimal(label.cost_seconds) + "," +
         mask_file + "\n";
}

std::string clicks_csv_header() { return "subject,rescan,rater,click,x_mm,y_mm,z_mm\n"; }

std::string clicks_csv_rows(const Label& label) {
  std::string rows;
  for (std::size_t n = 0; n < label.clicks.size(); ++n) {
    const auto& p = label.clicks[n].position_mm;
    rows += std::to_string(label.subject) + "," + std::to_string(label.rescan) + "," + std::to_string(label.rater) + "," +
            std::to_string(n + 1) + "," + exact_decimal(p[0]) + "," + exact_decimal(p[1]) + "," + exact_decimal(p[2]) + "\n";
  }
  return rows;
}

LabelSetSummary write_label_set(const ScenarioOptions& scenario, const std::string& scenario_file,
                                const RaterOptions& rater, const std::string& rater_file, const LabelSetOptions& options,
                                const std::function<void(long long)>& progress) {
  if (std::string error = options.validate(); !error.empty()) throw UserError(error);
  if (std::string error = scenario.validate(); !error.empty()) throw UserError(scenario_file + ": " + error);
  if (std::string error = rater.validate(); !error.empty()) throw UserError(rater_file + ": " + error);
  const auto start = std::chrono::steady_clock::now();
  const fs::path root(options.out_dir);
  require_output_folder(options.out_dir, "label_set", options.overwrite);
  std::error_code ignored;
  if (options.overwrite) remove_label_set(root);
  fs::create_directories(root / "masks", ignored);
  if (!fs::is_directory(root / "masks")) throw UserError(options.out_dir + ": cannot create the output folders");

  WholeFile labels_file(root / "labels.csv");
  labels_file.write(csv_version_comment("labels") + labels_csv_header());
  const bool with_clicks = options.kind == LabelKind::points;
  std::unique_ptr<WholeFile> clicks_file;
  if (with_clicks) {
    clicks_file = std::make_unique<WholeFile>(root / "clicks.csv");
    clicks_file->write(csv_version_comment("clicks") + clicks_csv_header());
  }

  LabelSetSummary summary;
  const auto produce = [&](int n) {
    const Subject subject = generate_subject(scenario, options.seed, options.first + n, 0);
    LabelledSubject result;
    for (int member = 0; member < rater.panel.raters; ++member) {
      LabelRequest request;
      request.kind = options.kind;
      request.scope = options.scope;
      request.rater = member;
      const Label label = make_label(subject, rater, request, options.seed);
      std::string mask_file = "NA";
      if (has_mask(label.kind)) {
        char name[64];
        std::snprintf(name, sizeof(name), "masks/subject_%06d_rater%d.nii.gz", label.subject, label.rater);
        mask_file = name;
        write_nifti(label.mask, (root / mask_file).string());
      }
      result.label_rows += labels_csv_row(label, mask_file);
      if (with_clicks) result.click_rows += clicks_csv_rows(label);
      result.seconds += label.cost_seconds;
    }
    return result;
  };
  const auto consume = [&](int n, LabelledSubject&& result) {
    labels_file.write(result.label_rows);
    if (with_clicks) clicks_file->write(result.click_rows);
    summary.annotator_seconds += result.seconds;
    if (progress) progress(n + 1);
  };
  run_ordered<LabelledSubject>(options.count, options.threads, produce, consume);
  labels_file.commit();
  if (with_clicks) clicks_file->commit();

  nlohmann::json manifest;
  manifest["tool"] = "frugal";
  manifest["version"] = kVersion;
  manifest["schema_version"] = kOutputSchemaVersion;
  manifest["kind"] = "label_set";
  manifest["label_kind"] = to_string(options.kind);
  if (options.kind == LabelKind::count) manifest["count_scope"] = to_string(options.scope);
  manifest["scenario_file"] = scenario_file;
  manifest["scenario"] = yaml_to_json(YAML::Load(scenario_to_yaml(scenario)));
  manifest["rater_file"] = rater_file;
  manifest["rater"] = yaml_to_json(YAML::Load(rater_to_yaml(rater)));
  manifest["seed"] = options.seed;
  manifest["first"] = options.first;
  manifest["count"] = options.count;
  manifest["raters"] = rater.panel.raters;
  manifest["annotator_hours"] = summary.annotator_seconds / 3600.0;
  manifest["phantom_set"] = "the subjects of `frugal phantoms` with the same scenario, seed and --first";
  manifest["caution"] =
      "Simulated raters on synthetic phantoms; annotation times are model assumptions, not measurements.";
  WholeFile manifest_file(root / "manifest.json");
  manifest_file.write(manifest.dump(2) + "\n");
  manifest_file.commit();

  summary.labels = options.count * rater.panel.raters;
  summary.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  return summary;
}

}  // namespace frugal
