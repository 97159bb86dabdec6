#include "phantoms/text_format.h"

#include <cstdio>
#include <cstdlib>

namespace frugal {

std::string format_number(double value) {
  char text[32];
  std::snprintf(text, sizeof(text), "%g", value);
  return text;
}

std::string exact_decimal(double value) {
  char text[40];
  for (int digits = 6; digits <= 17; ++digits) {
    std::snprintf(text, sizeof(text), "%.*g", digits, value);
    if (std::strtod(text, nullptr) == value) break;
  }
  return text;
}

bool is_printable_name(const std::string& name) {
  bool visible = false;
  for (char c : name) {
    const auto byte = static_cast<unsigned char>(c);
    if (byte < 0x20 || byte == 0x7f) return false;
    visible = visible || byte != ' ';
  }
  return visible;
}

}  // namespace frugal
