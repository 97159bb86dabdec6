#include "cli/progress_bar.h"

#include <unistd.h>

#include <cstdio>
#include <utility>

namespace frugal::cli {

ProgressBar::ProgressBar(std::string what, long long total)
    : what_(std::move(what)),
      total_(total),
      enabled_(isatty(STDERR_FILENO) != 0),
      start_(std::chrono::steady_clock::now()),
      last_draw_(start_) {}

ProgressBar::~ProgressBar() {
  if (enabled_ && line_open_) std::fputc('\n', stderr);
}

void ProgressBar::update(long long done) {
  detail_.clear();
  draw(done, false);
}

void ProgressBar::update(long long done, const std::string& detail) {
  detail_ = detail;
  draw(done, false);
}

void ProgressBar::draw(long long done, bool force) {
  if (!enabled_) return;
  const auto now = std::chrono::steady_clock::now();
  if (!force && done < total_ && now - last_draw_ < std::chrono::milliseconds(100)) return;
  last_draw_ = now;
  constexpr int kWidth = 30;
  const double share = total_ > 0 ? static_cast<double>(done) / static_cast<double>(total_) : 1.0;
  const int filled = static_cast<int>(share * kWidth);
  std::string line = what_ + " [";
  for (int i = 0; i < kWidth; ++i) line += i < filled ? '#' : '.';
  line += "] ";
  if (detail_.empty()) {
    const double seconds = std::chrono::duration<double>(now - start_).count();
    const double rate = seconds > 0 ? static_cast<double>(done) / seconds : 0.0;
    char counts[96];
    std::snprintf(counts, sizeof counts, "%lld/%lld  %.1f/s ", done, total_, rate);
    line += counts;
  } else {
    line += detail_;
  }
  const std::size_t width = line.size();
  if (width < last_width_) line.append(last_width_ - width, ' ');
  last_width_ = width;
  std::fprintf(stderr, "\r%s", line.c_str());
  std::fflush(stderr);
  line_open_ = true;
}

void ProgressBar::finish() {
  if (!enabled_) return;
  draw(total_, true);
  std::fputc('\n', stderr);
  line_open_ = false;
}

}  // namespace frugal::cli
