#include "experiments/report/base64.h"

namespace frugal::report {

std::string base64_encode(const std::string& bytes) {
  static const char kAlphabet[] = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
  const auto byte = [&](std::size_t i) { return static_cast<unsigned>(static_cast<unsigned char>(bytes[i])); };
  std::string out;
  out.reserve((bytes.size() + 2) / 3 * 4);
  std::size_t i = 0;
  for (; i + 3 <= bytes.size(); i += 3) {
    const unsigned group = (byte(i) << 16U) | (byte(i + 1) << 8U) | byte(i + 2);
    out += kAlphabet[(group >> 18U) & 63U];
    out += kAlphabet[(group >> 12U) & 63U];
    out += kAlphabet[(group >> 6U) & 63U];
    out += kAlphabet[group & 63U];
  }
  const std::size_t left = bytes.size() - i;  // 0, 1 or 2 bytes: padded to a whole group
  if (left > 0) {
    const unsigned group = (byte(i) << 16U) | (left == 2 ? byte(i + 1) << 8U : 0U);
    out += kAlphabet[(group >> 18U) & 63U];
    out += kAlphabet[(group >> 12U) & 63U];
    out += left == 2 ? kAlphabet[(group >> 6U) & 63U] : '=';
    out += '=';
  }
  return out;
}

}  // namespace frugal::report
