#pragma once
// How option structs name a problem: every validate() returns "" or a message that begins with
// the offending key's path relative to that struct ("epochs = 0: ...", "bin_edges entry 2 ...").
// A struct that holds another prefixes the child's message with the member's key, so a message
// grows its path on the way up ("train." + "augmentation." + "rotation_degrees = 90: ...") and
// whoever shows it can map the whole path to a line of a file or a command-line option.

#include <string>

namespace frugal {

// "" stays ""; otherwise "<key>.<message>".
inline std::string key_path_under(const std::string& key, const std::string& message) {
  return message.empty() ? message : key + "." + message;
}

// The key path a validate() message begins with: everything before the first blank, colon,
// comma, "[" or "/" ("line_filter.sigmas_mm[1]: ..." gives "line_filter.sigmas_mm").
inline std::string key_path_of(const std::string& message) { return message.substr(0, message.find_first_of(" :,[/")); }

}  // namespace frugal
