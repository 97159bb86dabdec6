// frugal predict: what a trained model says about images (a phantom set's or any NIfTI files):
// predictions.csv with one row per image (results_schema/predictions_v1.json) and a float32 map
// per image on the image's own grid.

#include <CLI/CLI.hpp>
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <utility>
#include <filesystem>
#include <map>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "cli/commands.h"
#include "cli/progress_bar.h"
#include "experiments/learn/learner.h"
#include "experiments/scoring/predictions_table.h"
#include "experiments/study/map_kind.h"
#include "frugal_version.h"
#include "phantoms/folder_manifest.h"
#include "phantoms/nifti_io.h"
#include "phantoms/phantom_set_reader.h"
#include "phantoms/truth_tables.h"
#include "phantoms/user_error.h"
#include "phantoms/whole_file.h"

namespace frugal::cli {
namespace {

namespace fs = std::filesystem;

struct PredictArguments {
  std::string model;
  std::vector<std::string> images;
  std::string out;
  int threads = 2;
  bool no_maps = false;
  bool overwrite = false;
};

struct Input {
  int subject = -1;  // -1 when the image is not part of a phantom set
  int rescan = -1;
  std::string path;
  std::string stem;  // map file name without extension
};

bool is_nifti(const std::string& name) {
  const auto ends_with = [&](const std::string& suffix) {
    return name.size() >= suffix.size() && name.compare(name.size() - suffix.size(), suffix.size(), suffix) == 0;
  };
  return ends_with(".nii") || ends_with(".nii.gz");
}

std::string stem_of(const std::string& path) {
  std::string name = fs::path(path).filename().string();
  for (const std::string suffix : {".nii.gz", ".nii"})
    if (name.size() > suffix.size() && name.compare(name.size() - suffix.size(), suffix.size(), suffix) == 0)
      return name.substr(0, name.size() - suffix.size());
  return name;
}

// Phantom set folders give their images in truth.csv order with subject and rescan; files are
// taken as they are.
// `fingerprints` receives each phantom set's fingerprint, so that score can tell whose predictions these are.
std::vector<Input> gather_inputs(const std::vector<std::string>& paths, nlohmann::json& fingerprints) {
  std::vector<Input> inputs;
  fingerprints = nlohmann::json::array();
  for (const std::string& path : paths) {
    std::error_code ignored;
    if (fs::is_directory(path, ignored)) {
      // The manifest first: a killed frugal phantoms leaves a folder without it (and perhaps
      // without truth.csv), which must be named unfinished, not merely incomplete.
      read_folder_manifest(path, "phantom_set",
                           "a phantom set folder (frugal phantoms) or NIfTI files (.nii, .nii.gz)");
      if (!fs::exists(fs::path(path) / "truth.csv", ignored))
        throw UserError(path +
                        ": a folder without truth.csv; allowed: a phantom set folder (frugal phantoms) or "
                        "NIfTI files (.nii, .nii.gz)");
      const PhantomSetIndex set = read_phantom_set(path);
      fingerprints.push_back({{"folder", path}, {"fingerprint", phantom_set_fingerprint(path)}});
      for (const TruthRow& row : set.rows())
        inputs.push_back({row.subject, row.rescan, row.image_path, stem_of(row.image_path)});
    } else if (fs::is_regular_file(path, ignored) && is_nifti(path)) {
      inputs.push_back({-1, -1, path, stem_of(path)});
    } else if (!fs::exists(path, ignored)) {
      throw UserError(path + ": no such file or folder");
    } else {
      throw UserError(path +
                      ": not a NIfTI file; allowed: a phantom set folder (frugal phantoms) or NIfTI files "
                      "(.nii, .nii.gz)");
    }
  }
  if (inputs.empty()) throw UserError("--images: no images to predict (the phantom sets given are empty)");
  std::map<std::string, std::string> owners;
  for (const Input& input : inputs) {
    const auto [found, fresh] = owners.emplace(input.stem, input.path);
    if (!fresh)
      throw UserError("--images: " + found->second + " and " + input.path + " would share the map maps/" + input.stem +
                      ".nii.gz; predict them into separate --out folders");
  }
  return inputs;
}

// Removes what an earlier run wrote, manifest first, so an interrupted overwrite never looks finished.
void remove_predictions(const fs::path& root) {
  std::error_code ignored;
  for (const char* name : {"manifest.json", "predictions.csv"}) fs::remove(root / name, ignored);
  if (!fs::is_directory(root / "maps", ignored)) return;
  for (const auto& entry : fs::directory_iterator(root / "maps", ignored))
    if (is_nifti(entry.path().filename().string())) fs::remove(entry.path(), ignored);
}

void run_predict(const PredictArguments& arguments) {
  const auto start = std::chrono::steady_clock::now();
  if (arguments.threads < 1 || arguments.threads > 256)
    throw UserError("--threads " + std::to_string(arguments.threads) + ": allowed 1 to 256");
  require_output_folder(arguments.out, "predictions", arguments.overwrite);
  const learn::TrainedModel model = learn::TrainedModel::load(arguments.model);
  const learn::Strategy strategy = model.strategy();
  nlohmann::json fingerprints;
  const std::vector<Input> inputs = gather_inputs(arguments.images, fingerprints);

  const fs::path root(arguments.out);
  std::error_code ignored;
  if (arguments.overwrite) remove_predictions(root);
  const scoring::MapKind map_kind = arguments.no_maps ? scoring::MapKind::none : study::map_kind_of(strategy);
  fs::create_directories(map_kind == scoring::MapKind::none ? root : root / "maps", ignored);
  if (!fs::is_directory(root, ignored)) throw UserError(arguments.out + ": cannot create the output folder");

  WholeFile table(root / "predictions.csv");
  table.write(csv_version_comment("predictions") + scoring::predictions_csv_header());
  ProgressBar bar("predict", static_cast<long long>(inputs.size()));
  // Batches bound the memory of a large set; predictions do not depend on the batch size.
  constexpr std::size_t kChunk = 64;
  int maps_written = 0;
  int far_intensities = 0;  // images whose intensities are far from the training images'
  std::pair<std::string, learn::IntensityShift> first_far;
  for (std::size_t first = 0; first < inputs.size(); first += kChunk) {
    const std::size_t last = std::min(inputs.size(), first + kChunk);
    std::vector<FloatImage> images;
    for (std::size_t i = first; i < last; ++i) images.push_back(read_nifti_image(inputs[i].path));
    std::vector<learn::Prediction> predictions;
    try {
      predictions = learn::predict(model, images, arguments.threads);
    } catch (const UserError&) {
      // Name the image that does not fit the model (its grid differs from the training images').
      for (std::size_t i = first; i < last; ++i) {
        try {
          learn::predict(model, images[i - first], 1);
        } catch (const UserError& error) {
          throw UserError(inputs[i].path + ": " + arguments.model + " cannot predict it: " + error.what());
        }
      }
      throw;
    }
    for (std::size_t i = first; i < last; ++i) {
      const learn::IntensityShift shift = learn::intensity_shift(model, images[i - first]);
      if (shift.far && far_intensities++ == 0) first_far = {inputs[i].path, shift};
      const learn::Prediction& prediction = predictions[i - first];
      scoring::PredictionRow row;
      row.subject = inputs[i].subject;
      row.rescan = inputs[i].rescan;
      row.image = inputs[i].path;
      row.count = prediction.count;
      row.affected_fraction = prediction.affected_fraction;
      row.presence_probability = prediction.presence_probability;
      row.grade = prediction.grade;
      row.burden_mm3 = prediction.burden_mm3;
      if (map_kind != scoring::MapKind::none && !prediction.map.empty()) {
        row.map = "maps/" + inputs[i].stem + ".nii.gz";
        row.map_kind = map_kind;
        write_nifti(prediction.map, (root / row.map).string());
        ++maps_written;
      }
      table.write(scoring::predictions_csv_row(row));
    }
    bar.update(static_cast<long long>(last));
  }
  bar.finish();
  table.commit();

  nlohmann::json manifest;
  manifest["tool"] = "frugal";
  manifest["version"] = kVersion;
  manifest["schema_version"] = kOutputSchemaVersion;
  manifest["kind"] = "predictions";
  manifest["model"] = arguments.model;
  manifest["strategy"] = learn::to_string(strategy);
  manifest["images"] = arguments.images;
  manifest["phantom_sets"] = fingerprints;  // score refuses a set whose fingerprint is not here
  manifest["rows"] = inputs.size();
  manifest["maps"] = maps_written;
  manifest["map_kind"] = scoring::to_string(map_kind);
  manifest["images_with_far_intensities"] = far_intensities;  // learn::intensity_shift
  manifest["files"] = {{"predictions", "predictions.csv"}, {"maps", maps_written > 0 ? "maps/" : ""}};
  manifest["caution"] = "Predictions of a model trained on synthetic phantoms; not for clinical use.";
  WholeFile manifest_file(root / "manifest.json");
  manifest_file.write(manifest.dump(2) + "\n");
  manifest_file.commit();

  if (far_intensities > 0) {
    const learn::IntensityShift& shift = first_far.second;
    std::fprintf(stderr,
                 "frugal: warning: %d of %zu images have intensities far from those %s was trained on (first: %s, "
                 "mean %.3g training SDs away, spread %.3g times theirs); predictions on them are extrapolations: "
                 "check the images' units and modality\n",
                 far_intensities, inputs.size(), arguments.model.c_str(), first_far.first.c_str(), shift.mean_offset_sd,
                 shift.spread_ratio);
  }
  const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  std::printf("predicted %zu images with %s (%s) in %.2f s; wrote %s/predictions.csv and %d maps\n", inputs.size(),
              learn::to_string(strategy).c_str(), arguments.model.c_str(), seconds, arguments.out.c_str(),
              maps_written);
}

}  // namespace

void add_predict_command(CLI::App& app) {
  auto arguments = std::make_shared<PredictArguments>();
  CLI::App* command = app.add_subcommand(
      "predict",
      "Apply a trained model (frugal train) to images: DIR/predictions.csv with count, affected fraction, presence "
      "probability, grade and burden per image, and a float32 map per image in DIR/maps (docs/predict.md).");
  command->add_option("model", arguments->model, "Checkpoint written by frugal train (MODEL.pt)")->required();
  command
      ->add_option("--images", arguments->images,
                   "Phantom set folders (their images in truth.csv order) or NIfTI files")
      ->required();
  command->add_option("--out", arguments->out, "Output folder (created if missing)")->required();
  command
      ->add_option("--threads", arguments->threads,
                   "Torch threads; predictions do not depend on it beyond float "
                   "rounding")
      ->capture_default_str();
  command->add_flag("--no-maps", arguments->no_maps, "Write predictions.csv only, no map files");
  command->add_flag("--overwrite", arguments->overwrite, "Allow a folder that already holds finished predictions");
  command->callback([arguments] { run_predict(*arguments); });
}

}  // namespace frugal::cli
