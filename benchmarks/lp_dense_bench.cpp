// qualify: times the LP engine on dense MFCQ-shaped LPs against GLPK (simplex, interior).
// SPDX-License-Identifier: MIT
//
// Usage: lp_dense_bench. For each size, the MFCQ test LP of DESIGN.md section 2,
//   max t  s.t.  J_A d + t 1 <= 0,  J_E d = 0,  -1 <= d <= 1,  t <= 1,
// with Gaussian J (seeded), once with J_A of full rank in general position (t* > 0 when
// rows < columns) and once with every row of J_A duplicated (a degenerate optimum). GLPK
// runs in the same process through its library (glp_simplex, glp_interior, no output; see
// lp_peers.hpp). Each time is the best of up to 5 runs within about 1 s.
#include <fmt/core.h>

#include <cmath>
#include <limits>
#include <qualify/lp.hpp>
#include <random>
#include <vector>

#include "lp_peers.hpp"

namespace {

constexpr double inf = std::numeric_limits<double>::infinity();
using qualify_bench::bench_lp;

bench_lp mfcq_lp(int active, int equalities, int n, bool duplicate, unsigned seed) {
  std::mt19937 rng(seed);
  std::normal_distribution<double> g;
  const int rows = active + equalities;
  Eigen::MatrixXd A = Eigen::MatrixXd::Zero(rows, n + 1);
  for (int i = 0; i < active; ++i) {
    if (duplicate && i % 2 == 1) {
      A.row(i) = A.row(i - 1);
      continue;
    }
    for (int j = 0; j < n; ++j) A(i, j) = g(rng);
    A(i, n) = 1;
  }
  for (int i = active; i < rows; ++i)
    for (int j = 0; j < n; ++j) A(i, j) = g(rng);
  bench_lp p;
  p.A = A.sparseView();
  p.dense = true;
  p.rl = Eigen::VectorXd::Constant(rows, -inf);
  p.rl.tail(equalities).setZero();
  p.ru = Eigen::VectorXd::Zero(rows);
  p.c = Eigen::VectorXd::Zero(n + 1);
  p.c[n] = -1;
  p.cl = Eigen::VectorXd::Constant(n + 1, -1);
  p.cl[n] = -inf;
  p.cu = Eigen::VectorXd::Constant(n + 1, 1);
  return p;
}

}  // namespace

int main() {
  struct size {
    int active, equalities, n;
  };
  const size sizes[] = {
      {50, 5, 100}, {200, 20, 400}, {400, 20, 200}, {1000, 50, 500}, {2000, 50, 1000}};
  fmt::print("{:>6} {:>4} {:>5} {:<4} {:>8} {:>8} {:>8} {:>7} {:>7}  {:<10} {}\n", "active", "eq",
             "n", "dup", "ours_s", "splx_s", "ipm_s", "o/splx", "o/ipm", "agree", "factorisation");
  double total_ours = 0, total_simplex = 0, total_ipm = 0;
  for (const auto& s : sizes) {
    for (bool duplicate : {false, true}) {
      const bench_lp p = mfcq_lp(s.active, s.equalities, s.n, duplicate, 42);
      qualify::lp_result r;
      const double ours = qualify_bench::time_ours(p, r);
      double t_simplex = 0, t_ipm = 0;
      const double v_simplex = qualify_bench::glpk_solve(p, false, t_simplex);
      qualify_bench::glpk_solve(p, true, t_ipm);
      // Agreement with the simplex optimum, 1e-6 absolute (t* lies in [0, 1]).
      const bool agree =
          r.status == qualify::lp_status::optimal && std::abs(r.objective - v_simplex) <= 1e-6;
      total_ours += ours;
      total_simplex += t_simplex;
      total_ipm += t_ipm;
      fmt::print(
          "{:>6} {:>4} {:>5} {:<4} {:>8.3f} {:>8.3f} {:>8.3f} {:>7.2f} {:>7.2f}  {:<10} {}\n",
          s.active, s.equalities, s.n, duplicate ? "yes" : "no", ours, t_simplex, t_ipm,
          ours / t_simplex, ours / t_ipm, agree ? "yes" : "NO", r.linear_solver);
    }
  }
  fmt::print(
      "total: ours {:.3f} s, glp_simplex {:.3f} s, glp_interior {:.3f} s; ratios {:.2f}, {:.2f}\n",
      total_ours, total_simplex, total_ipm, total_ours / total_simplex, total_ours / total_ipm);
  return 0;
}
