// qualify tests: numerical stress: magnitudes from 1e-300 to 1e300, all rows parallel, rank-one
// updates of the identity, empty and 1 x 1 shapes for every entry point, float and long double.
// SPDX-License-Identifier: MIT
#include <doctest/doctest.h>

#include <Eigen/SparseCore>
#include <algorithm>
#include <cmath>
#include <limits>
#include <qualify/doctest.hpp>
#include <qualify/qualify.hpp>
#include <random>
#include <string>
#include <vector>

#include "mfcq_reference.hpp"
#include "reference.hpp"

using namespace qualify;
using Eigen::MatrixXd;
using Eigen::VectorXd;
using qualify_test::gaussian;
using qualify_test::glpk_margin;
using qualify_test::lapack_singular_values;

namespace {

constexpr double eps = std::numeric_limits<double>::epsilon();
constexpr double inf = std::numeric_limits<double>::infinity();
constexpr auto ineq = constraint_type::inequality;

/// Rows divided by their stableNorm (which neither overflows nor underflows at 1e+-300, where
/// the plain 2-norm of reference.hpp's normalise_rows would).
MatrixXd unit_rows(const MatrixXd& a) {
  MatrixXd out = a;
  for (Eigen::Index i = 0; i < a.rows(); ++i) {
    const double norm = a.row(i).stableNorm();
    if (norm > 0) out.row(i) /= norm;
  }
  return out;
}

/// LAPACK's rank of the unit rows at the library's default threshold tau = max(m, n) eps, and
/// whether the gap is clear (sigma_r >= 1000 tau, sigma_{r+1} <= tau).
Eigen::Index lapack_rank(const MatrixXd& a, bool& clear) {
  const double tau = double(std::max(a.rows(), a.cols())) * eps;
  const VectorXd s = lapack_singular_values(unit_rows(a));
  Eigen::Index r = 0;
  while (r < s.size() && s(r) > tau) ++r;
  clear = (r == 0 || s(r - 1) >= 1000 * tau) && (r == s.size() || s(r) <= tau);
  return r;
}

MatrixXd integer_matrix(Eigen::Index m, Eigen::Index n, std::mt19937& rng) {
  std::uniform_int_distribution<int> d(-4, 4);
  MatrixXd a(m, n);
  for (Eigen::Index i = 0; i < a.size(); ++i) a.data()[i] = d(rng);
  return a;
}

/// Well-separated test matrices: full row rank with singular values in [0.1, 1], exact rank
/// deficiency from integer factors, more rows than columns.
MatrixXd separated_case(int kind, std::mt19937& rng) {
  std::uniform_int_distribution<Eigen::Index> size(2, 7);
  const Eigen::Index n = size(rng);
  if (kind == 0) {
    const Eigen::Index m = std::uniform_int_distribution<Eigen::Index>(1, n)(rng);
    const VectorXd sigma = (VectorXd::Random(m).array() * 0.45 + 0.55).matrix();
    return qualify_test::with_singular_values(m, n, sigma, rng);
  }
  if (kind == 1) {
    const Eigen::Index m = size(rng) + 1, r = std::uniform_int_distribution<Eigen::Index>(1, std::min(m, n) - 1)(rng);
    MatrixXd a = integer_matrix(m, r, rng) * integer_matrix(r, n, rng);
    for (Eigen::Index i = 0; i < m; ++i)
      if (a.row(i).norm() == 0) a(i, 0) = 1;
    return a;
  }
  return gaussian(n + 2, n, rng);
}

/// 10^k for integer k uniform in [lo, hi].
double power_of_ten(std::mt19937& rng, int lo, int hi) {
  return std::pow(10.0, double(std::uniform_int_distribution<int>(lo, hi)(rng)));
}

}  // namespace

