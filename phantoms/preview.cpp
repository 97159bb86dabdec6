#include "phantoms/preview.h"

#include <opencv2/imgcodecs.hpp>
#include <opencv2/imgproc.hpp>

#include <algorithm>
#include <cmath>
#include <filesystem>
#include <string>
#include <vector>

#include "phantoms/image_views.h"
#include "phantoms/user_error.h"
#include "phantoms/whole_file.h"

namespace frugal {

struct Montage::Tiles {
  int max_tiles;
  int tile_pixels;
  std::vector<cv::Mat> images;
};

Montage::Montage(int max_tiles, int tile_pixels) : tiles_(std::make_unique<Tiles>()) {
  tiles_->max_tiles = max_tiles;
  tiles_->tile_pixels = tile_pixels;
}
Montage::~Montage() = default;
Montage::Montage(Montage&&) noexcept = default;
Montage& Montage::operator=(Montage&&) noexcept = default;

bool Montage::full() const { return static_cast<int>(tiles_->images.size()) >= tiles_->max_tiles; }

void Montage::add(const Subject& subject) {
  if (full()) return;
  const int z = subject.image.shape().z / 2;
  const cv::Mat image = slice_view(subject.image, z);
  const cv::Mat labels = slice_view(subject.labels, z);
  // Window: 1st to 99th percentile of the field, so noise outside does not set the contrast.
  std::vector<float> values;
  for (int j = 0; j < image.rows; ++j)
    for (int i = 0; i < image.cols; ++i)
      if (labels.at<std::uint8_t>(j, i) >= kField) values.push_back(image.at<float>(j, i));
  if (values.empty()) values.assign(image.begin<float>(), image.end<float>());
  const auto quantile = [&values](double q) {
    auto nth = values.begin() + static_cast<std::ptrdiff_t>(q * static_cast<double>(values.size() - 1));
    std::nth_element(values.begin(), nth, values.end());
    return *nth;
  };
  const float low = quantile(0.01), high = std::max(quantile(0.99), low + 1e-6F);
  cv::Mat gray;
  image.convertTo(gray, CV_8U, 255.0 / (high - low), -255.0 * low / (high - low));
  cv::Mat colour;
  cv::cvtColor(gray, colour, cv::COLOR_GRAY2BGR);
  const int scale = std::max(1, tiles_->tile_pixels / std::max(image.cols, image.rows));
  cv::resize(colour, colour, cv::Size(), scale, scale, cv::INTER_NEAREST);
  const std::pair<std::uint8_t, cv::Scalar> outlines[] = {
      {kLesion, cv::Scalar(0, 140, 255)}, {kDotDistractor, cv::Scalar(230, 200, 0)}, {kLineDistractor, cv::Scalar(200, 0, 200)}};
  for (const auto& [code, bgr] : outlines) {
    cv::Mat mask = labels == code;
    cv::resize(mask, mask, cv::Size(), scale, scale, cv::INTER_NEAREST);
    std::vector<std::vector<cv::Point>> contours;
    cv::findContours(mask, contours, cv::RETR_LIST, cv::CHAIN_APPROX_SIMPLE);
    cv::drawContours(colour, contours, -1, bgr, 1);
  }
  cv::putText(colour, std::to_string(subject.truth.subject), cv::Point(3, 14), cv::FONT_HERSHEY_PLAIN, 1.0,
              cv::Scalar(255, 255, 255), 1);
  tiles_->images.push_back(colour);
}

void Montage::write_png(const std::string& path) const {
  if (tiles_->images.empty()) throw UserError(path + ": no subjects to preview");
  const int count = static_cast<int>(tiles_->images.size());
  const int columns = static_cast<int>(std::ceil(std::sqrt(static_cast<double>(count))));
  const int rows = (count + columns - 1) / columns;
  int tile_w = 0, tile_h = 0;
  for (const cv::Mat& tile : tiles_->images) {
    tile_w = std::max(tile_w, tile.cols);
    tile_h = std::max(tile_h, tile.rows);
  }
  const int gap = 2;
  cv::Mat sheet(rows * (tile_h + gap) + gap, columns * (tile_w + gap) + gap, CV_8UC3, cv::Scalar(40, 40, 40));
  for (int n = 0; n < count; ++n) {
    const cv::Mat& tile = tiles_->images[static_cast<std::size_t>(n)];
    tile.copyTo(sheet(cv::Rect(gap + (n % columns) * (tile_w + gap), gap + (n / columns) * (tile_h + gap), tile.cols, tile.rows)));
  }
  // Encoded in memory and written through WholeFile, which notices a short write (a full disk)
  // and removes its temporary file; cv::imwrite would not say.
  std::vector<unsigned char> bytes;
  if (!cv::imencode(".png", sheet, bytes)) throw UserError(path + ": cannot encode the preview PNG");
  WholeFile file(path);
  file.write(std::string(bytes.begin(), bytes.end()));
  file.commit();
}

}  // namespace frugal
