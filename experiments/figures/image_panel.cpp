#include "experiments/figures/image_panel.h"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <opencv2/core.hpp>
#include <opencv2/imgcodecs.hpp>
#include <opencv2/imgproc.hpp>

#include "phantoms/image.h"  // FRUGAL_CHECK
#include "phantoms/user_error.h"
#include "phantoms/whole_file.h"

namespace frugal::figures {
namespace {

constexpr int kMargin = 2;  // pixels of dark frame around each image inside its tile
const cv::Scalar kFrame(40, 40, 40);
const cv::Scalar kPaper(255, 255, 255);
const cv::Scalar kInk(0, 0, 0);
constexpr int kFont = cv::FONT_HERSHEY_SIMPLEX;

// Linear interpolation between order statistics (the "linear" rule of Hyndman & Fan's type 7).
float percentile(std::vector<float> sorted, double q) {
  std::sort(sorted.begin(), sorted.end());
  const double at = q * static_cast<double>(sorted.size() - 1);
  const auto below = static_cast<std::size_t>(std::floor(at));
  const std::size_t above = std::min(below + 1, sorted.size() - 1);
  const double t = at - static_cast<double>(below);
  return static_cast<float>((1.0 - t) * sorted[below] + t * sorted[above]);
}

// The tile's values as 8-bit BGR at its own size.
cv::Mat colour_tile(const Tile& tile) {
  cv::Mat grey(tile.height, tile.width, CV_8U);
  if (tile.scale == Tile::Scale::probability) {
    for (int j = 0; j < tile.height; ++j)
      for (int i = 0; i < tile.width; ++i) {
        const float p = std::clamp(tile.pixels[static_cast<std::size_t>(j) * tile.width + i], 0.0F, 1.0F);
        grey.at<std::uint8_t>(j, i) = static_cast<std::uint8_t>(std::lround(255.0F * p));
      }
    cv::Mat colour;
    cv::applyColorMap(grey, colour, cv::COLORMAP_CIVIDIS);
    return colour;
  }
  const float low = percentile(tile.pixels, 0.01);
  const float high = percentile(tile.pixels, 0.99);
  for (int j = 0; j < tile.height; ++j)
    for (int i = 0; i < tile.width; ++i) {
      const float v = tile.pixels[static_cast<std::size_t>(j) * tile.width + i];
      const double t = high > low ? (static_cast<double>(v) - low) / (static_cast<double>(high) - low) : 0.5;
      grey.at<std::uint8_t>(j, i) = static_cast<std::uint8_t>(std::lround(255.0 * std::clamp(t, 0.0, 1.0)));
    }
  cv::Mat colour;
  cv::cvtColor(grey, colour, cv::COLOR_GRAY2BGR);
  return colour;
}

// Enlarged by a whole factor (nearest neighbour: each voxel a visible square) to fit `inner`;
// an image larger than that is reduced by area averaging instead.
cv::Mat fit(const cv::Mat& image, int inner) {
  const int longest = std::max(image.cols, image.rows);
  cv::Mat out;
  if (longest <= inner) {
    const int factor = inner / longest;
    cv::resize(image, out, cv::Size(image.cols * factor, image.rows * factor), 0, 0, cv::INTER_NEAREST);
  } else {
    const double s = static_cast<double>(inner) / longest;
    cv::resize(image, out,
               cv::Size(std::max(1, static_cast<int>(image.cols * s)), std::max(1, static_cast<int>(image.rows * s))),
               0, 0, cv::INTER_AREA);
  }
  return out;
}

// Centred text no wider than `width`: smaller, then shortened, as needed. Hershey fonts are ASCII.
void put_text(cv::Mat& panel, std::string text, int left, int width, int baseline, double scale) {
  for (char& c : text)
    if (static_cast<unsigned char>(c) < 32 || static_cast<unsigned char>(c) > 126) c = '?';
  int ignored = 0;
  const auto width_of = [&](const std::string& t, double s) { return cv::getTextSize(t, kFont, s, 1, &ignored).width; };
  while (scale > 0.3 && width_of(text, scale) > width - 4) scale -= 0.05;
  while (text.size() > 2 && width_of(text, scale) > width - 4) text = text.substr(0, text.size() - 3) + "..";
  const int x = left + (width - width_of(text, scale)) / 2;
  cv::putText(panel, text, cv::Point(x, baseline), kFont, scale, kInk, 1, cv::LINE_AA);
}

void put_colour_bar(cv::Mat& panel, int left, int top, int tile_pixels) {
  const int x0 = left + 12;
  const int length = tile_pixels - 24;
  cv::Mat ramp(1, length, CV_8U);
  for (int i = 0; i < length; ++i)
    ramp.at<std::uint8_t>(0, i) = static_cast<std::uint8_t>(std::lround(255.0 * i / std::max(1, length - 1)));
  cv::Mat bar;
  cv::applyColorMap(ramp, bar, cv::COLORMAP_CIVIDIS);
  cv::resize(bar, bar, cv::Size(length, 9), 0, 0, cv::INTER_NEAREST);
  bar.copyTo(panel(cv::Rect(x0, top + 3, length, 9)));
  cv::rectangle(panel, cv::Rect(x0 - 1, top + 2, length + 2, 11), kInk, 1);
  const double scale = 0.35;
  put_text(panel, "0", x0 - 12, 24, top + 23, scale);
  put_text(panel, "0.5", x0 + length / 2 - 12, 24, top + 23, scale);
  put_text(panel, "1", x0 + length - 12, 24, top + 23, scale);
}

}  // namespace

void write_panel_png(const std::vector<Tile>& tiles, const std::string& path, int tile_pixels) {
  FRUGAL_CHECK(!tiles.empty());
  FRUGAL_CHECK(tile_pixels >= 48);  // room for a caption and a colour bar with its labels
  bool any_probability = false;
  for (std::size_t n = 0; n < tiles.size(); ++n) {
    const Tile& tile = tiles[n];
    FRUGAL_CHECK(tile.width > 0 && tile.height > 0 &&
                 tile.pixels.size() == static_cast<std::size_t>(tile.width) * static_cast<std::size_t>(tile.height));
    const auto bad = std::find_if(tile.pixels.begin(), tile.pixels.end(), [](float v) { return !std::isfinite(v); });
    if (bad != tile.pixels.end()) {
      const auto at = static_cast<int>(bad - tile.pixels.begin());
      throw UserError(path + ": image tile " + std::to_string(n + 1) + " (\"" + tile.caption + "\") has the value " +
                      std::to_string(*bad) + " at column " + std::to_string(at % tile.width) + ", row " +
                      std::to_string(at / tile.width) + "; allowed: finite pixel values");
    }
    any_probability = any_probability || tile.scale == Tile::Scale::probability;
  }
  const int count = static_cast<int>(tiles.size());
  const int strips = panel_caption_pixels + (any_probability ? panel_colour_bar_pixels : 0);
  cv::Mat panel(tile_pixels + strips, count * tile_pixels, CV_8UC3, kPaper);
  panel(cv::Rect(0, 0, panel.cols, tile_pixels)).setTo(kFrame);
  for (int n = 0; n < count; ++n) {
    const Tile& tile = tiles[static_cast<std::size_t>(n)];
    const int left = n * tile_pixels;
    const cv::Mat image = fit(colour_tile(tile), tile_pixels - 2 * kMargin);
    image.copyTo(
        panel(cv::Rect(left + (tile_pixels - image.cols) / 2, (tile_pixels - image.rows) / 2, image.cols, image.rows)));
    put_text(panel, tile.caption, left, tile_pixels, tile_pixels + 17, 0.45);
    if (tile.scale == Tile::Scale::probability)
      put_colour_bar(panel, left, tile_pixels + panel_caption_pixels, tile_pixels);
  }
  // Encoded in memory and written through WholeFile, which notices a short write and removes its
  // temporary file; cv::imwrite would not say.
  std::vector<unsigned char> bytes;
  if (!cv::imencode(".png", panel, bytes)) throw UserError(path + ": cannot encode the image panel PNG");
  WholeFile file(path);
  file.write(std::string(bytes.begin(), bytes.end()));
  file.commit();
}

}  // namespace frugal::figures