TEST_CASE("stress: rows scaled from 1e-300 to 1e300 keep the LICQ verdict (LAPACK reference)") {
  // Scaling a row by 10^k, |k| <= 300, is exact up to one rounding per entry as long as the
  // entries stay normal numbers (|a_ij| 10^k within [2.2e-308, 1.8e308]); the unit rows, and
  // with them every verdict, are then those of the unscaled matrix. It can legitimately change
  // when entries leave that range: below 2.2e-308 they lose digits (subnormal; at 1e-320 only
  // about 4 remain, which can move a verdict that sits near its threshold) or vanish, and
  // above 1.8e308 they overflow to Inf (invalid_input). The entries here stay within
  // [1e-301, 1e301].
  int clear_cases = 0;
  for (unsigned seed = 1; seed <= 45; ++seed) {
    CAPTURE(seed);
    std::mt19937 rng(seed);
    std::srand(seed);
    const MatrixXd base = separated_case(int(seed % 3), rng);
    MatrixXd scaled = base;
    for (Eigen::Index i = 0; i < base.rows(); ++i) {
      const double f = power_of_ten(rng, -290, 290);
      scaled.row(i) *= f;
      if (!scaled.row(i).allFinite() || scaled.row(i).cwiseAbs().maxCoeff() < 1e-300) scaled.row(i) = base.row(i);
    }
    CAPTURE(base);
    CAPTURE(scaled);
    bool clear = false;
    const Eigen::Index rank = lapack_rank(base, clear);
    if (!clear) continue;
    ++clear_cases;
    const verdict expected = rank == base.rows() ? verdict::holds : verdict::fails;
    const licq_report b = check_licq(base), s = check_licq(scaled);
    CAPTURE(fmt::format("{:f}", s));
    CHECK(b.result == expected);
    CHECK(s.result == expected);
    CHECK(s.rank == rank);
    CHECK(s.dependencies.size() == b.dependencies.size());
    // The same rows, dense and sparse.
    const Eigen::SparseMatrix<double> sp = scaled.sparseView(0.0, 0.0);
    const licq_report sparse = check_licq(sp);
    CAPTURE(fmt::format("{:f}", sparse));
    CHECK(sparse.result == expected);
    CHECK(sparse.rank == rank);
    // On the gradients as given the rank may differ (raw_rank): then it must say so.
    if (s.raw_rank != s.rank)
      CHECK(std::any_of(s.findings.begin(), s.findings.end(),
                        [](const finding& f) { return f.code == "scaling_sensitive"; }));
  }
  CHECK(clear_cases >= 30);
}

TEST_CASE("stress: entries from 1e-300 to 1e300 within one row, and subnormal rows") {
  // Hand-checkable unit rows: (1e300, 1e-300) is e_1 to working precision, (1e-300, 1e-300)
  // is (1, 1)/sqrt(2), and (1e-310, 0) (subnormal) is e_1 again.
  MatrixXd j(2, 2);
  j << 1e300, 1e-300, 1e-300, 1e-300;
  licq_report r = check_licq(j);
  CAPTURE(fmt::format("{:f}", r));
  CHECK(r.result == verdict::holds);
  // Unit rows (1, 0) and (1, 1)/sqrt(2): sigma_min = sqrt(1 - 1/sqrt(2)) (by hand; LAPACK too).
  const double smin = std::sqrt(1 - 1 / std::sqrt(2.0));
  CHECK(lapack_singular_values(unit_rows(j))(1) == doctest::Approx(smin));
  CHECK(r.smallest_singular_value == doctest::Approx(smin).epsilon(0.05));
  MatrixXd k(3, 2);
  k << 1e300, 1e-300, 1e-300, 1e-300, 1e-310, 0;
  r = check_licq(k);
  CAPTURE(fmt::format("{:f}", r));
  CHECK(r.result == verdict::fails);
  CHECK(r.rank == 2);
  CHECK(r.parallel_rows.size() == 1);  // rows 0 and 2: ratio 1e-610 is 0 in double
  // MFCQ and the affine Slater check on the same extremes: verdicts of the unscaled data.
  std::mt19937 rng(7);
  for (int trial = 0; trial < 12; ++trial) {
    CAPTURE(trial);
    const Eigen::Index n = 3;
    MatrixXd a = gaussian(4, n, rng);
    const double t_ref = glpk_margin(a, MatrixXd(0, n));  // the unscaled LP by GLPK
    const bool clear = t_ref >= 1e-3 || std::abs(t_ref) <= 1e-12;
    if (!clear) continue;
    MatrixXd scaled = a;
    for (Eigen::Index i = 0; i < a.rows(); ++i)
      scaled.row(i) *= trial % 2 ? power_of_ten(rng, -300, 300) : 1e-310 * (i + 1);  // subnormal rows
    CAPTURE(scaled);
    const mfcq_report m = check_mfcq(scaled);
    CAPTURE(fmt::format("{:f}", m));
    CHECK(m.result == (t_ref > 0 ? verdict::holds : verdict::fails));
    CHECK(m.margin == doctest::Approx(t_ref).epsilon(1e-6).scale(1));
  }
}

