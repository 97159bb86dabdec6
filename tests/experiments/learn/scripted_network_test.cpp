// A user's TorchScript network trained by a map strategy through the public learner interface:
// modules are written at run time by make_scripted_module.py with Debian's python3-torch, trained
// on a tiny problem, saved, loaded back in frugal and in Python, and rejected when they break the
// contract (docs/own-network.md). Seeds are fixed and printed.
#include <gtest/gtest.h>
#include <sys/wait.h>

#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "experiments/learn/learner.h"
#include "learn_test_problems.h"
#include "phantoms/user_error.h"

namespace frugal::learn {
namespace {

using testing::buy_labels;
using frugal::careful_rater;
using testing::draw_subjects;
using testing::images_of;
using testing::small_scenario;
using testing::training_set;

constexpr std::uint64_t kSeed = 20240717;
constexpr int kSide = 32;
constexpr int kSubjects = 64;

std::string scratch_path(const std::string& name) { return ::testing::TempDir() + "/" + name; }

std::string quoted(const std::string& text) { return "'" + text + "'"; }

// Runs the helper script with Debian's Python; a missing python3-torch is a failure, not a skip.
int run_helper(const std::string& arguments, std::string& command) {
  command = std::string(FRUGAL_TORCH_PYTHON) + " " + quoted(FRUGAL_SCRIPTED_MODULE_SCRIPT) + " " + arguments;
  const int status = std::system(command.c_str());
  return WIFEXITED(status) ? WEXITSTATUS(status) : -1;
}

std::string helper_failure(int code, const std::string& command) {
  if (code == 3)
    return "python3-torch (or numpy) is missing for " FRUGAL_TORCH_PYTHON "; install it with scripts/setup.sh";
  return "helper exited with " + std::to_string(code) + ": " + command;
}

// Writes a module of `kind` (see make_scripted_module.py) into the scratch folder; throws a
// std::runtime_error with the reason when the helper fails.
std::string make_module(const std::string& kind) {
  const std::string path = scratch_path(kind + ".pt");
  std::string command;
  const int code = run_helper("make " + kind + " " + quoted(path), command);
  if (code != 0) throw std::runtime_error(helper_failure(code, command));
  return path;
}

void write_raw(const std::string& path, const std::vector<float>& values) {
  std::ofstream out(path, std::ios::binary);
  out.write(reinterpret_cast<const char*>(values.data()), static_cast<std::streamsize>(values.size() * sizeof(float)));
  ASSERT_TRUE(out.good()) << path;
}

TrainOptions scripted_options(const std::string& network_file) {
  TrainOptions options;
  options.strategy = Strategy::mask;
  options.network_file = network_file;
  options.epochs = 4;
  options.batch_size = 16;
  options.patience = 0;
  options.seed = kSeed;
  options.threads = 2;
  options.bfloat16 = false;  // float32 throughout, so that PyTorch in Python reproduces the map to 1e-5
  return options;
}

// Expects a UserError whose message names `what` (the file or option the user has to fix) and,
// when given, also says `also`.
void expect_user_error_naming(const std::function<void()>& action, const std::string& what,
                              const std::string& also = "") {
  try {
    action();
    ADD_FAILURE() << "no UserError for " << what;
  } catch (const UserError& error) {
    const std::string message = error.what();
    std::printf("UserError: %s\n", message.c_str());
    EXPECT_NE(message.find(what), std::string::npos) << message;
    if (!also.empty()) {
      EXPECT_NE(message.find(also), std::string::npos) << message;
    }
  }
}

// One scripted 2D network (two convolutions with batch norm) trained by the mask strategy on 64
// streaks subjects of 32 x 32 from exact outlines, shared by the tests below.
class ScriptedMask : public ::testing::Test {
 protected:
  static void SetUpTestSuite() {
    std::printf("seed %llu\n", static_cast<unsigned long long>(kSeed));
    try {
      const ScenarioOptions scenario = small_scenario(Family::streaks, kSide);
      subjects_ = std::make_unique<std::vector<Subject>>(draw_subjects(scenario, kSeed, 0, kSubjects));
      const auto labels = buy_labels(*subjects_, LabelKind::outline, careful_rater(), kSeed);
      const TrainingSet set = training_set(*subjects_, labels);
      result_ = std::make_unique<TrainResult>(train(set, scripted_options(make_module("conv2d"))));
    } catch (const std::exception& error) {
      setup_error_ = error.what();
    }
  }
  static void TearDownTestSuite() {
    result_.reset();
    subjects_.reset();
  }
  void SetUp() override { ASSERT_TRUE(setup_error_.empty()) << setup_error_; }

