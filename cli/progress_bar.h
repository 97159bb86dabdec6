#pragma once
// A one-line progress bar on standard error, drawn only when it is a terminal.

#include <chrono>
#include <string>

namespace frugal::cli {

class ProgressBar {
 public:
  ProgressBar(std::string what, long long total);
  void update(long long done);
  void finish();

 private:
  std::string what_;
  long long total_;
  bool enabled_;
  std::chrono::steady_clock::time_point start_;
  std::chrono::steady_clock::time_point last_draw_;
};

}  // namespace frugal::cli
