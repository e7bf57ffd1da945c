// qualify: times the LP engine on dense MFCQ-shaped LPs against GLPK (simplex, interior).
// SPDX-License-Identifier: MIT
//
// Usage: lp_dense_bench. For each size, the MFCQ test LP of DESIGN.md section 2,
//   max t  s.t.  J_A d + t 1 <= 0,  J_E d = 0,  -1 <= d <= 1,  t <= 1,
// with Gaussian J (seeded), once with J_A of full rank in general position (t* > 0 when
// rows < columns) and once with every row of J_A duplicated (a degenerate optimum). GLPK
// runs in the same process through its library (glp_simplex, glp_interior, no output).
#include <fmt/core.h>
#include <glpk.h>

#include <chrono>
#include <cmath>
#include <limits>
#include <qualify/lp.hpp>
#include <random>
#include <vector>

namespace {

constexpr double inf = std::numeric_limits<double>::infinity();

struct dense_lp {
  Eigen::MatrixXd A;
  Eigen::VectorXd c, rl, ru, cl, cu;
};

dense_lp mfcq_lp(int active, int equalities, int n, bool duplicate, unsigned seed) {
  std::mt19937 rng(seed);
  std::normal_distribution<double> g;
  const int rows = active + equalities;
  dense_lp p;
  p.A = Eigen::MatrixXd::Zero(rows, n + 1);
  for (int i = 0; i < active; ++i) {
    if (duplicate && i % 2 == 1) {
      p.A.row(i) = p.A.row(i - 1);
      continue;
    }
    for (int j = 0; j < n; ++j) p.A(i, j) = g(rng);
    p.A(i, n) = 1;
  }
  for (int i = active; i < rows; ++i)
    for (int j = 0; j < n; ++j) p.A(i, j) = g(rng);
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

int bound_type(double lo, double up) {
  if (std::isfinite(lo) && std::isfinite(up)) return lo == up ? GLP_FX : GLP_DB;
  if (std::isfinite(lo)) return GLP_LO;
  if (std::isfinite(up)) return GLP_UP;
  return GLP_FR;
}

// Builds the GLPK problem (not timed) and times one solve; returns the objective.
double glpk_solve(const dense_lp& p, bool interior, double& seconds) {
  glp_prob* lp = glp_create_prob();
  const int m = static_cast<int>(p.A.rows()), n = static_cast<int>(p.A.cols());
  glp_add_rows(lp, m);
  glp_add_cols(lp, n);
  for (int i = 0; i < m; ++i)
    glp_set_row_bnds(lp, i + 1, bound_type(p.rl[i], p.ru[i]), std::isfinite(p.rl[i]) ? p.rl[i] : 0,
                     std::isfinite(p.ru[i]) ? p.ru[i] : 0);
  for (int j = 0; j < n; ++j) {
    glp_set_col_bnds(lp, j + 1, bound_type(p.cl[j], p.cu[j]), std::isfinite(p.cl[j]) ? p.cl[j] : 0,
                     std::isfinite(p.cu[j]) ? p.cu[j] : 0);
    glp_set_obj_coef(lp, j + 1, p.c[j]);
  }
  std::vector<int> ia{0}, ja{0};
  std::vector<double> ar{0};
  for (int j = 0; j < n; ++j)
    for (int i = 0; i < m; ++i)
      if (p.A(i, j) != 0) {
        ia.push_back(i + 1);
        ja.push_back(j + 1);
        ar.push_back(p.A(i, j));
      }
  glp_load_matrix(lp, static_cast<int>(ar.size()) - 1, ia.data(), ja.data(), ar.data());
  auto t0 = std::chrono::steady_clock::now();
  double value = std::nan("");
  if (interior) {
    glp_iptcp parm;
    glp_init_iptcp(&parm);
    parm.msg_lev = GLP_MSG_OFF;
    if (glp_interior(lp, &parm) == 0 && glp_ipt_status(lp) == GLP_OPT) value = glp_ipt_obj_val(lp);
  } else {
    glp_smcp parm;
    glp_init_smcp(&parm);
    parm.msg_lev = GLP_MSG_OFF;
    if (glp_simplex(lp, &parm) == 0 && glp_get_status(lp) == GLP_OPT) value = glp_get_obj_val(lp);
  }
  seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  glp_delete_prob(lp);
  return value;
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
      const dense_lp p = mfcq_lp(s.active, s.equalities, s.n, duplicate, 42);
      auto t0 = std::chrono::steady_clock::now();
      auto r = qualify::solve_lp(p.A, p.c, p.rl, p.ru, p.cl, p.cu);
      const double ours =
          std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
      double t_simplex = 0, t_ipm = 0;
      const double v_simplex = glpk_solve(p, false, t_simplex);
      const double v_ipm = glpk_solve(p, true, t_ipm);
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
      (void)v_ipm;
    }
  }
  fmt::print(
      "total: ours {:.3f} s, glp_simplex {:.3f} s, glp_interior {:.3f} s; ratios {:.2f}, {:.2f}\n",
      total_ours, total_simplex, total_ipm, total_ours / total_simplex, total_ours / total_ipm);
  return 0;
}
