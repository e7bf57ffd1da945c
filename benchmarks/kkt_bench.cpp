// qualify: times check_kkt against one LAPACK factorisation of the active Jacobian, same run.
// SPDX-License-Identifier: MIT
//
// Usage: kkt_bench [largest_variables]   (default 10000: 1000 ... 10000 variables).
// Each model has `active` active inequalities (random Gaussian gradients, values 0), 100
// inactive ones (values below -1) and grad f = -J_A^T lambda with lambda in [1, 2], so the
// point is a KKT point with strictly positive multipliers. Kinds: "full" (LICQ holds; no
// Hessian, so second order is not checked), "rank-5" (five active rows replaced by
// combinations of two others: LICQ fails, so MFCQ's LP and the multiplier ranges run), and
// "hessian" (a dense positive definite Hessian of f: the second-order tests on the
// (n - active)-dimensional null space, about 9 (n - active)^3 flops for the eigenvalues).
// The peers factorise J_A^T (n x active) once, single-threaded on OpenBLAS: dgeqrf
// (Householder QR) and dgeqp3 (with column pivoting); a ratio ours/peer of 3 means check_kkt
// costs three such factorisations. Times are the best of up to 5 runs within about 1 s.
#include <cblas.h>
#include <lapacke.h>

#include <Eigen/Dense>
#include <cstdio>
#include <cstdlib>
#include <qualify/kkt.hpp>
#include <random>
#include <string>
#include <vector>

#include "timing.hpp"

namespace {

using Eigen::Index;
using Eigen::MatrixXd;
using Eigen::VectorXd;
using qualify_bench::best_of;

struct timing {
  double seconds = 0;
  std::string note;
};

enum class kind { full, rank5, hessian };

const char* name_of(kind k) {
  return k == kind::full ? "full" : k == kind::rank5 ? "rank-5" : "hessian";
}

qualify::model_at_point make_point(Index n, Index active, kind k, std::mt19937_64& rng) {
  std::normal_distribution<double> normal;
  std::uniform_real_distribution<double> uniform(1.0, 2.0);
  const Index inactive = 100, m = active + inactive;
  qualify::model_at_point p;
  p.x = VectorXd::Zero(n);
  p.jacobian = MatrixXd::NullaryExpr(m, n, [&] { return normal(rng); });
  if (k == kind::rank5)
    for (Index j = 1; j <= 5; ++j) {
      const Index row = j * active / 6, a = row - 1, b = row + 1;  // a, b are never replaced
      p.jacobian.row(row) = normal(rng) * p.jacobian.row(a) + normal(rng) * p.jacobian.row(b);
    }
  p.values = VectorXd::Zero(m);
  for (Index i = active; i < m; ++i) p.values(i) = -uniform(rng);
  const VectorXd lambda = VectorXd::NullaryExpr(active, [&] { return uniform(rng); });
  p.objective_gradient = -p.jacobian.topRows(active).transpose() * lambda;
  p.types.assign(std::size_t(m), qualify::constraint_type::inequality);
  // Declared nonlinear (the linear CQ then fails, as in most models); the "hessian" kind
  // declares its rows affine, so that the objective's Hessian is the Lagrangian's.
  p.kinds.assign(std::size_t(m), k == kind::hessian ? qualify::constraint_kind::affine
                                                    : qualify::constraint_kind::nonlinear);
  if (k == kind::hessian) {
    const MatrixXd g = MatrixXd::NullaryExpr(n, 20, [&] { return normal(rng); });
    MatrixXd h = g * g.transpose() / double(n);
    h.diagonal().array() += 1.0;
    p.objective_hessian = std::move(h);
  }
  return p;
}

timing ours(const qualify::model_at_point& p) {
  const qualify::kkt_report r = qualify::check_kkt(p);
  timing t;
  t.note = std::string(qualify::to_string(r.classification)) + ", LICQ " +
           std::string(qualify::to_string(r.licq.result)) + " (" +
           std::string(qualify::to_string(r.licq.method)) + "), second order " +
           std::string(qualify::to_string(r.second_order.result));
  return t;
}

// One factorisation of J_A^T (n x active, column-major), as an optimizer would do it.
timing lapack_qr(const MatrixXd& active_jacobian, bool pivoted) {
  MatrixXd a = active_jacobian.transpose();
  const lapack_int n = lapack_int(a.rows()), m = lapack_int(a.cols());
  std::vector<double> tau(std::size_t(std::min(n, m)));
  std::vector<lapack_int> pivots(std::size_t(m), 0);
  const lapack_int info =
      pivoted ? LAPACKE_dgeqp3(LAPACK_COL_MAJOR, n, m, a.data(), n, pivots.data(), tau.data())
              : LAPACKE_dgeqrf(LAPACK_COL_MAJOR, n, m, a.data(), n, tau.data());
  timing t;
  if (info != 0) t.note = "info " + std::to_string(info);
  return t;
}

}  // namespace

int main(int argc, char** argv) {
  openblas_set_num_threads(1);
  const Index largest = argc > 1 ? Index(std::atol(argv[1])) : 10000;
  const char* coretype = std::getenv("OPENBLAS_CORETYPE");
  std::printf("kkt_bench: OpenBLAS threads %d (core type %s, %s), Eigen threads %d\n\n",
              openblas_get_num_threads(), coretype ? coretype : "detected", openblas_get_corename(),
              Eigen::nbThreads());
  std::printf("%-6s %-6s %-8s %10s %10s %8s %10s %8s  %s\n", "vars", "active", "kind", "check_kkt",
              "dgeqrf", "ratio", "dgeqp3", "ratio", "what check_kkt said");
  std::mt19937_64 rng(20261207);
  struct size {
    Index n, active;
    kind k;
  };
  const std::vector<size> sizes = {
      {1000, 100, kind::full},   {1000, 300, kind::full},    {2000, 300, kind::full},
      {5000, 300, kind::full},   {10000, 100, kind::full},   {10000, 300, kind::full},
      {1000, 300, kind::rank5},  {2000, 300, kind::rank5},   {5000, 300, kind::rank5},
      {10000, 300, kind::rank5}, {1000, 300, kind::hessian}, {2000, 300, kind::hessian}};
  for (const size& s : sizes) {
    if (s.n > largest) continue;
    const qualify::model_at_point p = make_point(s.n, s.active, s.k, rng);
    const MatrixXd active_jacobian = p.jacobian.topRows(s.active);
    const timing t_ours = best_of([&] { return ours(p); });
    const timing t_qr = best_of([&] { return lapack_qr(active_jacobian, false); });
    const timing t_qp3 = best_of([&] { return lapack_qr(active_jacobian, true); });
    std::printf("%-6td %-6td %-8s %10.4f %10.4f %8.2f %10.4f %8.2f  %s%s%s\n", s.n, s.active,
                name_of(s.k), t_ours.seconds, t_qr.seconds, t_ours.seconds / t_qr.seconds,
                t_qp3.seconds, t_ours.seconds / t_qp3.seconds, t_ours.note.c_str(),
                t_qr.note.empty() ? "" : "; dgeqrf ", t_qr.note.c_str());
  }
  return 0;
}
