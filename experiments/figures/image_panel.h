#pragma once
// A row of image tiles (a slice of a phantom, a label, a predicted map) side by side in one PNG,
// each with its caption underneath. Voxels are enlarged by nearest neighbour, so they stay visible.

#include <string>
#include <vector>

namespace frugal::figures {

struct Tile {
  std::string caption;
  int width = 0, height = 0;
  std::vector<float> pixels;  // row-major, width × height, all finite
  // grey_auto: the 1st–99th percentile stretched to black–white; probability: 0..1 (clamped) in
  // the cividis colour map (perceptually uniform, colour-blind safe) with a colour bar.
  enum class Scale { grey_auto, probability } scale = Scale::grey_auto;
};

// Strips under the tiles, in pixels: captions always; colour bars when any tile is a probability.
constexpr int panel_caption_pixels = 24;
constexpr int panel_colour_bar_pixels = 26;

// Writes a PNG of tiles.size() × tile_pixels by tile_pixels + panel_caption_pixels (+
// panel_colour_bar_pixels) pixels, through a temporary name renamed into place. Throws
// frugal::UserError naming the file when it cannot be written, or the tile when a pixel is not
// finite; a tile whose size does not match its pixels is a FRUGAL_CHECK.
void write_panel_png(const std::vector<Tile>& tiles, const std::string& path, int tile_pixels = 192);

}  // namespace frugal::figures
