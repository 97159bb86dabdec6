#include "phantoms/whole_file.h"

#include "phantoms/user_error.h"

namespace frugal {

WholeFile::WholeFile(std::filesystem::path path) : path_(std::move(path)), temporary_(path_.string() + ".partial") {
  std::error_code error;
  if (std::filesystem::is_directory(path_, error)) throw UserError(path_.string() + ": is a folder; give a file name");
  stream_.open(temporary_, std::ios::binary | std::ios::trunc);
  if (!stream_) throw UserError(temporary_.string() + ": cannot open for writing");
}

WholeFile::~WholeFile() {
  if (committed_) return;
  stream_.close();
  std::error_code ignored;
  std::filesystem::remove(temporary_, ignored);
}

void WholeFile::commit() {
  stream_.close();
  if (!stream_) throw UserError(temporary_.string() + ": writing failed (disk full?)");
  std::error_code error;
  std::filesystem::rename(temporary_, path_, error);
  if (error) throw UserError(path_.string() + ": cannot move the finished file into place: " + error.message());
  committed_ = true;
}

}  // namespace frugal
