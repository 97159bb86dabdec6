#include "cli/progress_bar.h"

#include <unistd.h>

#include <cstdio>

namespace frugal::cli {

ProgressBar::ProgressBar(std::string what, long long total)
    : what_(std::move(what)), total_(total), enabled_(isatty(STDERR_FILENO) != 0),
      start_(std::chrono::steady_clock::now()), last_draw_(start_) {}

void ProgressBar::update(long long done) {
  if (!enabled_) return;
  const auto now = std::chrono::steady_clock::now();
  if (done < total_ && now - last_draw_ < std::chrono::milliseconds(100)) return;
  last_draw_ = now;
  constexpr int kWidth = 30;
  const double share = total_ > 0 ? static_cast<double>(done) / static_cast<double>(total_) : 1.0;
  const int filled = static_cast<int>(share * kWidth);
  const double seconds = std::chrono::duration<double>(now - start_).count();
  const double rate = seconds > 0 ? static_cast<double>(done) / seconds : 0.0;
  std::fprintf(stderr, "\r%s [", what_.c_str());
  for (int i = 0; i < kWidth; ++i) std::fputc(i < filled ? '#' : '.', stderr);
  std::fprintf(stderr, "] %lld/%lld  %.1f/s ", done, total_, rate);
  std::fflush(stderr);
}

void ProgressBar::finish() {
  if (!enabled_) return;
  update(total_);
  std::fputc('\n', stderr);
}

}  // namespace frugal::cli
