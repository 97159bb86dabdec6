// TrainOptions as JSON and back: every field survives, and bad keys or types are refused with
// their key path. The reference is the options struct itself (a round trip; common practice,
// no source).

#include "experiments/learn/train_options_json.h"

#include <gtest/gtest.h>

#include <cmath>
#include <string>

#include "phantoms/user_error.h"

namespace frugal::learn {
namespace {

// Every field away from its default, so that a field the JSON form drops reads back different.
TrainOptions unusual_options() {
  TrainOptions o;
  o.strategy = Strategy::line_filter;
  o.epochs = 7;
  o.batch_size = 3;
  o.learning_rate = 1.25e-4;
  o.weight_decay = 2e-4;
  o.seed = 18446744073709551615ULL;
  o.threads = 3;
  o.validation_fraction = 0.3;
  o.patience = 2;
  o.width = 5;
  o.depth = 2;
  o.normalization = Normalization::instance;
  o.channels_last = false;
  o.bfloat16 = false;
  o.augmentation.flips = false;
  o.augmentation.rotation_degrees = 12.5;
  o.augmentation.deformation_mm = 0.75;
  o.augmentation.deformation_spacing_mm = 9.0;
  o.dice_weight = 0.5;
  o.robust_loss = RobustLoss::bootstrapping;
  o.gce_q = 0.3;
  o.bootstrap_beta = 0.6;
  o.label_smoothing = 0.2;
  o.background_prior = 0.1;
  o.pooling_sharpness = 6.0;
  o.point_radius_mm = 1.5;
  o.object_size_min_mm3 = 3.0;
  o.object_size_max_mm3 = 30.0;
  o.mask_weight = 0.7;
  o.weak_weight = 0.4;
  o.consistency_weight = 0.25;
  o.threshold_hu = -910.0;
  o.line_filter.filter.sigmas_mm = {0.5, 1.25};
  o.line_filter.filter.alpha = 0.4;
  o.line_filter.filter.beta = 0.6;
  o.line_filter.filter.c = 2.0;
  o.line_filter.filter.dark_structures = true;
  o.line_filter.threshold_kind = baselines::ResponseThreshold::absolute;
  o.line_filter.threshold = 0.07;
  o.line_filter.connectivity = 4;
  o.line_filter.min_voxels = 5;
  o.line_filter.min_length_mm = 1.5;
  o.line_filter.max_length_mm = 22.0;
  o.line_filter.min_elongation = 2.5;
  o.network_file = "mine.pt";
  o.grading.bin_edges = {0.01, 0.2};
  o.grading.perception_sd = 0.9;
  o.grading.bias = -0.3;
  o.field.low = -1000.0;
  o.field.drop_border_connected = true;
  return o;
}

// A tripwire: a member added to TrainOptions changes its size (Debian 12 amd64, GCC 12). When it
// trips, add the member to to_json, update_from_json and unusual_options, then the size here.
static_assert(sizeof(TrainOptions) == 424, "TrainOptions changed: give the new member its JSON key");

int leaves(const nlohmann::json& json) {
  if (!json.is_object()) return 1;
  int count = 0;
  for (const auto& item : json.items()) count += leaves(item.value());
  return count;
}

TEST(TrainOptionsJson, EveryMemberIsWrittenAndDiffersFromTheDefault) {
  const nlohmann::json unusual = to_json(unusual_options());
  const TrainOptions default_options;
  const nlohmann::json defaults = to_json(default_options).flatten();
  EXPECT_EQ(leaves(unusual), 51);  // every member of TrainOptions and its nested structs
  const nlohmann::json flat = unusual.flatten();
  for (const auto& item : flat.items()) {
    if (item.key() == "/field/high" || !defaults.contains(item.key())) continue;  // open either way; a longer list
    EXPECT_NE(item.value(), defaults.at(item.key())) << item.key();
  }
}

TEST(TrainOptionsJson, EveryFieldSurvivesTheRoundTrip) {
  const TrainOptions original = unusual_options();
  TrainOptions read;
  update_from_json(to_json(original), read);
  EXPECT_EQ(to_json(read), to_json(original));
  EXPECT_EQ(read.line_filter.filter.sigmas_mm, original.line_filter.filter.sigmas_mm);
  EXPECT_EQ(read.line_filter.threshold_kind, baselines::ResponseThreshold::absolute);
  EXPECT_EQ(read.seed, original.seed);
  EXPECT_EQ(read.field.low, -1000.0);
  EXPECT_EQ(read.grading.perception_sd, 0.9);
  EXPECT_EQ(read.grading.bias, -0.3);
  EXPECT_TRUE(std::isinf(read.field.high));  // an open bound is null in JSON
  EXPECT_TRUE(to_json(read)["field"]["high"].is_null());
}

TEST(TrainOptionsJson, AbsentKeysKeepTheirValue) {
  TrainOptions read = unusual_options();
  update_from_json(nlohmann::json::parse(R"({"epochs": 9})"), read);
  EXPECT_EQ(read.epochs, 9);
  EXPECT_EQ(read.batch_size, 3);
}

void expect_refused(const std::string& text, const std::string& words) {
  TrainOptions options;
  try {
    update_from_json(nlohmann::json::parse(text), options, "train");
    FAIL() << text << " was accepted";
  } catch (const UserError& error) {
    EXPECT_NE(std::string(error.what()).find(words), std::string::npos) << error.what();
  }
}

TEST(TrainOptionsJson, BadKeysAndTypesNameTheirKeyPath) {
  expect_refused(R"({"epoch": 3})", "train.epoch: unknown key; allowed:");
  expect_refused(R"({"epochs": "3"})", "train.epochs: must be a whole number");
  expect_refused(R"({"epochs": 2.5})", "train.epochs: must be a whole number");
  expect_refused(R"({"seed": -1})", "train.seed: must be a whole number from 0");
  expect_refused(R"({"augmentation": {"flip": true}})", "train.augmentation.flip: unknown key");
  expect_refused(R"({"line_filter": {"filter": {"sigmas_mm": [1, "a"]}}})", "train.line_filter.filter.sigmas_mm");
  expect_refused(R"({"strategy": "masks"})", "train.strategy:");
  expect_refused(R"({"field": {"high": "top"}})", "train.field.high: must be a number or null");
  expect_refused(R"([1, 2])", "train: must be a mapping");
}

}  // namespace
}  // namespace frugal::learn
