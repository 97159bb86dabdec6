#pragma once
// Base64 (RFC 4648 §4, standard alphabet, '=' padding, no line breaks): how a report carries its
// figures and their CSV files inside data: URLs.

#include <string>

namespace frugal::report {

// `bytes` is any binary data; the result is ASCII, 4 characters for every started 3 bytes.
std::string base64_encode(const std::string& bytes);

}  // namespace frugal::report
