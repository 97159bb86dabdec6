#include "phantoms/allocation_tuning.h"

#include <malloc.h>

namespace frugal {

void keep_freed_image_memory() {
#if defined(__GLIBC__)
  constexpr int kBytes = 256 * 1024 * 1024;
  mallopt(M_MMAP_THRESHOLD, kBytes);
  mallopt(M_TRIM_THRESHOLD, kBytes);
#endif
}

}  // namespace frugal
