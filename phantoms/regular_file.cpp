#include "phantoms/regular_file.h"

#include <filesystem>

#include "phantoms/user_error.h"

namespace frugal {

void require_regular_file(const std::string& path, const std::string& allowed) {
  namespace fs = std::filesystem;
  // status() only stats the path, so a pipe is recognised without blocking on it.
  std::error_code error;
  const fs::file_status status = fs::status(path, error);
  const std::string tail = "; allowed: " + allowed;
  if (status.type() == fs::file_type::not_found) throw UserError(path + ": no such file" + tail);
  if (error) throw UserError(path + ": cannot be examined (" + error.message() + ")" + tail);
  if (fs::is_directory(status)) throw UserError(path + ": is a folder, not a file" + tail);
  if (!fs::is_regular_file(status)) throw UserError(path + ": not a regular file (a pipe, device or socket)" + tail);
}

}  // namespace frugal
