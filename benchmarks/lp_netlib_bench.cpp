// qualify: times the MPS reader + LP engine on Netlib against glpsol (interior and simplex).
// SPDX-License-Identifier: MIT
//
// Usage: lp_netlib_bench [netlib-folder] [repeats]. Our time is the best of `repeats`
// in-process runs of read_mps_file + solve_lp; glpsol runs once per method as a whole
// process (`glpsol --mps FILE [--interior] -o OUT`), so its time includes process start
// and writing the solution file. Each row says whether the objective reached the
// published optimum (INDEX.csv, 1e-6 relative; scrs8 1e-5).
#include <fmt/core.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <qualify/lp.hpp>
#include <qualify/mps.hpp>
#include <string>

#include "netlib_index.hpp"

namespace {

double seconds_since(std::chrono::steady_clock::time_point t0) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
}

struct glpsol_run {
  double seconds = 0;
  bool optimal = false;
  double objective = std::nan("");
};

// Runs glpsol on `file` and reads "Status:" and "Objective:  NAME = value" from its output.
glpsol_run run_glpsol(const std::string& file, bool interior) {
  const std::string out = "/tmp/qualify_lp_bench_glpsol.txt";
  std::remove(out.c_str());
  const std::string cmd = "glpsol --mps '" + file + "'" + (interior ? " --interior" : "") + " -o " +
                          out + " > /dev/null 2>&1";
  glpsol_run r;
  auto t0 = std::chrono::steady_clock::now();
  int rc = std::system(cmd.c_str());
  r.seconds = seconds_since(t0);
  if (rc != 0) return r;
  std::ifstream in(out);
  std::string line;
  while (std::getline(in, line)) {
    if (line.rfind("Status:", 0) == 0) r.optimal = line.find("OPTIMAL") != std::string::npos;
    if (line.rfind("Objective:", 0) == 0) {
      auto eq = line.find('=');
      if (eq != std::string::npos) r.objective = std::strtod(line.c_str() + eq + 1, nullptr);
    }
  }
  return r;
}

bool reaches(double value, const qualify_test::netlib_entry& e) {
  const double rel = std::abs(value - e.optimal_value) / std::max(1.0, std::abs(e.optimal_value));
  return std::isfinite(value) && rel <= qualify_test::netlib_tolerance(e);
}

}  // namespace

int main(int argc, char** argv) {
  const std::string dir = argc > 1 ? argv[1] : std::string(QUALIFY_BENCH_DATA_DIR) + "/netlib";
  const int repeats = argc > 2 ? std::max(1, std::atoi(argv[2])) : 3;
  const auto entries = qualify_test::read_netlib_index(dir);
  if (entries.empty()) {
    fmt::print("no INDEX.csv in '{}'\n", dir);
    return 1;
  }
  if (std::system("glpsol --version > /dev/null 2>&1") != 0) {
    fmt::print("glpsol not found (Debian package glpk-utils)\n");
    return 1;
  }
  fmt::print("{:<14} {:>5} {:>9} {:>9} {:>9} {:>7} {:>7}  {:<4} {:<4} {:<4} {}\n", "file", "iter",
             "ours_s", "ipm_s", "splx_s", "o/ipm", "o/splx", "ours", "ipm", "splx",
             "factorisation");
  double total_ours = 0, total_ipm = 0, total_simplex = 0;
  int ok_ours = 0, ok_ipm = 0, ok_simplex = 0;
  for (const auto& e : entries) {
    const std::string path = dir + "/" + e.file;
    double best = 1e300;
    qualify::lp_result r;
    double constant = 0;
    for (int k = 0; k < repeats; ++k) {
      auto t0 = std::chrono::steady_clock::now();
      auto m = qualify::read_mps_file(path);
      r = qualify::solve_lp(m.matrix, m.objective, m.row_lower, m.row_upper, m.col_lower,
                            m.col_upper, {}, m.objective_constant);
      best = std::min(best, seconds_since(t0));
      constant = m.objective_constant;
    }
    // e226's published value is c^T x* without the constant (see tests/lp_test.cpp);
    // glpsol adds the objective row's RHS entry itself, i.e. minus our constant.
    const bool e226 = e.file == "e226.mps";
    const double ours_value = e226 ? r.objective - constant : r.objective;
    glpsol_run ipm = run_glpsol(path, true);
    glpsol_run splx = run_glpsol(path, false);
    const double ipm_value = e226 ? ipm.objective + constant : ipm.objective;
    const double splx_value = e226 ? splx.objective + constant : splx.objective;
    const bool a = r.status == qualify::lp_status::optimal && reaches(ours_value, e);
    const bool b = ipm.optimal && reaches(ipm_value, e);
    const bool c = splx.optimal && reaches(splx_value, e);
    ok_ours += a;
    ok_ipm += b;
    ok_simplex += c;
    total_ours += best;
    total_ipm += ipm.seconds;
    total_simplex += splx.seconds;
    fmt::print("{:<14} {:>5} {:>9.4f} {:>9.4f} {:>9.4f} {:>7.2f} {:>7.2f}  {:<4} {:<4} {:<4} {}\n",
               e.file, r.iterations, best, ipm.seconds, splx.seconds, best / ipm.seconds,
               best / splx.seconds, a ? "yes" : "NO", b ? "yes" : "NO", c ? "yes" : "NO",
               r.linear_solver);
  }
  fmt::print("{:<14} {:>5} {:>9.3f} {:>9.3f} {:>9.3f} {:>7.2f} {:>7.2f}  {:<4} {:<4} {:<4}\n",
             "total", "", total_ours, total_ipm, total_simplex, total_ours / total_ipm,
             total_ours / total_simplex, ok_ours, ok_ipm, ok_simplex);
  fmt::print(
      "published optimum reached: ours {} / glpsol --interior {} / glpsol simplex {} of {}\n",
      ok_ours, ok_ipm, ok_simplex, entries.size());
  return 0;
}