TEST_CASE("stress: the affine Slater check and check_slater with rows scaled to 1e+-300") {
  // x_1 + x_2 <= 1, -x_1 <= 0, -x_2 <= 0: a triangle with interior (hand-checkable); the same
  // with x_1 + x_2 >= 1 added has no interior (x_1 + x_2 = 1 on the whole set).
  MatrixXd a(3, 2);
  a << 1, 1, -1, 0, 0, -1;
  const VectorXd rl = VectorXd::Constant(3, -inf), ru = (VectorXd(3) << 1, 0, 0).finished();
  const VectorXd cl = VectorXd::Constant(2, -inf), cu = VectorXd::Constant(2, inf);
  // Row 0 (and the pinching row) scaled by f, bounds with them. The check divides each row by
  // its largest entry or bound before its LPs, so every f gives the verdicts of f = 1 (before,
  // the pinched pair was undecided at 1e-8 and even the triangle at 1e-200), except where a
  // bound reaches lp.infinity_threshold (1e20): such a bound counts as absent
  // (affine_slater_options), so at f = 1e200 and 1e300 the pinching row has no bound and the
  // interior is back.
  for (double f : {1.0, 1e8, 1e-8, 1e300, 1e-300, 1e-200, 1e200}) {
    CAPTURE(f);
    const bool absent = f >= 1e20;
    MatrixXd as = a;
    as.row(0) *= f;
    VectorXd rus = ru;
    rus(0) *= f;
    const auto r = check_affine_slater(as, rl, rus, cl, cu);
    CAPTURE(fmt::format("{:f}", r));
    CHECK(r.result == verdict::holds);
    MatrixXd pinched(4, 2);
    pinched << as, -f, -f;
    VectorXd rl4(4), ru4(4);
    rl4 << rl, -inf;
    ru4 << rus, -f;
    const auto p = check_affine_slater(pinched, rl4, ru4, cl, cu);
    CAPTURE(fmt::format("{:f}", p));
    if (absent) {
      CHECK(p.result == verdict::holds);
    } else {
      CHECK(p.result == verdict::fails);
      CHECK(p.feasible == feasibility::feasible);
      CHECK(p.implicit_equality_rows() == std::vector<Eigen::Index>{0, 3});
    }

    // As a convex callback model: x_1^2 + x_2^2 - 1 <= 0 scaled by f, with the triangle's
    // first row; x = (0.25, 0.25) is strictly inside both (hand-checkable).
    callback_model m;
    m.variables = 2;
    m.types = {ineq, ineq};
    m.kinds = {constraint_kind::convex, constraint_kind::affine};
    m.convex_model = true;
    m.constraint_values = [f](const VectorXd& x) {
      return VectorXd((VectorXd(2) << f * (x.squaredNorm() - 1), f * (x.sum() - 1)).finished());
    };
    m.constraint_jacobian = [f](const VectorXd& x) {
      return MatrixXd((MatrixXd(2, 2) << f * 2 * x(0), f * 2 * x(1), f, f).finished());
    };
    m.constraint_hessian = [f](const VectorXd&, Eigen::Index i) {
      return MatrixXd(i == 0 ? MatrixXd(2 * f * MatrixXd::Identity(2, 2)) : MatrixXd::Zero(2, 2));
    };
    slater_options o;
    o.start = (VectorXd(2) << 0.5, 0.5).finished();
    const auto s = check_slater(m, o);
    CAPTURE(fmt::format("{:f}", s));
    CHECK(s.result == verdict::holds);
    if (s.result == verdict::holds) {
      CHECK(s.point.squaredNorm() < 1);  // evaluated here, not by the library
      CHECK(s.point.sum() <= 1 + 1e-9);
    }
  }
}

