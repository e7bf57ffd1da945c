// qualify: times the LP engine on phase-one and MFCQ LPs against GLPK and SciPy's HiGHS.
// SPDX-License-Identifier: MIT
//
// Usage: phase_one_bench [largest_rows] [netlib-folder]. Three families, every LP given to
// every solver as the same data in one run:
//  1. dense phase-one LPs: the margin LP that check_affine_slater solves first (max t s.t.
//     rho_k(x) >= t on every side, -1 <= t <= 1, see detail::slater_margin_lp) for a
//     system of m Gaussian rows a_i x <= b_i around a point of the box -1 <= x <= 1 in
//     n = m / 2 variables (the box's sides are sides too: 2m rows, n + 1 columns);
//  2. dense MFCQ LPs: max t s.t. A d + t 1 <= 0, E d = 0, -1 <= d <= 1, t <= 1 on unit
//     Gaussian rows (m active rows, m / 20 equalities, n = m / 2), as check_mfcq poses it;
//  3. the Netlib models of ../shared/data/netlib: each LP as given (its published optimum
//     checked) and the phase-one (margin) LP of its constraints.
// Peers: GLPK's library in this process (glp_simplex, and glp_interior on LPs of up to 2000
// rows), and
// scipy.optimize.linprog with method "highs" (HiGHS choosing its method) and "highs-ipm",
// run by benchmarks/highs_peer.py in a Python process per LP (started just before our solve
// of that LP, so that all solvers meet the same machine load) that times linprog alone
// (time.perf_counter): Python's start-up, the file reading and the conversion to linprog's
// form are not counted. Every time is the best of up to 5 runs within about 1 s.
// Python: $QUALIFY_PYTHON, else the python3 found by CMake (Debian's, with python3-scipy).
#include <fmt/core.h>
#include <unistd.h>

#include <cmath>
#include <cstdlib>
#include <qualify/mps.hpp>
#include <qualify/slater.hpp>
#include <random>
#include <string>
#include <vector>

#include "lp_peers.hpp"
#include "netlib_index.hpp"

