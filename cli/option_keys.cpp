#include "cli/option_keys.h"

#include "phantoms/key_path.h"

namespace frugal::cli {

std::string OptionKeys::message(const std::string& validate_message) const {
  std::string relative = validate_message;
  if (relative.rfind(root_ + ".", 0) == 0) relative = relative.substr(root_.size() + 1);
  const std::string key = key_path_of(relative);
  const std::string rest = relative.substr(key.size());
  const std::string full = root_ + "." + key;
  if (const auto found = keys_.find(key); found != keys_.end()) return found->second + rest + " (" + full + ")";
  for (const auto& [prefix, note] : notes_)
    if (key.rfind(prefix, 0) == 0) return full + rest + " (" + note + ")";
  return full + rest;
}

}  // namespace frugal::cli