TEST_CASE("stress: all rows parallel") {
  std::mt19937 rng(11);
  for (int trial = 0; trial < 16; ++trial) {
    CAPTURE(trial);
    const Eigen::Index n = 2 + trial % 5, m = 2 + trial % 4;
    const VectorXd v = gaussian(n, 1, rng).col(0);
    const bool opposed = trial % 2 == 1;
    MatrixXd j(m, n);
    for (Eigen::Index i = 0; i < m; ++i)
      // Powers of two scale exactly: the rows are parallel in every precision, not only to
      // double's rounding (long double would see 1e-16 of independence otherwise).
      j.row(i) = (opposed && i == m - 1 ? -1.0 : 1.0) *
                 std::ldexp(1.0, std::uniform_int_distribution<int>(-30, 30)(rng)) * v.transpose();
    CAPTURE(j);
    bool clear = false;
    CHECK(lapack_rank(j, clear) == 1);  // LAPACK: one direction
    CHECK(clear);
    const licq_report r = check_licq(j);
    CAPTURE(fmt::format("{:f}", r));
    CHECK(r.result == verdict::fails);
    CHECK(r.rank == 1);
    CHECK(r.dependencies.size() == std::size_t(m - 1));
    // Every dependent row is paired with some row: parallel, duplicate or opposed.
    for (const auto& d : r.dependencies) {
      const auto involves = [&](const std::vector<row_pair>& list) {
        return std::any_of(list.begin(), list.end(), [&](const row_pair& p) {
          return p.first == d.row || p.second == d.row;
        });
      };
      CHECK((involves(r.parallel_rows) || involves(r.duplicate_rows) || involves(r.opposed_rows)));
    }
    CHECK(r.opposed_rows.empty() == !opposed);
    // MFCQ: -v decreases every positive multiple (t* = |v|_1 / |v|_2 by GLPK); an opposed pair
    // is a positive dependence (t* = 0).
    const mfcq_report mf = check_mfcq(j);
    CAPTURE(fmt::format("{:f}", mf));
    const double t = glpk_margin(j, MatrixXd(0, n));
    CHECK(mf.result == (opposed ? verdict::fails : verdict::holds));
    CHECK(mf.margin == doctest::Approx(t).epsilon(1e-6).scale(1));
    if (!opposed) CHECK(t == doctest::Approx(std::min(1.0, v.lpNorm<1>() / v.norm())));
    // float and long double: the same verdict and rank.
    const licq_report rf = check_licq(Eigen::MatrixXf(j.cast<float>()));
    const licq_report rl = check_licq(Eigen::Matrix<long double, -1, -1>(j.cast<long double>()));
    CHECK(rf.result == verdict::fails);
    CHECK(rf.rank == 1);
    CHECK(rl.result == verdict::fails);
    CHECK(rl.rank == 1);
  }
}

TEST_CASE("stress: I + u v^T is singular exactly when v^T u = -1 (LAPACK on both sides)") {
  // det(I + u v^T) = 1 + v^T u (the matrix determinant lemma), so with v = -(1 + delta) u / u^T u
  // the matrix is singular at delta = 0 and sigma_min grows like |delta| (times a factor of
  // order one for these unit-scale u) beside it.
  std::mt19937 rng(5);
  int holds = 0, fails = 0;
  for (int trial = 0; trial < 8; ++trial) {
    const Eigen::Index n = 2 + trial;
    const VectorXd u = gaussian(n, 1, rng).col(0);
    for (double delta : {0.0, 1e-15, -1e-13, 1e-10, -1e-8, 1e-6, 1e-4, -1e-2, 0.5, 3.0}) {
      CAPTURE(n);
      CAPTURE(delta);
      const VectorXd v = -(1 + delta) * u / u.squaredNorm();
      const MatrixXd j = MatrixXd::Identity(n, n) + u * v.transpose();
      const double tau = double(n) * eps;
      const VectorXd s = lapack_singular_values(unit_rows(j));
      const double smin = s(n - 1);
      CAPTURE(smin);
      const licq_report r = check_licq(j);
      CAPTURE(fmt::format("{:f}", r));
      // Both sides against LAPACK: never holds where LAPACK sees sigma_min <= tau, never fails
      // where it sees sigma_min >= band * tau; in between undecided is allowed.
      if (smin <= tau) CHECK(r.result != verdict::holds);
      if (smin >= 10 * tau) CHECK(r.result != verdict::fails);
      if (smin <= tau / 10) CHECK(r.result == verdict::fails);
      if (smin >= 100 * tau) CHECK(r.result == verdict::holds);
      if (delta == 0) CHECK(r.result == verdict::fails);
      if (std::abs(delta) >= 1e-4) CHECK(r.result == verdict::holds);
      holds += r.result == verdict::holds;
      fails += r.result == verdict::fails;
      // float: its own threshold (n eps_float); the same rules against the double SVD, which
      // sees the float data exactly.
      const Eigen::MatrixXf jf = j.cast<float>();
      const double tau_f = double(n) * std::numeric_limits<float>::epsilon();
      const double smin_f = lapack_singular_values(unit_rows(jf.cast<double>()))(n - 1);
      const licq_report rf = check_licq(jf);
      CAPTURE(smin_f);
      CAPTURE(fmt::format("{:f}", rf));
      if (smin_f <= tau_f / 10) CHECK(rf.result == verdict::fails);
      if (smin_f >= 100 * tau_f) CHECK(rf.result == verdict::holds);
      // long double holds the double data exactly, but a matrix singular to double's rounding
      // (sigma_min ~ 1e-16) is not singular at long double's threshold (n * 1.1e-19): the
      // verdicts agree where double's is holds by a clear margin.
      const licq_report rl = check_licq(Eigen::Matrix<long double, -1, -1>(j.cast<long double>()));
      if (smin >= 100 * tau) CHECK(rl.result == verdict::holds);
    }
  }
  CHECK(holds >= 30);
  CHECK(fails >= 8);
}