  static std::unique_ptr<std::vector<Subject>> subjects_;
  static std::unique_ptr<TrainResult> result_;
  static std::string setup_error_;
};
std::unique_ptr<std::vector<Subject>> ScriptedMask::subjects_;
std::unique_ptr<TrainResult> ScriptedMask::result_;
std::string ScriptedMask::setup_error_;

// Four epochs of Adam on a fresh network lower the mean training loss (common practice, no source).
TEST_F(ScriptedMask, TrainingLossFalls) {
  const TrainSummary& summary = result_->summary;
  ASSERT_EQ(summary.epochs_run, 4);
  ASSERT_EQ(summary.training_loss.size(), 4U);
  for (double loss : summary.training_loss) std::printf("training loss %.5f\n", loss);
  EXPECT_LT(summary.training_loss.back(), summary.training_loss.front());
}

// The contract of learner.h: mask predictions are probability maps of the image's shape.
TEST_F(ScriptedMask, PredictsProbabilityMapsOfTheImageShape) {
  EXPECT_EQ(result_->model.strategy(), Strategy::mask);
  const auto images = images_of(*subjects_);
  const auto predictions = predict(result_->model, std::vector<FloatImage>(images.begin(), images.begin() + 4));
  for (std::size_t i = 0; i < predictions.size(); ++i) {
    ASSERT_EQ(predictions[i].map.shape(), images[i].shape()) << "subject " << i;
    for (float value : predictions[i].map.voxels()) {
      ASSERT_GE(value, 0.0F) << "subject " << i;
      ASSERT_LE(value, 1.0F) << "subject " << i;
    }
  }
}

// Saving and loading change no bit of a prediction (common practice, no source).
TEST_F(ScriptedMask, CheckpointRoundTripPredictsIdentically) {
  const std::string path = scratch_path("scripted_mask_checkpoint.pt");
  result_->model.save(path);
  EXPECT_FALSE(std::filesystem::exists(path + ".partial"));
  const TrainedModel loaded = TrainedModel::load(path);
  EXPECT_EQ(loaded.strategy(), Strategy::mask);
  const auto images = images_of(*subjects_);
  const auto before = predict(result_->model, images);
  const auto after = predict(loaded, images);
  ASSERT_EQ(before.size(), after.size());
  for (std::size_t i = 0; i < before.size(); ++i) {
    EXPECT_EQ(before[i].map.voxels(), after[i].map.voxels()) << "subject " << i;
    EXPECT_EQ(before[i].count, after[i].count) << "subject " << i;
  }
}

// The checkpoint is a plain TorchScript file: torch.jit.load in Python, fed the image normalised
// with the checkpoint's frugal_meta.json, gives sigmoid(output) equal to frugal's map. Tolerance
// 1e-5 on probabilities covers float32 rounding of the normalisation and of convolutions run in
// another memory format (common practice, no source); PyTorch itself is the reference.
TEST_F(ScriptedMask, PythonReadsTheCheckpointAndPredictsTheSameMap) {
  const std::string checkpoint = scratch_path("scripted_mask_for_python.pt");
  result_->model.save(checkpoint);
  const FloatImage& image = (*subjects_)[3].image;
  const Prediction prediction = predict(result_->model, image);
  const std::string input_path = scratch_path("python_input.f32");
  const std::string map_path = scratch_path("python_map.f32");
  ASSERT_NO_FATAL_FAILURE(write_raw(input_path, image.voxels()));
  ASSERT_NO_FATAL_FAILURE(write_raw(map_path, prediction.map.voxels()));
  std::string command;
  const int code = run_helper("check " + quoted(checkpoint) + " " + quoted(input_path) + " " + quoted(map_path) + " " +
                                  std::to_string(image.shape().y) + " " + std::to_string(image.shape().x) + " 1e-5",
                              command);
  EXPECT_EQ(code, 0) << (code == 1 ? "the maps differ by more than 1e-5: " + command : helper_failure(code, command));
}

// A traced module (torch.jit.trace) is accepted and trained like a scripted one (docs/own-network.md).
TEST(ScriptedNetwork, TracedModuleTrains) {
  const ScenarioOptions scenario = small_scenario(Family::streaks, kSide);
  const auto subjects = draw_subjects(scenario, kSeed, 0, 16);
  const auto labels = buy_labels(subjects, LabelKind::outline, careful_rater(), kSeed);
  TrainOptions options = scripted_options(make_module("traced2d"));
  options.epochs = 1;
  const TrainResult result = train(training_set(subjects, labels), options);
  EXPECT_EQ(result.summary.epochs_run, 1);
  EXPECT_EQ(predict(result.model, subjects[0].image).map.shape(), subjects[0].image.shape());
}

// 3D images reach the module as [N, 1, D, H, W] (docs/own-network.md).
TEST(ScriptedNetwork, ThreeDimensionalModuleTrains) {
  ScenarioOptions scenario = small_scenario(Family::streaks, kSide);
  scenario.geometry.dims = 3;
  scenario.geometry.size_3d = {16, 16, 16};
  ASSERT_EQ(scenario.validate(), "");
  const auto subjects = draw_subjects(scenario, kSeed, 0, 8);
  const auto labels = buy_labels(subjects, LabelKind::outline, careful_rater(), kSeed);
  TrainOptions options = scripted_options(make_module("conv3d"));
  options.epochs = 1;
  options.batch_size = 4;
  options.validation_fraction = 0.25;
  const TrainResult result = train(training_set(subjects, labels), options);
  EXPECT_EQ(predict(result.model, subjects[0].image).map.shape(), subjects[0].image.shape());
}

// Modules and files that break the contract are user errors that name the file (docs/own-network.md).
class ScriptedNetworkErrors : public ::testing::Test {
 protected:
  void SetUp() override {
    const ScenarioOptions scenario = small_scenario(Family::streaks, kSide);
    subjects_ = draw_subjects(scenario, kSeed, 0, 8);
    labels_ = buy_labels(subjects_, LabelKind::outline, careful_rater(), kSeed);
  }
  // Training with `network_file` throws a UserError naming the file (or `named`, when given).
  void expect_training_fails(const std::string& network_file, const std::string& also = "",
                             Strategy strategy = Strategy::mask, const std::string& named = "") {
    TrainOptions options = scripted_options(network_file);
    options.strategy = strategy;
    options.epochs = 1;
    options.batch_size = 4;
    if (strategy == Strategy::scalar) labels_ = buy_labels(subjects_, LabelKind::count, careful_rater(), kSeed);
    const TrainingSet set = training_set(subjects_, labels_);
    expect_user_error_naming([&] { train(set, options); }, named.empty() ? network_file : named, also);
  }
  std::vector<Subject> subjects_;
  std::vector<Label> labels_;
};

TEST_F(ScriptedNetworkErrors, OutputOfAnotherShape) {
  // The module halves the image: the message gives the probe's shape and the output's.
  expect_training_fails(make_module("wrong-shape"), "[2, 1, 16, 16]");
}

TEST_F(ScriptedNetworkErrors, TupleOutput) { expect_training_fails(make_module("tuple"), "tuple"); }

TEST_F(ScriptedNetworkErrors, NoParameters) { expect_training_fails(make_module("no-parameters"), "no parameters"); }

TEST_F(ScriptedNetworkErrors, NotATorchScriptFile) {
  const std::string path = scratch_path("not_torchscript.pt");
  { std::ofstream(path) << "this is not a TorchScript archive\n"; }
  expect_training_fails(path, "torch.jit.script");
}

// The commonest mistake: torch.save of a state dict, weights without the code to run them.
TEST_F(ScriptedNetworkErrors, StateDictIsNotTorchScript) {
  expect_training_fails(make_module("state-dict"), "not a TorchScript file");
}

TEST_F(ScriptedNetworkErrors, MissingFile) {
  const std::string path = scratch_path("no_such_module.pt");
  std::filesystem::remove(path);
  expect_training_fails(path);
}

// learner.h: network_file is for map strategies; scalar reads a head a TorchScript module lacks,
// so the option, not the file, is what the message names.
TEST_F(ScriptedNetworkErrors, ScalarStrategyRefusesANetworkFile) {
  expect_training_fails(make_module("conv2d"), "scalar", Strategy::scalar, "network_file");
}

}  // namespace
}  // namespace frugal::learn
