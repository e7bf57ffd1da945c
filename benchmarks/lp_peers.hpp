// qualify benchmarks: LPs timed by the peers (GLPK's library, SciPy's HiGHS) in the same run.
// SPDX-License-Identifier: MIT
#pragma once

#include <glpk.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <map>
#include <qualify/lp.hpp>
#include <sstream>
#include <string>
#include <vector>

namespace qualify_bench {

/// min c^T x + c0 s.t. row_lower <= A x <= row_upper, col_lower <= x <= col_upper; `dense`
/// says which overload of solve_lp it is given to (a dense A is handed over as a MatrixXd).
struct bench_lp {
  std::string name;
  qualify::detail::lp_sparse A;
  Eigen::VectorXd c, rl, ru, cl, cu;
  double c0 = 0;
  bool dense = false;
};

inline double seconds_since(std::chrono::steady_clock::time_point t0) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
}

/// The best time of up to 5 runs of `fn`, stopping once about `budget` seconds are spent.
template <class Fn>
double best_time(Fn&& fn, double budget = 1.0) {
  double best = 1e300, spent = 0;
  for (int k = 0; k < 5 && (k == 0 || spent < budget); ++k) {
    const auto t0 = std::chrono::steady_clock::now();
    fn();
    const double t = seconds_since(t0);
    best = std::min(best, t);
    spent += t;
  }
  return best;
}

/// Our engine on the LP, timed as above; `result` gets the last solve.
inline double time_ours(const bench_lp& p, qualify::lp_result& result) {
  const Eigen::MatrixXd dense = p.dense ? Eigen::MatrixXd(p.A) : Eigen::MatrixXd();
  return best_time([&] {
    result = p.dense ? qualify::solve_lp(dense, p.c, p.rl, p.ru, p.cl, p.cu, {}, p.c0)
                     : qualify::solve_lp(p.A, p.c, p.rl, p.ru, p.cl, p.cu, {}, p.c0);
  });
}

inline int glpk_bound_type(double lo, double up) {
  if (std::isfinite(lo) && std::isfinite(up)) return lo == up ? GLP_FX : GLP_DB;
  if (std::isfinite(lo)) return GLP_LO;
  if (std::isfinite(up)) return GLP_UP;
  return GLP_FR;
}

/// GLPK's library in this process: the problem is built untimed, then glp_simplex or
/// glp_interior (no output) is timed as above, each run on a fresh copy. Returns the
/// objective (NaN unless optimal).
inline double glpk_solve(const bench_lp& p, bool interior, double& seconds) {
  glp_term_out(GLP_OFF);
  glp_prob* base = glp_create_prob();
  const int m = int(p.A.rows()), n = int(p.A.cols());
  if (m > 0) glp_add_rows(base, m);
  if (n > 0) glp_add_cols(base, n);
  for (int i = 0; i < m; ++i)
    glp_set_row_bnds(base, i + 1, glpk_bound_type(p.rl[i], p.ru[i]),
                     std::isfinite(p.rl[i]) ? p.rl[i] : 0, std::isfinite(p.ru[i]) ? p.ru[i] : 0);
  for (int j = 0; j < n; ++j) {
    glp_set_col_bnds(base, j + 1, glpk_bound_type(p.cl[j], p.cu[j]),
                     std::isfinite(p.cl[j]) ? p.cl[j] : 0, std::isfinite(p.cu[j]) ? p.cu[j] : 0);
    glp_set_obj_coef(base, j + 1, p.c[j]);
  }
  glp_set_obj_coef(base, 0, p.c0);
  std::vector<int> ia{0}, ja{0};
  std::vector<double> ar{0};
  for (int j = 0; j < n; ++j)
    for (qualify::detail::lp_sparse::InnerIterator it(p.A, j); it; ++it) {
      ia.push_back(int(it.row()) + 1);
      ja.push_back(j + 1);
      ar.push_back(it.value());
    }
  glp_load_matrix(base, int(ar.size()) - 1, ia.data(), ja.data(), ar.data());
  double value = std::nan("");
  seconds = best_time([&] {
    glp_prob* lp = glp_create_prob();
    glp_copy_prob(lp, base, GLP_OFF);
    value = std::nan("");
    if (interior) {
      glp_iptcp parm;
      glp_init_iptcp(&parm);
      parm.msg_lev = GLP_MSG_OFF;
      if (glp_interior(lp, &parm) == 0 && glp_ipt_status(lp) == GLP_OPT)
        value = glp_ipt_obj_val(lp);
    } else {
      glp_smcp parm;
      glp_init_smcp(&parm);
      parm.msg_lev = GLP_MSG_OFF;
      if (glp_simplex(lp, &parm) == 0 && glp_get_status(lp) == GLP_OPT) value = glp_get_obj_val(lp);
    }
    glp_delete_prob(lp);
  });
  glp_delete_prob(base);
  return value;
}