TEST_CASE("stress: 1 x 1, 0 x N, N x 0 and 0 x 0 at every entry point") {
  using sparse = Eigen::SparseMatrix<double>;
  const std::vector<constraint_type> none;
  SUBCASE("check_licq, dense and sparse, with and without values") {
    for (double a : {3.0, -1e-300, 1e300, 0.0}) {
      CAPTURE(a);
      const MatrixXd j = MatrixXd::Constant(1, 1, a);
      // LAPACK: one singular value |a|; a row of norm 0 is a zero gradient.
      const verdict expected = lapack_singular_values(j)(0) > 0 ? verdict::holds : verdict::fails;
      CHECK(check_licq(j).result == expected);
      CHECK(check_licq(sparse(j.sparseView(0.0, 0.0))).result == expected);
      CHECK(check_licq(j, VectorXd::Zero(1), {ineq}).result == expected);
      CHECK(check_licq(sparse(j.sparseView(0.0, 0.0)), VectorXd::Zero(1), {ineq}).result == expected);
      const float af = float(a);  // 1e300 is +Inf in float, -1e-300 is -0
      CHECK(check_licq(Eigen::MatrixXf(j.cast<float>())).result ==
            (!std::isfinite(af) ? verdict::invalid_input : af != 0 ? verdict::holds : verdict::fails));
    }
    // 0 x N: no row, LICQ holds vacuously; N x 0 and 0 x 0: no variable, invalid input.
    CHECK(check_licq(MatrixXd(0, 3)).result == verdict::holds);
    CHECK(check_licq(sparse(0, 3)).result == verdict::holds);
    CHECK(check_licq(MatrixXd(0, 3), VectorXd(0), none).result == verdict::holds);
    CHECK(check_licq(sparse(0, 3), VectorXd(0), none).result == verdict::holds);
    for (Eigen::Index rows : {0, 2}) {
      CAPTURE(rows);
      CHECK(check_licq(MatrixXd(rows, 0)).result == verdict::invalid_input);
      CHECK(check_licq(sparse(rows, 0)).result == verdict::invalid_input);
      CHECK(check_licq(MatrixXd(rows, 0), VectorXd::Zero(rows),
                       std::vector<constraint_type>(std::size_t(rows), ineq))
                .result == verdict::invalid_input);
    }
    // Inf in float (1e300 cast) is named, not decided.
    CHECK(check_licq(Eigen::MatrixXf::Constant(1, 1, float(1e300))).result == verdict::invalid_input);
    CHECK(check_qualifications(MatrixXd(0, 2), VectorXd(0), none, {}).licq.result == verdict::holds);
    CHECK(check_qualifications(MatrixXd(1, 0), VectorXd::Zero(1), {ineq}, {constraint_kind::affine})
              .licq.result == verdict::invalid_input);
  }
  SUBCASE("check_mfcq, dense and sparse") {
    for (double a : {2.0, -1e-300, 0.0}) {
      CAPTURE(a);
      const MatrixXd j = MatrixXd::Constant(1, 1, a);
      // GLPK on the unit row (its own normalisation squares 1e-300 to 0): t* = 1 for a non-zero
      // row (d = -sign(a)); a zero gradient has t* = 0.
      const double t = a != 0 ? glpk_margin(unit_rows(j), MatrixXd(0, 1)) : 0.0;
      const verdict expected = t > 0 ? verdict::holds : verdict::fails;
      CHECK(check_mfcq(j).result == expected);
      CHECK(check_mfcq(sparse(j.sparseView(0.0, 0.0))).result == expected);
      // The same row as an equality: E of rank one by LAPACK (a != 0), no inequality.
      CHECK(check_mfcq(MatrixXd(0, 1), j).result == expected);
      CHECK(check_mfcq(sparse(0, 1), sparse(j.sparseView(0.0, 0.0))).result == expected);
    }
    CHECK(check_mfcq(MatrixXd(0, 3)).result == verdict::holds);
    CHECK(check_mfcq(MatrixXd(0, 3), MatrixXd(0, 3)).result == verdict::holds);
    CHECK(check_mfcq(sparse(0, 3), sparse(0, 3)).result == verdict::holds);
    CHECK(check_mfcq(MatrixXd(0, 0), MatrixXd(0, 0)).result == verdict::holds);  // nothing active
    for (Eigen::Index rows : {1, 3}) {
      CHECK(check_mfcq(MatrixXd(rows, 0)).result == verdict::invalid_input);
      CHECK(check_mfcq(MatrixXd(0, 0), MatrixXd(rows, 0)).result == verdict::invalid_input);
      CHECK(check_mfcq(sparse(rows, 0)).result == verdict::invalid_input);
    }
  }
  SUBCASE("check_affine_slater, dense and sparse") {
    // 2 x <= 1 alone (hand-checkable): x = 0 is strictly inside.
    const MatrixXd a = MatrixXd::Constant(1, 1, 2.0);
    const VectorXd lo = VectorXd::Constant(1, -inf), up = VectorXd::Constant(1, 1.0);
    CHECK(check_affine_slater(a, lo, up, lo, VectorXd::Constant(1, inf)).result == verdict::holds);
    CHECK(check_affine_slater(sparse(a.sparseView(0.0, 0.0)), lo, up, lo, VectorXd::Constant(1, inf))
              .result == verdict::holds);
    // 0 x N: the column bounds alone, -1 <= x <= 1 (interior) and 0 <= x <= 0 (fixed).
    const VectorXd none0(0);
    CHECK(check_affine_slater(MatrixXd(0, 2), none0, none0, VectorXd::Constant(2, -1.0),
                              VectorXd::Constant(2, 1.0))
              .result == verdict::holds);
    const auto fixed = check_affine_slater(MatrixXd(0, 1), none0, none0, VectorXd::Zero(1),
                                           VectorXd::Zero(1));
    CAPTURE(fmt::format("{:f}", fixed));
    CHECK(fixed.result != verdict::invalid_input);
    CHECK(fixed.fixed_columns == 1);
    // N x 0: a row without variables is the constant 0: -1 <= 0 <= 2 holds strictly, 1 <= 0
    // fails. Regression: this aborted on an Eigen assertion in Debug builds (the norm of an
    // empty row in slater_prepare), found under the sanitizers. An answer of invalid_input (no variable) is acceptable too; a wrong verdict or a
    // crash is not.
    for (double lower : {-1.0, 1.0}) {
      CAPTURE(lower);
      const auto r = check_affine_slater(MatrixXd(1, 0), VectorXd::Constant(1, lower),
                                         VectorXd::Constant(1, 2.0), none0, none0);
      CAPTURE(fmt::format("{:f}", r));
      CHECK((r.result == (lower < 0 ? verdict::holds : verdict::fails) ||
             r.result == verdict::invalid_input));
    }
    const auto empty = check_affine_slater(MatrixXd(0, 0), none0, none0, none0, none0);
    CAPTURE(fmt::format("{:f}", empty));
    CHECK((empty.result == verdict::holds || empty.result == verdict::invalid_input));
  }
  SUBCASE("check_slater") {
    callback_model m;
    m.variables = 1;
    m.convex_model = true;
    CHECK(check_slater(m).result == verdict::holds);  // no constraint: vacuous
    m.types = {ineq};
    m.kinds = {constraint_kind::convex};
    m.constraint_values = [](const VectorXd& x) { return VectorXd::Constant(1, x(0) * x(0) - 1); };
    m.constraint_jacobian = [](const VectorXd& x) { return MatrixXd::Constant(1, 1, 2 * x(0)); };
    const auto r = check_slater(m);  // x^2 <= 1: x = 0 is strictly inside (hand-checkable)
    CAPTURE(fmt::format("{:f}", r));
    CHECK(r.result == verdict::holds);
    if (r.result == verdict::holds) CHECK(r.point(0) * r.point(0) < 1);
    m.variables = 0;
    CHECK(check_slater(m).result == verdict::invalid_input);
  }
  SUBCASE("check_kkt") {
    model_at_point p;
    p.x = VectorXd::Constant(1, 1.0);
    p.objective_gradient = VectorXd::Constant(1, 2.0);
    p.jacobian = MatrixXd(0, 1);
    CHECK(check_kkt(p).result == verdict::fails);  // no constraint: grad f = 2 is not 0
    p.objective_gradient(0) = 0;
    CHECK(check_kkt(p).result == verdict::holds);
    // 1 x 1: min x s.t. -x <= 0 at x = 0 (hand-checkable): grad f = 1, y = 1.
    p.x(0) = 0;
    p.objective_gradient(0) = 1;
    p.jacobian = MatrixXd::Constant(1, 1, -1.0);
    p.values = VectorXd::Zero(1);
    p.types = {ineq};
    p.kinds = {constraint_kind::affine};
    const auto r = check_kkt(p);
    CAPTURE(fmt::format("{:f}", r));
    CHECK(r.result == verdict::holds);
    CHECK(r.multipliers(0) == doctest::Approx(1.0));
    model_at_point empty;  // x with no entry
    CHECK(check_kkt(empty).result == verdict::invalid_input);
    p.jacobian = MatrixXd(1, 0);
    CHECK(check_kkt(p).result == verdict::invalid_input);
  }
}

