#include "phantoms/whole_file.h"

#include "phantoms/regular_file.h"
#include "phantoms/user_error.h"

namespace frugal {

WholeFile::WholeFile(std::filesystem::path path) : path_(std::move(path)), temporary_(path_.string() + ".partial") {
  require_writable_output(path_.string(), OutputKind::file, "a new or regular file");  // and the temporary name
  stream_.open(temporary_, std::ios::binary | std::ios::trunc);
  if (!stream_) throw UserError(temporary_.string() + ": cannot open for writing (is the folder there and writable?)");
}

WholeFile::~WholeFile() {
  if (committed_) return;
  stream_.close();
  std::error_code ignored;
  std::filesystem::remove(temporary_, ignored);
}

void WholeFile::commit() {
  stream_.close();
  if (!stream_)
    throw UserError(path_.string() + ": writing failed (the disk is full or the file too large); nothing was replaced");
  std::error_code error;
  std::filesystem::rename(temporary_, path_, error);
  if (error) throw UserError(path_.string() + ": cannot move the finished file into place: " + error.message());
  committed_ = true;
}

}  // namespace frugal