/// What the HiGHS peer reported for one LP.
struct highs_answer {
  bool ran = false;
  int status = -1;  ///< scipy's: 0 optimal, 2 infeasible, 3 unbounded, else trouble
  double objective = std::nan("");
  double seconds = std::nan("");
};

/// Writes the LP for benchmarks/highs_peer.py: little-endian int64 m, n, nnz; doubles c,
/// row_lower, row_upper, col_lower, col_upper, c0; then A by columns (int64 column starts,
/// int64 row indices, double values). Infinite bounds are written as such.
inline bool write_lp_file(const bench_lp& p, const std::string& path) {
  std::ofstream out(path, std::ios::binary);
  auto ints = [&](std::int64_t v) { out.write(reinterpret_cast<const char*>(&v), 8); };
  auto doubles = [&](const double* v, Eigen::Index k) {
    out.write(reinterpret_cast<const char*>(v), std::streamsize(8 * k));
  };
  qualify::detail::lp_sparse A = p.A;
  A.makeCompressed();
  ints(A.rows());
  ints(A.cols());
  ints(A.nonZeros());
  for (const Eigen::VectorXd* v : {&p.c, &p.rl, &p.ru, &p.cl, &p.cu}) doubles(v->data(), v->size());
  doubles(&p.c0, 1);
  for (Eigen::Index j = 0; j <= A.cols(); ++j) ints(A.outerIndexPtr()[j]);
  for (Eigen::Index k = 0; k < A.nonZeros(); ++k) ints(A.innerIndexPtr()[k]);
  doubles(A.valuePtr(), A.nonZeros());
  return bool(out);
}

/// Runs `python -c "import scipy"`; false when SciPy is not there (Debian python3-scipy).
inline bool highs_available(const std::string& python) {
  const std::string cmd = "'" + python + "' -c 'import scipy.optimize' > /dev/null 2>&1";
  return std::system(cmd.c_str()) == 0;
}

/// Times scipy.optimize.linprog with each of `methods` (comma-separated) on one LP, in a
/// Python process of its own (benchmarks/highs_peer.py): the LP is written to `dir`, the
/// script reads it and converts it to linprog's form untimed, and times linprog alone inside
/// Python (best of up to 5 runs within about 1 s), so that the interpreter's start-up and the
/// file reading are not counted. One process per LP keeps the peer's runs next to ours in time.
inline std::map<std::string, highs_answer> run_highs(const bench_lp& lp, const std::string& methods,
                                                     const std::string& python,
                                                     const std::string& script,
                                                     const std::string& dir) {
  std::map<std::string, highs_answer> out;
  const std::string file = dir + "/lp.bin", result = dir + "/highs.txt";
  if (!write_lp_file(lp, file)) return out;
  const std::string cmd =
      "'" + python + "' '" + script + "' " + methods + " '" + file + "' > '" + result + "'";
  const int rc = std::system(cmd.c_str());
  std::ifstream in(result);
  std::string line;
  while (std::getline(in, line)) {
    std::istringstream fields(line);
    std::string path, method, objective;
    highs_answer a;
    if (!(fields >> path >> method >> a.status >> objective >> a.seconds)) continue;
    a.objective = std::strtod(objective.c_str(), nullptr);
    a.ran = true;
    out[method] = a;
  }
  std::remove(file.c_str());
  std::remove(result.c_str());
  if (rc != 0)
    std::fprintf(stderr, "highs_peer.py ended with status %d on %s\n", rc, lp.name.c_str());
  return out;
}

}  // namespace qualify_bench
