#include "progress.hpp"

#include <unistd.h>

#include <cstdio>

namespace runnel_app {

namespace {
std::string clock_text(double seconds) {
  if (!(seconds >= 0)) return "--:--";
  const long s = static_cast<long>(seconds + 0.5);
  char buffer[32];
  if (s >= 3600) {
    std::snprintf(buffer, sizeof buffer, "%ld:%02ld:%02ld", s / 3600, (s / 60) % 60, s % 60);
  } else {
    std::snprintf(buffer, sizeof buffer, "%02ld:%02ld", s / 60, s % 60);
  }
  return buffer;
}
}  // namespace

ProgressPrinter::ProgressPrinter(bool quiet) : quiet_(quiet), terminal_(isatty(STDERR_FILENO) == 1) {}

void ProgressPrinter::operator()(const libseq::pipeline::Progress& p) {
  if (quiet_) return;
  const double fraction = p.total ? static_cast<double>(p.done) / static_cast<double>(p.total) : 0.0;
  // ETA from the pace of the current stage (stages differ too much to extrapolate across them).
  const double eta = p.done > 0 && p.done < p.total ? p.elapsed_seconds / fraction * (1 - fraction) : -1;
  if (terminal_) {
    const int width = 28;
    const int filled = static_cast<int>(fraction * width);
    std::string bar(static_cast<std::size_t>(filled), '#');
    bar += std::string(static_cast<std::size_t>(width - filled), '.');
    std::fprintf(stderr, "\r%-10s [%s] %zu/%zu  elapsed %s  eta %s  %-24.24s", p.stage.c_str(), bar.c_str(), p.done,
                 p.total, clock_text(p.elapsed_seconds).c_str(), clock_text(eta).c_str(), p.detail.c_str());
    std::fflush(stderr);
    line_open_ = true;
    return;
  }
  const bool stage_changed = p.stage != last_stage_;
  if (!stage_changed && p.elapsed_seconds - last_print_ < 5.0 && p.done != p.total) return;
  std::fprintf(stderr, "runnel: %s %zu/%zu%s%s, elapsed %s\n", p.stage.c_str(), p.done, p.total,
               p.detail.empty() ? "" : " ", p.detail.c_str(), clock_text(p.elapsed_seconds).c_str());
  last_stage_ = p.stage;
  last_print_ = p.elapsed_seconds;
}

void ProgressPrinter::finish() {
  if (line_open_) std::fprintf(stderr, "\n");
  line_open_ = false;
}

}  // namespace runnel_app
