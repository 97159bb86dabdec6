#pragma once
// A one-line progress bar on standard error, drawn only when it is a terminal.

#include <chrono>
#include <cstddef>
#include <string>

namespace frugal::cli {

class ProgressBar {
 public:
  ProgressBar(std::string what, long long total);
  // Ends a line left unfinished (an error on the way), so that the next message starts afresh.
  ~ProgressBar();
  ProgressBar(const ProgressBar&) = delete;
  ProgressBar& operator=(const ProgressBar&) = delete;

  // Shows "done/total  rate/s" after the bar.
  void update(long long done);
  // Shows `detail` after the bar instead (an epoch's losses, say); finish() keeps the last one.
  void update(long long done, const std::string& detail);
  void finish();

 private:
  void draw(long long done, bool force);
  std::string what_;
  long long total_;
  bool enabled_;
  bool line_open_ = false;  // something drawn since the last newline
  std::string detail_;
  std::size_t last_width_ = 0;  // characters after '\r' in the last drawing, to blank a longer one
  std::chrono::steady_clock::time_point start_;
  std::chrono::steady_clock::time_point last_draw_;
};

}  // namespace frugal::cli
