#include "experiments/figures/image_panel.h"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <limits>
#include <opencv2/core.hpp>
#include <opencv2/imgcodecs.hpp>
#include <opencv2/imgproc.hpp>

#include "phantoms/user_error.h"

namespace frugal::figures {
namespace {

namespace fs = std::filesystem;

std::string scratch(const std::string& name) {
  const char* root = std::getenv("TEST_TMPDIR");
  const fs::path folder = fs::path(root ? root : fs::temp_directory_path().string()) / name;
  fs::remove_all(folder);
  fs::create_directories(folder);
  return folder.string();
}

Tile ramp(int width, int height, Tile::Scale scale, const std::string& caption) {
  Tile tile{caption, width, height, {}, scale};
  for (int i = 0; i < width * height; ++i) tile.pixels.push_back(static_cast<float>(i));
  return tile;
}

// One voxel's colour in the panel: tile `n` of an 8×8 image drawn at 64 pixels per tile is
// enlarged 7× ((64 − 2·2 frame) / 8, whole factor) and centred, so voxel (i, j) covers pixels
// 4 + 7i .. 4 + 7i + 6 of its tile.
cv::Vec3b voxel(const cv::Mat& panel, int n, int i, int j) {
  return panel.at<cv::Vec3b>(4 + 7 * j + 3, n * 64 + 4 + 7 * i + 3);
}

TEST(ImagePanel, IsOneTileWideEachWithCaptionAndColourBarStrips) {
  const std::string folder = scratch("panel-size");
  const std::string grey_only = folder + "/grey.png";
  write_panel_png({ramp(8, 8, Tile::Scale::grey_auto, "image"), ramp(5, 9, Tile::Scale::grey_auto, "labels")},
                  grey_only, 64);
  const cv::Mat a = cv::imread(grey_only, cv::IMREAD_COLOR);
  ASSERT_FALSE(a.empty());
  EXPECT_EQ(a.cols, 2 * 64);
  EXPECT_EQ(a.rows, 64 + panel_caption_pixels);
  const std::string mixed = folder + "/mixed.png";
  Tile probability = ramp(8, 8, Tile::Scale::probability, "predicted");
  for (float& p : probability.pixels) p /= 63.0F;
  write_panel_png(
      {ramp(8, 8, Tile::Scale::grey_auto, "image"), probability, ramp(40, 20, Tile::Scale::grey_auto, "wide")}, mixed);
  const cv::Mat b = cv::imread(mixed, cv::IMREAD_COLOR);
  ASSERT_FALSE(b.empty());
  EXPECT_EQ(b.cols, 3 * 192);
  EXPECT_EQ(b.rows, 192 + panel_caption_pixels + panel_colour_bar_pixels);
  // The caption strip holds dark text on white (common practice, no source).
  double darkest = 0.0;
  cv::Mat caption;
  cv::cvtColor(b(cv::Rect(0, 192, 192, panel_caption_pixels)), caption, cv::COLOR_BGR2GRAY);
  cv::minMaxLoc(caption, &darkest);
  EXPECT_LT(darkest, 100.0);
  for (const auto& entry : fs::directory_iterator(folder))
    EXPECT_EQ(entry.path().string().find(".partial"), std::string::npos) << entry.path();
}

TEST(ImagePanel, GreyStretchesThe1stTo99thPercentile) {
  const std::string path = scratch("panel-grey") + "/panel.png";
  write_panel_png({ramp(8, 8, Tile::Scale::grey_auto, "ramp")}, path, 64);
  const cv::Mat panel = cv::imread(path, cv::IMREAD_COLOR);
  ASSERT_FALSE(panel.empty());
  // numpy.percentile(np.arange(64), [1, 99]) = [0.63, 62.37] (linear rule); 0 → black, 63 →
  // white, 32 → 255·(32 − 0.63)/(62.37 − 0.63) = 129.6 → 130.
  EXPECT_EQ(voxel(panel, 0, 0, 0), cv::Vec3b(0, 0, 0));
  EXPECT_EQ(voxel(panel, 0, 7, 7), cv::Vec3b(255, 255, 255));
  EXPECT_EQ(voxel(panel, 0, 0, 4), cv::Vec3b(130, 130, 130));
  // Nearest neighbour: the whole 7×7 block of a voxel has one value.
  const cv::Mat block = panel(cv::Rect(4 + 7 * 3, 4 + 7 * 2, 7, 7));
  for (int j = 0; j < 7; ++j)
    for (int i = 0; i < 7; ++i) EXPECT_EQ(block.at<cv::Vec3b>(j, i), block.at<cv::Vec3b>(0, 0));
}

TEST(ImagePanel, ProbabilityUsesTheCividisColourMap) {
  const std::string path = scratch("panel-probability") + "/panel.png";
  Tile tile{"p", 8, 8, std::vector<float>(64, 0.5F), Tile::Scale::probability};
  tile.pixels[0] = 0.0F;
  tile.pixels[63] = 1.0F;
  tile.pixels[1] = 1.7F;  // above 1: clamped
  write_panel_png({ramp(8, 8, Tile::Scale::grey_auto, "image"), tile}, path, 64);
  const cv::Mat panel = cv::imread(path, cv::IMREAD_COLOR);
  ASSERT_FALSE(panel.empty());
  // Expected colours from OpenCV's own cividis table (Nuñez, Anderton & Renslow 2018).
  cv::Mat levels(1, 3, CV_8U);
  levels.at<std::uint8_t>(0, 0) = 0;
  levels.at<std::uint8_t>(0, 1) = 128;
  levels.at<std::uint8_t>(0, 2) = 255;
  cv::Mat mapped;
  cv::applyColorMap(levels, mapped, cv::COLORMAP_CIVIDIS);
  EXPECT_EQ(voxel(panel, 1, 0, 0), mapped.at<cv::Vec3b>(0, 0));
  EXPECT_EQ(voxel(panel, 1, 7, 7), mapped.at<cv::Vec3b>(0, 2));
  EXPECT_EQ(voxel(panel, 1, 1, 0), mapped.at<cv::Vec3b>(0, 2));
  EXPECT_EQ(voxel(panel, 1, 3, 3), mapped.at<cv::Vec3b>(0, 1));
  EXPECT_NE(voxel(panel, 1, 0, 0), voxel(panel, 1, 7, 7));
  // Cividis is not grey: blue dominates at 0, yellow (red + green) at 1.
  const cv::Vec3b low = voxel(panel, 1, 0, 0);
  const cv::Vec3b high = voxel(panel, 1, 7, 7);
  EXPECT_GT(low[0], low[2]);
  EXPECT_GT(high[2], high[0]);
  // The colour bar under the probability tile runs from the 0 colour to the 1 colour; the strip
  // under the grey tile stays white.
  const int bar_row = 64 + panel_caption_pixels + 7;
  EXPECT_EQ(panel.at<cv::Vec3b>(bar_row, 64 + 12), mapped.at<cv::Vec3b>(0, 0));
  EXPECT_EQ(panel.at<cv::Vec3b>(bar_row, 64 + 64 - 13), mapped.at<cv::Vec3b>(0, 2));
  EXPECT_EQ(panel.at<cv::Vec3b>(bar_row, 32), cv::Vec3b(255, 255, 255));
}

TEST(ImagePanel, ANonFinitePixelIsAUserErrorNamingTheTileAndNothingIsWritten) {
  const std::string folder = scratch("panel-nan");
  Tile bad = ramp(4, 3, Tile::Scale::probability, "predicted map");
  bad.pixels[6] = std::numeric_limits<float>::quiet_NaN();
  try {
    write_panel_png({ramp(4, 4, Tile::Scale::grey_auto, "image"), bad}, folder + "/panel.png", 64);
    FAIL() << "accepted";
  } catch (const UserError& error) {
    const std::string message = error.what();
    EXPECT_NE(message.find(folder + "/panel.png"), std::string::npos) << message;
    EXPECT_NE(message.find("tile 2 (\"predicted map\")"), std::string::npos) << message;
    EXPECT_NE(message.find("column 2, row 1"), std::string::npos) << message;
  }
  Tile infinite = ramp(4, 4, Tile::Scale::grey_auto, "image");
  infinite.pixels[0] = std::numeric_limits<float>::infinity();
  EXPECT_THROW(write_panel_png({infinite}, folder + "/panel.png", 64), UserError);
  EXPECT_TRUE(fs::is_empty(folder));
}

TEST(ImagePanel, AMissingFolderIsAUserErrorNamingThePath) {
  const std::string path = scratch("panel-missing") + "/absent/panel.png";
  try {
    write_panel_png({ramp(4, 4, Tile::Scale::grey_auto, "image")}, path, 64);
    FAIL() << "accepted";
  } catch (const UserError& error) {
    EXPECT_NE(std::string(error.what()).find(path), std::string::npos) << error.what();
  }
}

TEST(ImagePanelDeathTest, ATileWhosePixelsDoNotMatchItsSizeIsAnInternalError) {
  GTEST_FLAG_SET(death_test_style, "threadsafe");
  Tile tile = ramp(4, 4, Tile::Scale::grey_auto, "image");
  tile.pixels.pop_back();
  EXPECT_DEATH(write_panel_png({tile}, scratch("panel-size-mismatch") + "/panel.png", 64), "internal error: check");
}

}  // namespace
}  // namespace frugal::figures
