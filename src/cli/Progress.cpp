#include "Progress.hpp"

#include <fmt/format.h>
#include <unistd.h>

#include <algorithm>

namespace reachwise::cli {

ProgressBar::ProgressBar(std::string label, bool enabled)
    : label_(std::move(label)), enabled_(enabled && isatty(fileno(stderr)) == 1),
      start_(Clock::now()), last_(start_) {}

ProgressBar::~ProgressBar() { finish(); }

void ProgressBar::update(std::size_t done, std::size_t total) {
  if (!enabled_ || total == 0) return;
  best_ = std::max(best_, done);  // reports from several threads may arrive out of order
  const auto now = Clock::now();
  const double elapsed = std::chrono::duration<double>(now - start_).count();
  if (elapsed < 0.5 || (drawn_ && now - last_ < std::chrono::milliseconds(100))) return;
  last_ = now;
  constexpr int kWidth = 30;
  const double share = static_cast<double>(best_) / static_cast<double>(total);
  const int filled = static_cast<int>(share * kWidth);
  const double left_s = share > 0 ? elapsed * (1 - share) / share : 0;
  fmt::print(stderr, "\r{} [{}{}] {:3.0f}%  {}/{}  about {:.0f} s left ", label_,
             std::string(static_cast<std::size_t>(filled), '#'),
             std::string(static_cast<std::size_t>(kWidth - filled), '.'), 100 * share, best_, total,
             left_s);
  std::fflush(stderr);
  drawn_ = true;
}

void ProgressBar::stage(const std::string& what) {
  if (!enabled_) return;
  fmt::print(stderr, "\r\033[K{} ...", what);
  std::fflush(stderr);
  drawn_ = true;
}

void ProgressBar::finish() {
  if (!drawn_) return;
  fmt::print(stderr, "\r\033[K");
  std::fflush(stderr);
  drawn_ = false;
}

}  // namespace reachwise::cli
