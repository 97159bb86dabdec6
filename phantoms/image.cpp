#include "phantoms/image.h"

#include <cstdio>
#include <cstdlib>

namespace frugal {

std::array<double, 3> Geometry::world_mm(double ix, double iy, double iz) const {
  const double local[3] = {ix * spacing_mm[0], iy * spacing_mm[1], iz * spacing_mm[2]};
  std::array<double, 3> world{};
  for (int row = 0; row < 3; ++row) {
    world[static_cast<std::size_t>(row)] =
        origin_mm[static_cast<std::size_t>(row)] + direction[static_cast<std::size_t>(row * 3)] * local[0] +
        direction[static_cast<std::size_t>(row * 3 + 1)] * local[1] +
        direction[static_cast<std::size_t>(row * 3 + 2)] * local[2];
  }
  return world;
}

void fail_invariant(const char* what, const char* file, int line) {
  std::fprintf(stderr, "frugal: internal error: check '%s' failed at %s:%d\n", what, file, line);
  std::abort();
}

}  // namespace frugal
