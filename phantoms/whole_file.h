#pragma once
// A text file written under a temporary ".partial" name and moved into place by commit(), so a
// killed run never leaves a half-written file under the final name.

#include <filesystem>
#include <fstream>
#include <string>

namespace frugal {

class WholeFile {
 public:
  explicit WholeFile(std::filesystem::path path);
  ~WholeFile();  // removes the temporary file when commit() was never reached
  WholeFile(const WholeFile&) = delete;
  WholeFile& operator=(const WholeFile&) = delete;
  void write(const std::string& text) { stream_ << text; }
  void commit();  // throws UserError when the data could not be written or moved

 private:
  std::filesystem::path path_;
  std::filesystem::path temporary_;
  std::ofstream stream_;
  bool committed_ = false;
};

}  // namespace frugal