namespace {

using qualify_bench::bench_lp;
constexpr double inf = std::numeric_limits<double>::infinity();

bench_lp phase_one_lp(int m, int n, unsigned seed) {
  std::mt19937 rng(seed);
  std::normal_distribution<double> g;
  std::uniform_real_distribution<double> u(0, 1);
  Eigen::MatrixXd A(m, n);
  for (int j = 0; j < n; ++j)
    for (int i = 0; i < m; ++i) A(i, j) = g(rng);
  Eigen::VectorXd x0(n);
  for (int j = 0; j < n; ++j) x0[j] = 1.6 * u(rng) - 0.8;
  Eigen::VectorXd b = A * x0;
  for (int i = 0; i < m; ++i) b[i] += u(rng);
  const auto system = qualify::detail::slater_prepare(
      A.sparseView(), Eigen::VectorXd::Constant(m, -inf), b, Eigen::VectorXd::Constant(n, -1),
      Eigen::VectorXd::Constant(n, 1), 1e20);
  const auto lp = qualify::detail::slater_margin_lp(system);
  return {fmt::format("phase-one {}x{}", m, n),
          lp.A,
          lp.c,
          lp.row_lower,
          lp.row_upper,
          lp.col_lower,
          lp.col_upper,
          0.0,
          true};
}

bench_lp mfcq_lp(int m, int n, unsigned seed) {
  std::mt19937 rng(seed);
  std::normal_distribution<double> g;
  const int q = m / 20;
  Eigen::MatrixXd A = Eigen::MatrixXd::Zero(m + q, n + 1);
  for (int j = 0; j < n; ++j)
    for (int i = 0; i < m + q; ++i) A(i, j) = g(rng);
  for (int i = 0; i < m + q; ++i) A.row(i) /= A.row(i).norm();
  A.col(n).head(m).setOnes();
  bench_lp p{fmt::format("mfcq {}x{}", m + q, n),
             A.sparseView(),
             Eigen::VectorXd::Zero(n + 1),
             Eigen::VectorXd::Constant(m + q, -inf),
             Eigen::VectorXd::Zero(m + q),
             Eigen::VectorXd::Constant(n + 1, -1),
             Eigen::VectorXd::Constant(n + 1, 1),
             0.0,
             true};
  p.c[n] = -1;
  p.rl.tail(q).setZero();
  p.cl[n] = -inf;
  return p;
}

struct timing {
  double ours = NAN, highs = NAN, highs_ipm = NAN, simplex = NAN, glpk_ipm = NAN;
};

struct family_total {
  timing sum{0, 0, 0, 0, 0};
  int agree = 0, count = 0;
};

// Agreement with the reference objective: `tol` relative (with 1 as the floor).
bool close(double a, double b, double tol) {
  return std::isfinite(a) && std::isfinite(b) &&
         std::abs(a - b) <= tol * std::max(1.0, std::abs(b));
}

// Times every solver on every LP of a family and prints one row per LP. `reference[k]`
// (NaN: GLPK simplex's optimum) is what each solver's objective is compared with, to
// `tolerance[k]` relative (empty: 1e-6).
family_total run_family(const std::vector<bench_lp>& lps, const std::vector<double>& reference,
                        const std::vector<double>& tolerance, bool with_glpk_ipm,
                        const std::string& python, const std::string& script,
                        const std::string& dir, std::vector<timing>* rows = nullptr) {
  family_total total;
  fmt::print("{:<22} {:>6} {:>6} {:>8}  {:>9} {:>9} {:>9} {:>9} {:>9}  {:>7} {:>7} {:>7}  {}\n",
             "lp", "rows", "cols", "nnz", "ours_s", "highs_s", "h-ipm_s", "splx_s", "g-ipm_s",
             "h/ours", "hi/ours", "sx/ours", "agree (ours highs splx) factorisation");
  for (std::size_t k = 0; k < lps.size(); ++k) {
    const bench_lp& p = lps[k];
    timing t;
    std::map<std::string, qualify_bench::highs_answer> h;
    if (!python.empty()) h = qualify_bench::run_highs(p, "highs,highs-ipm", python, script, dir);
    qualify::lp_result r;
    t.ours = qualify_bench::time_ours(p, r);
    const double v_simplex = qualify_bench::glpk_solve(p, false, t.simplex);
    // glp_interior grows fastest (46 s at 2000 rows, measured): larger LPs are left out.
    const bool glpk_ipm = with_glpk_ipm && p.A.rows() <= 2000;
    if (glpk_ipm) qualify_bench::glpk_solve(p, true, t.glpk_ipm);
    const auto& a = h["highs"];
    const auto& b = h["highs-ipm"];
    t.highs = a.ran ? a.seconds : NAN;
    t.highs_ipm = b.ran ? b.seconds : NAN;
    const double ref = std::isnan(reference[k]) ? v_simplex : reference[k];
    const double tol = tolerance.empty() ? 1e-6 : tolerance[k];
    const bool ok_ours = r.status == qualify::lp_status::optimal && close(r.objective, ref, tol);
    const bool ok_highs = a.ran && a.status == 0 && close(a.objective, ref, tol);
    const bool ok_simplex = close(v_simplex, ref, tol);
    total.agree += ok_ours;
    ++total.count;
    total.sum.ours += t.ours;
    total.sum.highs += t.highs;
    total.sum.highs_ipm += t.highs_ipm;
    total.sum.simplex += t.simplex;
    total.sum.glpk_ipm += glpk_ipm ? t.glpk_ipm : 0;
    fmt::print(
        "{:<22} {:>6} {:>6} {:>8}  {:>9.4f} {:>9.4f} {:>9.4f} {:>9.4f} {:>9.4f}  {:>7.2f} {:>7.2f} "
        "{:>7.2f}  {} {} {}  {}\n",
        p.name, p.A.rows(), p.A.cols(), p.A.nonZeros(), t.ours, t.highs, t.highs_ipm, t.simplex,
        t.glpk_ipm, t.highs / t.ours, t.highs_ipm / t.ours, t.simplex / t.ours,
        ok_ours ? "yes" : "NO", ok_highs ? "yes" : "NO", ok_simplex ? "yes" : "NO",
        r.linear_solver);
    if (rows) rows->push_back(t);
  }
  const auto& s = total.sum;
  fmt::print(
      "{:<22} {:>6} {:>6} {:>8}  {:>9.3f} {:>9.3f} {:>9.3f} {:>9.3f} {:>9.3f}  {:>7.2f} {:>7.2f} "
      "{:>7.2f}  ours {} of {}\n\n",
      "total", "", "", "", s.ours, s.highs, s.highs_ipm, s.simplex, s.glpk_ipm, s.highs / s.ours,
      s.highs_ipm / s.ours, s.simplex / s.ours, total.agree, total.count);
  return total;
}

void print_growth(const char* what, const std::vector<int>& sizes, const std::vector<timing>& t) {
  if (sizes.size() < 2) return;
  const std::size_t last = sizes.size() - 1;
  const double span = std::log(double(sizes[last]) / sizes[0]);
  auto slope = [&](double a, double b) { return std::log(b / a) / span; };
  fmt::print(
      "{}: growth from {} to {} rows of the system, time ratio (exponent): ours {:.0f} "
      "({:.2f}), highs {:.0f} ({:.2f}), highs-ipm {:.0f} ({:.2f}), glp_simplex {:.0f} "
      "({:.2f})\n\n",
      what, sizes[0], sizes[last], t[last].ours / t[0].ours, slope(t[0].ours, t[last].ours),
      t[last].highs / t[0].highs, slope(t[0].highs, t[last].highs),
      t[last].highs_ipm / t[0].highs_ipm, slope(t[0].highs_ipm, t[last].highs_ipm),
      t[last].simplex / t[0].simplex, slope(t[0].simplex, t[last].simplex));
}

}  // namespace

