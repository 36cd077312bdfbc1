// cli/progress.hpp: a progress line on standard error for long runs; silent when standard error is
// not a terminal or when asked to be quiet.
#pragma once

#include <unistd.h>

#include <chrono>
#include <cstdio>
#include <string>

namespace hallway::cli {

class Progress {
 public:
  Progress(std::string task, int steps, bool quiet)
      : task_(std::move(task)), steps_(steps), on_(!quiet && ::isatty(2)), t0_(std::chrono::steady_clock::now()) {}
  ~Progress() {
    if (on_) std::fprintf(stderr, "\r%-90s\r", "");
  }
  // Step k of n has started: what it does, how far along, and the time left at the average pace.
  void Step(int k, const std::string& what) const {
    if (!on_) return;
    const double spent = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0_).count();
    const double left = k > 0 ? spent / k * (steps_ - k) : 0.0;
    std::fprintf(stderr, "\r%s: %-40s %d/%d, about %.0f s left   ", task_.c_str(), what.c_str(), k + 1, steps_, left);
    std::fflush(stderr);
  }

 private:
  std::string task_;
  int steps_;
  bool on_;
  std::chrono::steady_clock::time_point t0_;
};

}  // namespace hallway::cli
