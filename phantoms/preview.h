#pragma once
// A PNG montage of subjects for a quick look: one tile per subject (its middle slice), intensity
// windowed per tile, truth outlines drawn over it (lesions orange, dots cyan, lines magenta).

#include <memory>
#include <string>

#include "phantoms/subject.h"

namespace frugal {

class Montage {
 public:
  explicit Montage(int max_tiles = 16, int tile_pixels = 160);
  ~Montage();
  Montage(Montage&&) noexcept;
  Montage& operator=(Montage&&) noexcept;

  // Keeps a small 8-bit tile, not the subject; ignored once max_tiles are held.
  void add(const Subject& subject);
  bool full() const;
  // Writes atomically (temporary name, then rename). Throws UserError when it cannot.
  void write_png(const std::string& path) const;

 private:
  struct Tiles;
  std::unique_ptr<Tiles> tiles_;
};

}  // namespace frugal