TEST_CASE("stress: float and long double give the verdicts of double on well-separated cases") {
  int compared = 0;
  for (unsigned seed = 1; seed <= 45; ++seed) {
    CAPTURE(seed);
    std::mt19937 rng(seed);
    std::srand(seed);
    const MatrixXd j = separated_case(int(seed % 3), rng);
    bool clear = false;
    const Eigen::Index rank = lapack_rank(j, clear);
    // Separated for float too: kept singular values >= 0.1 (far above 1000 n eps_float) or
    // exactly rank-deficient data (integers, exact in float).
    if (!clear) continue;
    ++compared;
    CAPTURE(j);
    const licq_report d = check_licq(j);
    const licq_report f = check_licq(Eigen::MatrixXf(j.cast<float>()));
    const licq_report l = check_licq(Eigen::Matrix<long double, -1, -1>(j.cast<long double>()));
    CAPTURE(fmt::format("{:f}", f));
    CHECK(d.rank == rank);
    CHECK(f.result == d.result);
    CHECK(l.result == d.result);
    CHECK(f.rank == rank);
    CHECK(l.rank == rank);
    // Thresholds scale with epsilon: max(m, n) eps of the scalar.
    const double dims = double(std::max(j.rows(), j.cols()));
    CHECK(f.threshold == doctest::Approx(dims * std::numeric_limits<float>::epsilon()));
    CHECK(l.threshold == doctest::Approx(dims * double(std::numeric_limits<long double>::epsilon())));
    // Sparse float and long double.
    const Eigen::SparseMatrix<float> sf = j.cast<float>().sparseView(0.0f, 0.0f);
    const Eigen::SparseMatrix<long double> sl = j.cast<long double>().sparseView(0.0L, 0.0L);
    CHECK(check_licq(sf).result == d.result);
    CHECK(check_licq(sl).result == d.result);
    // MFCQ takes any scalar and decides in double: float data give the double verdict.
    const mfcq_report md = check_mfcq(j), mf = check_mfcq(Eigen::MatrixXf(j.cast<float>()));
    if (std::abs(md.margin) <= 1e-12 || md.margin >= 1e-3) CHECK(mf.result == md.result);
  }
  CHECK(compared >= 30);
}

