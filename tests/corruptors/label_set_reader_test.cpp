#include "corruptors/label_set_reader.h"

#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>

#include "corruptors/label_set.h"
#include "corruptors/labeler.h"
#include "phantoms/phantom.h"
#include "phantoms/phantom_set.h"
#include "phantoms/scenario.h"
#include "phantoms/user_error.h"

namespace frugal {
namespace {

namespace fs = std::filesystem;

constexpr std::uint64_t kSeed = 5;
constexpr int kSubjects = 4;
constexpr int kFirst = 3;

ScenarioOptions small_scenario() {
  ScenarioOptions scenario = default_scenario(Family::streaks);
  scenario.name = "reader-test";
  scenario.geometry.dims = 2;
  scenario.geometry.size_2d = {32, 32};
  return scenario;
}

RaterOptions panel_of_two() {
  RaterOptions rater;
  rater.name = "reader-test panel";
  rater.panel.raters = 2;
  return rater;
}

std::string write_set(LabelKind kind, const std::string& name) {
  const std::string folder = ::testing::TempDir() + "/" + name;
  fs::remove_all(folder);
  LabelSetOptions options;
  options.out_dir = folder;
  options.kind = kind;
  options.count = kSubjects;
  options.first = kFirst;
  options.seed = kSeed;
  write_label_set(small_scenario(), "reader-test.yaml", panel_of_two(), "panel.yaml", options);
  return folder;
}

// The labels the writer wrote, made again from the same subjects, raters and seed.
std::vector<Label> expected_labels(LabelKind kind) {
  std::vector<Label> labels;
  for (int s = kFirst; s < kFirst + kSubjects; ++s) {
    const Subject subject = generate_subject(small_scenario(), kSeed, s);
    for (int member = 0; member < 2; ++member) {
      LabelRequest request;
      request.kind = kind;
      request.rater = member;
      labels.push_back(make_label(subject, panel_of_two(), request, kSeed));
    }
  }
  return labels;
}

void expect_same(const Label& read, const Label& made) {
  EXPECT_EQ(read.subject, made.subject);
  EXPECT_EQ(read.rescan, made.rescan);
  EXPECT_EQ(read.rater, made.rater);
  EXPECT_EQ(read.kind, made.kind);
  // labels.csv writes the shortest decimal that reads back exactly (text_format.h).
  EXPECT_EQ(read.cost_seconds, made.cost_seconds);
  EXPECT_EQ(read.value, made.value);
  EXPECT_EQ(read.capped, made.capped);
  ASSERT_EQ(read.clicks.size(), made.clicks.size());
  for (std::size_t c = 0; c < made.clicks.size(); ++c)
    EXPECT_EQ(read.clicks[c].position_mm, made.clicks[c].position_mm);
  EXPECT_EQ(read.mask.shape(), made.mask.shape());
  EXPECT_EQ(read.mask.voxels(), made.mask.voxels());
}

class RoundTrip : public ::testing::TestWithParam<LabelKind> {};

TEST_P(RoundTrip, ReadsBackWhatTheWriterWrote) {
  const LabelKind kind = GetParam();
  const std::string folder = write_set(kind, "round-trip-" + to_string(kind));
  const LabelSet set = read_label_set(folder);
  const std::vector<Label> made = expected_labels(kind);
  ASSERT_EQ(set.labels.size(), made.size());
  double seconds = 0.0;
  for (std::size_t i = 0; i < made.size(); ++i) {
    expect_same(set.labels[i], made[i]);
    seconds += made[i].cost_seconds;
  }
  EXPECT_EQ(set.info.kind, kind);
  EXPECT_EQ(set.info.raters, 2);
  EXPECT_EQ(set.info.first, kFirst);
  EXPECT_EQ(set.info.count, kSubjects);
  EXPECT_EQ(set.info.seed, kSeed);
  EXPECT_NEAR(set.info.annotator_hours, seconds / 3600.0, 1e-12);
  EXPECT_NEAR(set.annotator_seconds, seconds, 1e-9);
  EXPECT_EQ(set.info.rater.grading.bin_edges, panel_of_two().grading.bin_edges);
}

INSTANTIATE_TEST_SUITE_P(EveryKind, RoundTrip,
                         ::testing::Values(LabelKind::presence, LabelKind::count, LabelKind::grade, LabelKind::points,
                                           LabelKind::partial_mask, LabelKind::outline),
                         [](const ::testing::TestParamInfo<LabelKind>& parameter) {
                           return to_string(parameter.param);
                         });

TEST(LabelSetReader, KeepsOneRaterWhenAsked) {
  const std::string folder = write_set(LabelKind::count, "one-rater");
  LabelSetReadOptions options;
  options.rater = 1;
  const LabelSet set = read_label_set(folder, options);
  ASSERT_EQ(set.labels.size(), static_cast<std::size_t>(kSubjects));
  for (const Label& label : set.labels) EXPECT_EQ(label.rater, 1);
  options.rater = 2;
  EXPECT_THROW(read_label_set(folder, options), UserError);
}

// Replaces `from` with `to` in the folder's labels.csv.
void edit_labels(const std::string& folder, const std::string& from, const std::string& to) {
  const std::string path = folder + "/labels.csv";
  std::stringstream text;
  text << std::ifstream(path).rdbuf();
  std::string content = text.str();
  const std::size_t at = content.find(from);
  ASSERT_NE(at, std::string::npos) << from;
  content.replace(at, from.size(), to);
  std::ofstream(path) << content;
}

std::string error_of(const std::string& folder) {
  try {
    read_label_set(folder);
  } catch (const UserError& error) {
    return error.what();
  }
  return "(no error)";
}

TEST(LabelSetReader, BadInputNamesTheFileAndLine) {
  const std::string folder = write_set(LabelKind::count, "bad-input");
  edit_labels(folder, "\n3,0,1,count,", "\n3,0,1,count,many");  // line 4: subject 3, rater 1
  std::string message = error_of(folder);
  EXPECT_NE(message.find("labels.csv line 4, column value"), std::string::npos) << message;
  EXPECT_NE(message.find("many"), std::string::npos) << message;

  const std::string twice = write_set(LabelKind::count, "twice");
  edit_labels(twice, "\n3,0,1,", "\n3,0,0,");
  message = error_of(twice);
  EXPECT_NE(message.find("line 4"), std::string::npos) << message;
  EXPECT_NE(message.find("second label"), std::string::npos) << message;

  const std::string masks = write_set(LabelKind::outline, "missing-mask");
  fs::remove(masks + "/masks/subject_000004_rater0.nii.gz");
  message = error_of(masks);
  EXPECT_NE(message.find("subject_000004_rater0.nii.gz"), std::string::npos) << message;

  const std::string unfinished = write_set(LabelKind::count, "unfinished");
  fs::remove(unfinished + "/manifest.json");
  message = error_of(unfinished);
  EXPECT_NE(message.find("no manifest.json"), std::string::npos) << message;
  EXPECT_NE(error_of(::testing::TempDir() + "/no-such-set").find("no such label set folder"), std::string::npos);
}

TEST(LabelSetReader, LabelsMustBelongToThePhantomSet) {
  const std::string labels = write_set(LabelKind::count, "origin-labels");
  const auto phantoms = [&](std::uint64_t seed, int first, const std::string& name) {
    PhantomSetOptions options;
    options.out_dir = ::testing::TempDir() + "/" + name;
    fs::remove_all(options.out_dir);
    options.count = kSubjects;
    options.first = first;
    options.seed = seed;
    options.preview_tiles = 0;
    write_phantom_set(small_scenario(), "reader-test.yaml", options);
    return read_phantom_set(options.out_dir);
  };
  const LabelSet set = read_label_set(labels);
  EXPECT_NO_THROW(check_labels_in_phantom_set(set, phantoms(kSeed, kFirst, "origin-same")));
  EXPECT_NE(check_label_set_origin(set.info, phantoms(kSeed + 1, kFirst, "origin-other-seed")).find("seed"),
            std::string::npos);
  try {
    check_labels_in_phantom_set(set, phantoms(kSeed, kFirst + 2, "origin-shifted"));
    FAIL() << "labels of subjects the set does not hold were accepted";
  } catch (const UserError& error) {
    EXPECT_NE(std::string(error.what()).find("subject 3"), std::string::npos) << error.what();
  }
}

}  // namespace
}  // namespace frugal
