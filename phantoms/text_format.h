#pragma once
// Numbers as text, in the two ways frugal writes them.

#include <string>

namespace frugal {

// For messages: at most 6 significant digits ("0.3", "1e+06").
std::string format_number(double value);

// For files (CSV, YAML): the shortest decimal that reads back to exactly `value` ("0.05", not
// "0.050000000000000003"), so tables stay readable and round-trip without loss.
std::string exact_decimal(double value);

}  // namespace frugal