TEST_CASE("regression: MFCQ on subnormal rows is decided (was undecided: 1 / ||a_i|| overflowed)") {
  // Found by this file: rows of size 1e-310 made the unit rows A / ||a_i|| infinite (the
  // inverse norm 1e310 overflows), the LP refused them and MFCQ said undecided. Rows (1, 0),
  // (0, 1) scaled to 1e-310: d = (-1, -1) decreases both, t* = 1 (hand-checkable, and GLPK on
  // the unit rows); with (-1, -1) added, the three are positively dependent: t* = 0.
  MatrixXd a(2, 2);
  a << 1e-310, 0, 0, 2e-310;
  const mfcq_report holds = check_mfcq(a);
  CAPTURE(fmt::format("{:f}", holds));
  CHECK(holds.result == verdict::holds);
  CHECK(holds.margin == doctest::Approx(glpk_margin(unit_rows(a), MatrixXd(0, 2))));
  MatrixXd b(3, 2);
  b << a, -3e-310, -3e-310;
  const mfcq_report fails = check_mfcq(b);
  CAPTURE(fmt::format("{:f}", fails));
  CHECK(fails.result == verdict::fails);
  REQUIRE(fails.certificate.kind == mfcq_certificate_kind::positive_dependence);
  CHECK(fails.certificate.lambda.allFinite());
  CHECK(fails.certificate.lambda.sum() == doctest::Approx(1.0));
  // The dependence on the rows as given: 1e-310 lambda_0 = 3e-310 lambda_2 = 2e-310 lambda_1.
  CHECK(fails.certificate.lambda(0) == doctest::Approx(3 * fails.certificate.lambda(2)));
}

