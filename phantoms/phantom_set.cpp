#include "phantoms/phantom_set.h"

#include <opencv2/core/version.hpp>

#include <chrono>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <memory>

#include <nlohmann/json.hpp>
#include <yaml-cpp/yaml.h>

#include "frugal_version.h"
#include "phantoms/folder_manifest.h"
#include "phantoms/nifti_io.h"
#include "phantoms/ordered_pipeline.h"
#include "phantoms/phantom.h"
#include "phantoms/preview.h"
#include "phantoms/scenario_yaml.h"
#include "phantoms/truth_tables.h"
#include "phantoms/user_error.h"
#include "phantoms/whole_file.h"
#include "phantoms/yaml_to_json.h"

namespace frugal {

namespace fs = std::filesystem;

std::string validate_subject_range(const std::string& out_dir, int count, int first, int threads) {
  if (out_dir.empty()) return "--out is empty; give an output folder";
  if (count < 1 || count > 10'000'000) return "--count is " + std::to_string(count) + "; allowed 1..10000000";
  if (first < 0) return "--first is " + std::to_string(first) + "; allowed 0 or more";
  if (static_cast<long long>(first) + count > 99'999'999LL) return "--first + --count must stay below 100000000";
  if (threads < 1 || threads > 256) return "--threads is " + std::to_string(threads) + "; allowed 1..256";
  return {};
}

std::string PhantomSetOptions::validate() const {
  if (std::string error = validate_subject_range(out_dir, count, first, threads); !error.empty()) return error;
  if (rescans < 0 || rescans > 20) return "--rescans is " + std::to_string(rescans) + "; allowed 0..20";
  if (preview_tiles < 0 || preview_tiles > 100) return "--preview-tiles is " + std::to_string(preview_tiles) + "; allowed 0..100";
  return {};
}

namespace {

std::string subject_stem(int subject, int rescan) {
  char text[48];
  if (rescan == 0)
    std::snprintf(text, sizeof(text), "subject_%06d", subject);
  else
    std::snprintf(text, sizeof(text), "subject_%06d_rescan%d", subject, rescan);
  return text;
}

// Removes what a phantom set writes, manifest first, so that a killed overwrite never looks finished
// and no subject of an earlier, larger set is left behind. Other files in the folder stay.
void remove_phantom_set(const fs::path& root) {
  std::error_code ignored;
  for (const char* name : {"manifest.json", "truth.csv", "objects.csv", "scenario.resolved.yaml", "preview.png"})
    fs::remove(root / name, ignored);
  for (const char* folder : {"images", "labels"}) {
    if (!fs::is_directory(root / folder, ignored)) continue;
    for (const auto& entry : fs::directory_iterator(root / folder, ignored))
      if (entry.path().filename().string().rfind("subject_", 0) == 0) fs::remove(entry.path(), ignored);
  }
}

struct FinishedSubject {
  std::string truth_rows;
  std::string object_rows;
  std::unique_ptr<Subject> preview;  // kept only while the montage still wants tiles
};

nlohmann::json manifest_json(const ScenarioOptions& scenario, const std::string& scenario_file,
                             const PhantomSetOptions& options) {
  nlohmann::json manifest;
  manifest["tool"] = "frugal";
  manifest["version"] = kVersion;
  manifest["schema_version"] = kOutputSchemaVersion;
  manifest["kind"] = "phantom_set";
  manifest["scenario_file"] = scenario_file;
  manifest["scenario"] = yaml_to_json(YAML::Load(scenario_to_yaml(scenario)));
  manifest["seed"] = options.seed;
  manifest["first"] = options.first;
  manifest["count"] = options.count;
  manifest["rescans"] = options.rescans;
  manifest["dims"] = scenario.geometry.dims;
  // Names as objects.csv writes them in its 'kind' column.
  manifest["label_codes"] = {{"0", "outside"}, {"1", "field"}, {"2", "lesion"}, {"3", "dot"}, {"4", "line"}};
  manifest["files"] = {{"truth", "truth.csv"},           {"objects", "objects.csv"}, {"scenario", "scenario.resolved.yaml"},
                       {"images", "images/"},            {"labels", "labels/"}};
  if (options.preview_tiles > 0) manifest["files"]["preview"] = "preview.png";
  manifest["libraries"] = {{"opencv", CV_VERSION}};
  manifest["caution"] =
      "Synthetic phantoms. Results guide the design of a labelling plan and the choice of a method; they do not "
      "validate a method for clinical use or replace a pilot on real data, ethics approval or clinical judgement.";
  return manifest;
}

}  // namespace

PhantomSetSummary write_phantom_set(const ScenarioOptions& scenario, const std::string& scenario_file,
                                    const PhantomSetOptions& options, const std::function<void(long long)>& progress) {
  if (std::string error = options.validate(); !error.empty()) throw UserError(error);
  if (std::string error = scenario.validate(); !error.empty()) throw UserError(scenario_file + ": " + error);
  const auto start = std::chrono::steady_clock::now();
  const fs::path root(options.out_dir);
  require_output_folder(options.out_dir, "phantom_set", options.overwrite);
  if (options.overwrite) remove_phantom_set(root);
  std::error_code made;
  fs::create_directories(root / "images", made);
  fs::create_directories(root / "labels", made);
  if (made) throw UserError(options.out_dir + ": cannot create the output folders: " + made.message());

  WholeFile truth_file(root / "truth.csv");
  WholeFile objects_file(root / "objects.csv");
  truth_file.write(csv_version_comment("phantom truth") + truth_csv_header());
  objects_file.write(csv_version_comment("phantom objects") + objects_csv_header());
  Montage montage(options.preview_tiles);

  const auto produce = [&](int n) {
    FinishedSubject finished;
    const int subject = options.first + n;
    for (int rescan = 0; rescan <= options.rescans; ++rescan) {
      Subject generated = generate_subject(scenario, options.seed, subject, rescan);
      const std::string stem = subject_stem(subject, rescan);
      const std::string image_file = "images/" + stem + ".nii.gz", labels_file = "labels/" + stem + ".nii.gz";
      write_nifti(generated.image, (root / image_file).string());
      write_nifti(generated.labels, (root / labels_file).string());
      finished.truth_rows += truth_csv_row(generated.truth, image_file, labels_file);
      finished.object_rows += objects_csv_rows(generated.truth);
      if (rescan == 0 && n < options.preview_tiles) finished.preview = std::make_unique<Subject>(std::move(generated));
    }
    return finished;
  };
  const auto consume = [&](int n, FinishedSubject&& finished) {
    truth_file.write(finished.truth_rows);
    objects_file.write(finished.object_rows);
    if (finished.preview) montage.add(*finished.preview);
    if (progress) progress(n + 1);
  };
  run_ordered<FinishedSubject>(options.count, options.threads, produce, consume);

  truth_file.commit();
  objects_file.commit();
  if (options.preview_tiles > 0) montage.write_png((root / "preview.png").string());
  WholeFile scenario_copy(root / "scenario.resolved.yaml");
  scenario_copy.write("# frugal " + std::string(kVersion) + ", resolved scenario, schema " +
                      std::to_string(kOutputSchemaVersion) + "\n" + scenario_to_yaml(scenario));
  scenario_copy.commit();
  WholeFile manifest(root / "manifest.json");
  manifest.write(manifest_json(scenario, scenario_file, options).dump(2) + "\n");
  manifest.commit();

  PhantomSetSummary summary;
  summary.subjects = options.count;
  summary.files = options.count * (options.rescans + 1) * 2 + 4 + (options.preview_tiles > 0 ? 1 : 0);
  summary.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  summary.manifest_path = (root / "manifest.json").string();
  return summary;
}

}  // namespace frugal
