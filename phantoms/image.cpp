#include "phantoms/image.h"

#include <cstdio>
#include <cstdlib>

namespace frugal {

void fail_invariant(const char* what, const char* file, int line) {
  std::fprintf(stderr, "frugal: internal error: check '%s' failed at %s:%d\n", what, file, line);
  std::abort();
}

}  // namespace frugal
