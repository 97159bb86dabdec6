#include "phantoms/regular_file.h"

#include <climits>
#include <filesystem>

#include "phantoms/user_error.h"

namespace frugal {

namespace fs = std::filesystem;

void require_regular_file(const std::string& path, const std::string& allowed) {
  // status() only stats the path, so a pipe is recognised without blocking on it.
  std::error_code error;
  const fs::file_status status = fs::status(path, error);
  const std::string tail = "; allowed: " + allowed;
  if (status.type() == fs::file_type::not_found) throw UserError(path + ": no such file" + tail);
  if (error) throw UserError(path + ": cannot be examined (" + error.message() + ")" + tail);
  if (fs::is_directory(status)) throw UserError(path + ": is a folder, not a file" + tail);
  if (!fs::is_regular_file(status)) throw UserError(path + ": not a regular file (a pipe, device or socket)" + tail);
}

namespace {

// NAME_MAX of Linux file systems (ext4, xfs, btrfs, tmpfs), less room for the longest temporary
// name frugal makes beside an output ("MODEL.pt" + ".json" + ".partial").
constexpr std::size_t kNameMax = 255;
constexpr std::size_t kTemporaryRoom = 16;
constexpr std::size_t kLongestName = kNameMax - kTemporaryRoom;

std::string type_name(fs::file_type type) {
  switch (type) {
    case fs::file_type::character:
      return "a character device";
    case fs::file_type::block:
      return "a block device";
    case fs::file_type::fifo:
      return "a named pipe";
    case fs::file_type::socket:
      return "a socket";
    case fs::file_type::directory:
      return "a folder";
    default:
      return "not a regular file";
  }
}

// `lengths` off for a temporary name, whose room the lengths of the final name already left.
void check_output(const std::string& path, OutputKind kind, const std::string& what, bool lengths) {
  const std::string tail = "; allowed: " + what;
  if (path.empty()) throw UserError("the output path is empty" + tail);
  if (lengths && path.size() > PATH_MAX - 1 - kTemporaryRoom)
    throw UserError(path.substr(0, 40) + "...: the path is " + std::to_string(path.size()) +
                    " characters long; allowed: at most " + std::to_string(PATH_MAX - 1 - kTemporaryRoom));
  for (const fs::path& part : lengths ? fs::path(path) : fs::path()) {
    const std::string name = part.string();
    if (name.size() > kLongestName)
      throw UserError(path + ": the name '" + name.substr(0, 24) + "...' is " + std::to_string(name.size()) +
                      " characters long (name too long); allowed: names of at most " + std::to_string(kLongestName) +
                      " characters");
  }
  std::error_code error;
  const fs::file_status status = fs::status(path, error);
  if (status.type() == fs::file_type::not_found) return;
  if (error) throw UserError(path + ": cannot be examined (" + error.message() + ")" + tail);
  if (kind == OutputKind::folder) {
    if (!fs::is_directory(status))
      throw UserError(path + ": exists and is " +
                      (fs::is_regular_file(status) ? std::string("a file") : type_name(status.type())) +
                      ", not a folder; frugal replaces nothing else" + tail);
    return;
  }
  if (fs::is_directory(status)) throw UserError(path + ": is a folder; give a file name" + tail);
  if (!fs::is_regular_file(status))
    throw UserError(path + ": exists and is " + type_name(status.type()) + "; frugal replaces only regular files" +
                    tail);
}

}  // namespace

void require_writable_output(const std::string& path, OutputKind kind, const std::string& what) {
  check_output(path, kind, what, true);
  // The temporary name WholeFile writes first is frugal's own, but a pipe under it would block.
  if (kind == OutputKind::file)
    check_output(path + ".partial", kind, "a regular file or none (frugal's temporary name)", false);
}

}  // namespace frugal