TEST_CASE("regression: a Farkas certificate on rows scaled by 1e8 and 1e-8 is kept") {
  // Found by tests/property_test.cpp (seeds 17 and 23, rows scaled 1e-8..1e8): the certificate
  // y of an infeasible system was cleaned of entries below 1e-7 ||y||_inf, but a row scaled by
  // c has its y_i divided by c, so the entry of a row scaled by 1e8 was dropped and the check
  // said undecided. x <= 0 (times 1e8) and x >= 1 (times 1e-8) have no common point
  // (hand-checkable): y = (1e-8, 1e8) up to scale.
  MatrixXd a(2, 1);
  a << 1e8, 1e-8;
  const VectorXd rl = (VectorXd(2) << -inf, 1e-8).finished(), ru = (VectorXd(2) << 0, inf).finished();
  const VectorXd free_lo = VectorXd::Constant(1, -inf), free_up = VectorXd::Constant(1, inf);
  const auto r = check_affine_slater(a, rl, ru, free_lo, free_up);
  CAPTURE(fmt::format("{:f}", r));
  CHECK(r.feasible == feasibility::infeasible);
  CHECK(r.result == verdict::fails);
  CHECK(r.certificate_rows == std::vector<Eigen::Index>{0, 1});
}

TEST_CASE("regression: a row whose 2-norm overflows is refused, not called a zero row") {
  // Found by tests/fuzz/fuzz_licq: (1.6e301, 1.8e308) has finite entries but ||g|| > DBL_MAX,
  // so the unit row g / ||g|| was 0 and LICQ said "fails: zero gradient" for a row of rank 1
  // (hand-checkable). Refused by both paths, by label, and by MFCQ.
  MatrixXd j(2, 2);
  j << 1, 0, 1.6e301, std::numeric_limits<double>::max();
  for (const licq_report& r : {check_licq(j, {}, {"a", "b"}),
                               check_licq(Eigen::SparseMatrix<double>(j.sparseView()), {},
                                          {"a", "b"})}) {
    CAPTURE(fmt::format("{:f}", r));
    CHECK(r.result == verdict::invalid_input);
    REQUIRE(r.findings.size() == 1);
    CHECK(r.findings[0].code == "row_norm_overflow");
    CHECK(r.message.find("b has finite entries") != std::string::npos);
  }
  CHECK(check_mfcq(j).result == verdict::invalid_input);
  // float overflows at 3.4e38: its own range decides.
  const Eigen::MatrixXf f = (Eigen::MatrixXf(1, 2) << 3e38f, 3e38f).finished();
  CHECK(check_licq(f).result == verdict::invalid_input);
  CHECK(check_licq(Eigen::SparseMatrix<float>(f.sparseView())).result == verdict::invalid_input);
  CHECK(check_licq(j.bottomRows(1) / 4).result == verdict::holds);  // a scaled row is accepted
}

TEST_CASE("regression: an equality dependence between a subnormal row and 5 has a finite mu") {
  // Found by tests/fuzz/fuzz_mfcq: E = (-6d, 5, 6, 6, -d)^T with d the smallest subnormal, one
  // column. The first dependence read "5 = -inf * (-6d)" and mu was NaN; the certificate now
  // takes a dependence with finite coefficients, here -d = (1/6)(-6d) (hand-checkable).
  const double d = std::numeric_limits<double>::denorm_min();
  const MatrixXd e = (MatrixXd(5, 1) << -6 * d, 5, 6, 6, -d).finished();
  const mfcq_report r = check_mfcq(MatrixXd(0, 1), e);
  CAPTURE(fmt::format("{:f}", r));
  CHECK(r.result == verdict::fails);
  REQUIRE(r.certificate.kind == mfcq_certificate_kind::equality_dependence);
  CHECK(r.certificate.mu.allFinite());
  CHECK(r.certificate.mu.lpNorm<1>() == doctest::Approx(1.0));
  CHECK(r.certificate.residual <= 1e-12);
}

TEST_CASE("regression: A x overflowing at the LP's point is not a verified feasible point") {
  // Found by tests/fuzz/fuzz_slater: 3.6e307 x0 = -15 with x0 fixed at -15 is infeasible
  // (hand-checkable: 3.6e307 * -15 != -15), but A x overflowed to -inf, the violation was NaN
  // and the point passed. Never "holds"; the same row scaled by 1e-7 is infeasible outright.
  const VectorXd rl = VectorXd::Constant(1, -15), cl = (VectorXd(2) << -15, 10).finished();
  for (double big : {3.5953862697246315e307, 3.6e300}) {
    const MatrixXd a = (MatrixXd(1, 2) << big, 0).finished();
    const auto r = check_affine_slater(a, rl, rl, cl, cl);
    CAPTURE(fmt::format("{:f}", r));
    CHECK(r.result != verdict::holds);
    CHECK(r.feasible != feasibility::feasible);
  }
}
