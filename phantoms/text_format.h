#pragma once
// Numbers as text, in the two ways frugal writes them, and the rule for names it writes.

#include <string>

namespace frugal {

// For messages: at most 6 significant digits ("0.3", "1e+06").
std::string format_number(double value);

// A name frugal writes into YAML, CSV and reports: not blank, and no control characters (a lone
// carriage return reads from YAML but does not survive being written back).
bool is_printable_name(const std::string& name);

// For files (CSV, YAML): the shortest decimal that reads back to exactly `value` ("0.05", not
// "0.050000000000000003"), so tables stay readable and round-trip without loss.
std::string exact_decimal(double value);

}  // namespace frugal
