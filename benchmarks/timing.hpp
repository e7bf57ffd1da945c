// qualify benchmarks: the timing rule every benchmark shares (best of a few runs).
// SPDX-License-Identifier: MIT
#pragma once

#include <chrono>
#include <limits>

namespace qualify_bench {

/// Runs `run` up to 5 times, as many as fit in about a second (at least once), and returns the
/// result of the fastest run with its time in `seconds` (the result type must have that field).
template <class F>
auto best_of(F&& run) {
  decltype(run()) best{};
  best.seconds = std::numeric_limits<double>::infinity();
  double spent = 0;
  for (int r = 0; r < 5 && (r == 0 || spent < 1.0); ++r) {
    const auto start = std::chrono::steady_clock::now();
    auto t = run();
    const std::chrono::duration<double> took = std::chrono::steady_clock::now() - start;
    spent += took.count();
    if (took.count() < best.seconds) {
      best = t;
      best.seconds = took.count();
    }
  }
  return best;
}

}  // namespace qualify_bench
