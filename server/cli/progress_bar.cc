#include "progress_bar.h"

#include <cstdio>

namespace godwit {

ProgressBar::ProgressBar(bool terminal)
    : terminal_(terminal), start_(std::chrono::steady_clock::now()), last_(start_) {}

void ProgressBar::update(const Progress& p) {
  const auto now = std::chrono::steady_clock::now();
  // Off a terminal: one line at most every 10 s, and always the last one.
  if (!terminal_ && p.fraction < 1.0 && now - last_ < std::chrono::seconds(10)) return;
  last_ = now;
  const double elapsed_s = std::chrono::duration<double>(now - start_).count();
  const int width = 30;
  const int filled = static_cast<int>(p.fraction * width + 0.5);
  std::string bar(static_cast<size_t>(filled), '#');
  bar.resize(width, '.');
  char total[32] = "?";
  if (p.recording_total_s) std::snprintf(total, sizeof total, "%.0f", *p.recording_total_s);
  std::fprintf(stderr, "%s[%s] %3.0f%%  recording %zu/%zu  %.0f/%s s  elapsed %.0f s%s",
               terminal_ ? "\r" : "", bar.c_str(), 100 * p.fraction, p.recording_index + 1, p.recordings,
               p.recording_done_s, total, elapsed_s, terminal_ ? "\033[K" : "\n");
  std::fflush(stderr);
  drawn_ = true;
}

void ProgressBar::done() {
  if (terminal_ && drawn_) std::fprintf(stderr, "\n");
}

}  // namespace godwit