int main(int argc, char** argv) {
  const int largest = argc > 1 ? std::max(100, std::atoi(argv[1])) : 2000;
  const std::string netlib = argc > 2 ? argv[2] : std::string(QUALIFY_BENCH_DATA_DIR) + "/netlib";
  const char* env = std::getenv("QUALIFY_PYTHON");
  std::string python = env ? env : QUALIFY_BENCH_PYTHON;
  const std::string script = std::string(QUALIFY_BENCH_SOURCE_DIR) + "/highs_peer.py";
  if (!qualify_bench::highs_available(python)) {
    fmt::print(
        "HiGHS peer skipped: '{}' cannot import scipy.optimize (Debian python3-scipy; "
        "set QUALIFY_PYTHON)\n\n",
        python);
    python.clear();
  }
  char dir_template[] = "/tmp/qualify_phase_one_XXXXXX";
  const char* dir = mkdtemp(dir_template);
  if (!dir) {
    fmt::print("cannot create a temporary folder\n");
    return 1;
  }
  std::vector<int> sizes;
  for (int m : {100, 200, 500, 1000, 2000})
    if (m <= largest) sizes.push_back(m);
  fmt::print("ratios are peer time / our time: above 1, ours is faster\n\n");

  std::vector<bench_lp> phase_one, mfcq;
  for (int m : sizes) {
    phase_one.push_back(phase_one_lp(m, m / 2, 7));
    mfcq.push_back(mfcq_lp(m, m / 2, 11));
  }
  const std::vector<double> none(sizes.size(), NAN);
  std::vector<timing> t1, t2;
  fmt::print("1. dense phase-one LPs (margin LP of m rows in m/2 variables with box bounds)\n");
  run_family(phase_one, none, {}, true, python, script, dir, &t1);
  print_growth("phase-one", sizes, t1);
  fmt::print("2. dense MFCQ LPs (unit rows, m active + m/20 equalities, m/2 variables)\n");
  run_family(mfcq, none, {}, true, python, script, dir, &t2);
  print_growth("mfcq", sizes, t2);

  const auto entries = qualify_test::read_netlib_index(netlib);
  if (entries.empty()) {
    fmt::print("3. Netlib skipped: no INDEX.csv in '{}'\n", netlib);
  } else {
    std::vector<bench_lp> given, margin;
    std::vector<double> published, tolerance;
    for (const auto& e : entries) {
      auto m = qualify::read_mps_file(netlib + "/" + e.file);
      if (!m.ok()) continue;
      // e226's published value leaves out the objective constant (see tests/lp_test.cpp).
      const double c0 = e.file == "e226.mps" ? 0.0 : m.objective_constant;
      given.push_back({e.file, m.matrix, m.objective, m.row_lower, m.row_upper, m.col_lower,
                       m.col_upper, c0, false});
      published.push_back(e.optimal_value);
      tolerance.push_back(qualify_test::netlib_tolerance(e));
      const auto system = qualify::detail::slater_prepare(m.matrix, m.row_lower, m.row_upper,
                                                          m.col_lower, m.col_upper, 1e20);
      const auto lp = qualify::detail::slater_margin_lp(system);
      margin.push_back({e.file + " phase-one", lp.A, lp.c, lp.row_lower, lp.row_upper, lp.col_lower,
                        lp.col_upper, 0.0, false});
    }
    fmt::print("3a. Netlib LPs as given (agreement: the published optimum, 1e-6 relative)\n");
    run_family(given, published, tolerance, true, python, script, dir);
    fmt::print(
        "3b. Netlib phase-one LPs (margin LP of each model's constraints; agreement: "
        "GLPK simplex's optimum)\n");
    run_family(margin, std::vector<double>(margin.size(), NAN), {}, true, python, script, dir);
  }
  rmdir(dir);
  return 0;
}
