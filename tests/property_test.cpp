// qualify tests: properties of the verdicts on seeded random models: invariance under row
// scaling and permutations, duplicates always caught, LICQ => MFCQ, certificates that verify.
// SPDX-License-Identifier: MIT
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <limits>
#include <numeric>
#include <optional>
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
using qualify_test::normalise_rows;

namespace {

// Every test below runs on a fixed list of seeds, so a run is deterministic; each failure
// prints its seed (CAPTURE). QUALIFY_PROPERTY_SEED=<seed> runs that seed alone.
std::vector<unsigned> seeds(unsigned count) {
  if (const char* one = std::getenv("QUALIFY_PROPERTY_SEED"))
    return {unsigned(std::strtoul(one, nullptr, 10))};
  std::vector<unsigned> out(count);
  std::iota(out.begin(), out.end(), 1u);
  return out;
}

Index uniform_index(std::mt19937& rng, Index lo, Index hi) {
  return std::uniform_int_distribution<Index>(lo, hi)(rng);
}
double uniform(std::mt19937& rng, double lo, double hi) {
  return std::uniform_real_distribution<double>(lo, hi)(rng);
}

/// Positive factors 10^u, u uniform in [-8, 8]: sixteen orders of magnitude.
VectorXd random_scales(Index m, std::mt19937& rng) {
  VectorXd s(m);
  for (Index i = 0; i < m; ++i) s(i) = std::pow(10.0, uniform(rng, -8, 8));
  return s;
}

std::vector<Index> random_permutation(Index m, std::mt19937& rng) {
  std::vector<Index> p(std::size_t(m), 0);
  std::iota(p.begin(), p.end(), Index(0));
  std::shuffle(p.begin(), p.end(), rng);
  return p;
}

std::vector<Index> identity(Index m) {
  std::vector<Index> p(std::size_t(m), 0);
  std::iota(p.begin(), p.end(), Index(0));
  return p;
}

/// Row k of the result is scale(k) * row perm[k] of m.
MatrixXd rows_of(const MatrixXd& m, const std::vector<Index>& perm, const VectorXd& scale) {
  MatrixXd out(m.rows(), m.cols());
  for (Index k = 0; k < m.rows(); ++k) out.row(k) = scale(k) * m.row(perm[std::size_t(k)]);
  return out;
}

/// Column k of the result is column perm[k] of m.
MatrixXd cols_of(const MatrixXd& m, const std::vector<Index>& perm) {
  return m(Eigen::all, perm);
}

/// m with a copy of row `from` inserted at position `at` (rows at >= at move down one).
MatrixXd with_row_copy(const MatrixXd& m, Index from, Index at) {
  MatrixXd out(m.rows() + 1, m.cols());
  for (Index i = 0, k = 0; i <= m.rows(); ++i) {
    if (i == at)
      out.row(i) = m.row(from);
    else
      out.row(i) = m.row(k++);
  }
  return out;
}

MatrixXd stack(const MatrixXd& top, const MatrixXd& bottom) {
  MatrixXd out(top.rows() + bottom.rows(), top.cols());
  out << top, bottom;
  return out;
}

/// Small integers: combinations with integer coefficients are exact in every precision, so a
/// dependence built from them is exact, not a rounding-level one.
MatrixXd integer_matrix(Index m, Index n, std::mt19937& rng) {
  MatrixXd a(m, n);
  for (Index i = 0; i < a.size(); ++i) a.data()[i] = double(uniform_index(rng, -4, 4));
  return a;
}

/// The rule for a transformed problem: when the reference puts the case far from every
/// threshold ("clear"), the verdict must not change. Otherwise the transformed data round
/// differently, and a figure within the undecided band may cross its edge: a verdict may then
/// move between holds or fails and undecided, but holds and fails never swap.
void check_same_verdict(verdict base, verdict other, bool clear) {
  if (clear) {
    CHECK(other == base);
  } else {
    CHECK_FALSE((base == verdict::holds && other == verdict::fails));
    CHECK_FALSE((base == verdict::fails && other == verdict::holds));
  }
}

bool has_finding(const std::vector<finding>& findings, const std::string& code,
                 std::vector<Index> rows) {
  std::sort(rows.begin(), rows.end());
  return std::any_of(findings.begin(), findings.end(), [&](const finding& f) {
    std::vector<Index> r = f.rows;
    std::sort(r.begin(), r.end());
    return f.code == code && r == rows;
  });
}

bool has_pair(const std::vector<row_pair>& pairs, Index a, Index b) {
  const Index lo = std::min(a, b), hi = std::max(a, b);
  return std::any_of(pairs.begin(), pairs.end(),
                     [&](const row_pair& p) { return p.first == lo && p.second == hi; });
}

// ------------------------------------------------------------------------------------------
// LICQ

/// A random Jacobian and what LAPACK's SVD of its unit rows says about it.
struct licq_case {
  MatrixXd j;
  bool clear = false;  ///< LAPACK's singular values leave a wide gap at the threshold
  verdict expected = verdict::undecided;
  Index rank = -1;  ///< LAPACK's rank of the unit rows when clear
};

/// sigma_rank >= 100 * band * tau and sigma_{rank+1} <= tau, tau = max(m, n) * eps, the
/// library's default threshold (licq_options): a gap wide enough that rounding of the
/// transformed data cannot close it.
Index clear_rank(const MatrixXd& j, bool& clear) {
  const double tau = double(std::max(j.rows(), j.cols())) * std::numeric_limits<double>::epsilon();
  const VectorXd s = lapack_singular_values(normalise_rows(j));
  Index r = 0;
  while (r < s.size() && s(r) > tau) ++r;
  clear = (r == 0 || s(r - 1) >= 100 * 10 * tau) && (r == s.size() || s(r) <= tau);
  return r;
}

licq_case random_licq_case(unsigned seed, std::mt19937& rng) {
  licq_case c;
  const Index n = uniform_index(rng, 1, 8);
  switch (seed % 4) {
    case 0: {  // full row rank, singular values in [0.1, 1]
      const Index m = uniform_index(rng, 1, n);
      VectorXd sigma(m);
      for (Index i = 0; i < m; ++i) sigma(i) = uniform(rng, 0.1, 1);
      c.j = qualify_test::with_singular_values(m, n, sigma, rng);
      break;
    }
    case 1: {  // exact rank r < m: integer factors
      const Index m = uniform_index(rng, 2, 9);
      const Index r = uniform_index(rng, 1, std::min(m - 1, n));
      c.j = integer_matrix(m, r, rng) * integer_matrix(r, n, rng);
      for (Index i = 0; i < m; ++i)  // no zero row: those have their own test
        if (c.j.row(i).norm() == 0) c.j(i, uniform_index(rng, 0, n - 1)) = 1;
      break;
    }
    case 2:  // more rows than variables
      c.j = gaussian(n + uniform_index(rng, 1, 4), n, rng);
      break;
    default: {  // one small singular value anywhere from 1e-17 to 1e-5: often borderline
      const Index m = uniform_index(rng, 1, n);
      VectorXd sigma = VectorXd::Ones(m);
      sigma(m - 1) = std::pow(10.0, uniform(rng, -17, -5));
      c.j = qualify_test::with_singular_values(m, n, sigma, rng);
    }
  }
  bool clear = false;
  const Index r = clear_rank(c.j, clear);
  const Index m = c.j.rows();
  if (m > n) {  // fails by structure; the rank itself must still be clear to compare it
    c.clear = true;
    c.expected = verdict::fails;
    c.rank = clear ? r : -1;
  } else if (clear) {
    c.clear = true;
    c.expected = r == m ? verdict::holds : verdict::fails;
    c.rank = r;
  }
  return c;
}

/// What a report claims about its rows, checked on the data: each dependent row's
/// explanation has the residual it states.
void check_licq_claims(const licq_report& r, const MatrixXd& j) {
  for (const auto& dep : r.dependencies) {
    VectorXd w = j.row(dep.row).transpose();
    for (const auto& t : dep.terms) w -= t.coefficient * j.row(t.row).transpose();
    const double norm = j.row(dep.row).stableNorm();
    if (norm == 0) continue;
    CHECK(std::abs(w.stableNorm() / norm - dep.residual) <= 1e-9 + 1e-6 * dep.residual);
    if (r.result == verdict::fails) CHECK(dep.residual <= 1e-9);
  }
}

TEST_CASE("property: LICQ verdicts agree with LAPACK and do not move under scaling or "
          "permutation") {
  int clear_cases = 0;
  for (unsigned seed : seeds(120)) {
    CAPTURE(seed);
    std::mt19937 rng(seed);
    const licq_case c = random_licq_case(seed, rng);
    const Index m = c.j.rows(), n = c.j.cols();
    CAPTURE(c.j);
    const licq_report base = check_licq(c.j);
    CAPTURE(fmt::format("{:f}", base));
    check_licq_claims(base, c.j);
    if (c.clear) {
      ++clear_cases;
      CHECK(base.result == c.expected);  // LAPACK's SVD on the unit rows
      if (c.rank >= 0) CHECK(base.rank == c.rank);
    }
    const VectorXd scale = random_scales(m, rng);
    const auto row_perm = random_permutation(m, rng);
    const auto col_perm = random_permutation(n, rng);
    const VectorXd ones = VectorXd::Ones(m);
    // Which rows are named dependent is not compared: licq.hpp names the latest row of a
    // dependence only when the exchange keeps the residuals small (orient_dependencies), so a
    // small coefficient can leave an earlier row named (seed 93), and scaling can change that
    // choice (seed 46). The count, the rank and each explanation's residual are compared.
    struct variant {
      std::string name;
      MatrixXd j;
    };
    const variant variants[] = {
        {"scaled rows", rows_of(c.j, identity(m), scale)},
        {"permuted rows", rows_of(c.j, row_perm, ones)},
        {"permuted columns", cols_of(c.j, col_perm)},
        {"all three", cols_of(rows_of(c.j, row_perm, scale), col_perm)},
    };
    for (const auto& v : variants) {
      CAPTURE(v.name);
      const licq_report r = check_licq(v.j);
      CAPTURE(fmt::format("{:f}", r));
      check_same_verdict(base.result, r.result, c.clear);
      check_licq_claims(r, v.j);
      if (c.clear && c.rank >= 0) {
        CHECK(r.rank == base.rank);
        CHECK(r.dependencies.size() == base.dependencies.size());
      }
    }
  }
  // The generator must exercise what it claims (not a test that cannot fail).
  CHECK(clear_cases >= 60);
}

TEST_CASE("property: an exact duplicate row is always caught and named") {
  for (unsigned seed : seeds(120)) {
    CAPTURE(seed);
    std::mt19937 rng(seed);
    const licq_case c = random_licq_case(seed, rng);
    const Index m = c.j.rows();
    const Index from = uniform_index(rng, 0, m - 1), at = uniform_index(rng, 0, m);
    const MatrixXd j = with_row_copy(c.j, from, at);
    const Index original = from < at ? from : from + 1;  // where row `from` went
    CAPTURE(j);
    const licq_report r = check_licq(j);
    CAPTURE(fmt::format("{:f}", r));
    CHECK(r.result == verdict::fails);
    CHECK(has_pair(r.duplicate_rows, original, at));
    CHECK(has_finding(r.findings, "duplicate_rows", {original, at}));
    // The same with the copy scaled by a positive factor: a parallel (or duplicate) pair.
    const double factor = std::pow(10.0, uniform(rng, -8, 8));
    MatrixXd scaled = j;
    scaled.row(at) *= factor;
    const licq_report s = check_licq(scaled);
    CAPTURE(fmt::format("{:f}", s));
    CHECK(s.result == verdict::fails);
    CHECK((has_pair(s.parallel_rows, original, at) || has_pair(s.duplicate_rows, original, at)));
  }
}

// ------------------------------------------------------------------------------------------
// MFCQ

struct mfcq_case {
  MatrixXd a, e;
  bool clear = false;
  verdict expected = verdict::undecided;
};

/// MFCQ's default threshold on t* (mfcq_options: 10 * the LP's 1e-8 tolerances) and band.
constexpr double mfcq_tau = 1e-7, mfcq_band = 10;

mfcq_case random_mfcq_case(unsigned seed, std::mt19937& rng) {
  mfcq_case c;
  const Index n = uniform_index(rng, 2, 7);
  const Index me = uniform_index(rng, 0, n - 2);
  switch (seed % 4) {
    case 0: {  // a direction d decreases every a_i by a fixed share and keeps E d = 0
      const VectorXd d = gaussian(n, 1, rng).col(0).normalized();
      c.a = gaussian(uniform_index(rng, 1, 2 * n), n, rng);
      for (Index i = 0; i < c.a.rows(); ++i) {
        const VectorXd g = c.a.row(i).transpose();
        const VectorXd perp = g - g.dot(d) * d;
        c.a.row(i) = (perp - uniform(rng, 0.3, 2) * (1 + perp.norm()) * d).transpose();
      }
      c.e = gaussian(me, n, rng);
      for (Index j = 0; j < me; ++j) c.e.row(j) -= c.e.row(j).dot(d) * d.transpose();
      break;
    }
    case 1: {  // a positive dependence: the last row is -(sum lambda_i a_i + sum mu_j e_j)
      c.a = integer_matrix(uniform_index(rng, 1, n), n, rng);
      c.e = integer_matrix(me, n, rng);
      VectorXd minus = VectorXd::Zero(n);
      for (Index i = 0; i < c.a.rows(); ++i)
        if (i == 0 || rng() % 2) minus -= double(uniform_index(rng, 1, 3)) * c.a.row(i).transpose();
      for (Index j = 0; j < me; ++j) minus -= double(uniform_index(rng, -2, 2)) * c.e.row(j).transpose();
      if (minus.norm() == 0) minus(0) = 1;  // a zero combination: use another row (rare)
      c.a.conservativeResize(c.a.rows() + 1, n);
      c.a.row(c.a.rows() - 1) = minus.transpose();
      break;
    }
    case 2: {  // equality gradients exactly dependent
      c.a = gaussian(uniform_index(rng, 0, n), n, rng);
      c.e = integer_matrix(std::max<Index>(me, 1) + 1, n, rng);
      c.e.row(c.e.rows() - 1) = c.e.row(0) - 2 * c.e.row(c.e.rows() - 2);
      if (c.e.row(c.e.rows() - 1).norm() == 0) c.e.row(c.e.rows() - 1) = c.e.row(0);
      break;
    }
    default:  // Gaussian: anything, sometimes near the threshold
      c.a = gaussian(uniform_index(rng, 1, 2 * n), n, rng);
      c.e = gaussian(me, n, rng);
  }
  // The reference: LAPACK's SVD for the rank of E, GLPK's simplex for t*.
  bool e_clear = true;
  const Index e_rank = c.e.rows() > 0 ? clear_rank(c.e, e_clear) : 0;
  if (!e_clear) return c;
  if (e_rank < c.e.rows()) {
    c.clear = true;
    c.expected = verdict::fails;
    return c;
  }
  if (c.a.rows() == 0) {
    c.clear = true;
    c.expected = verdict::holds;
    return c;
  }
  const double t = glpk_margin(c.a, c.e);
  if (t >= 1e3 * mfcq_tau) {
    c.clear = true;
    c.expected = verdict::holds;
  } else if (std::abs(t) <= 1e-3 * mfcq_tau) {
    c.clear = true;
    c.expected = verdict::fails;
  }
  return c;
}

/// Every claim of an MFCQ report recomputed here from the data: the direction, both kinds of
/// certificate, and LICQ on [A; E] implying MFCQ.
void check_mfcq_claims(const mfcq_report& r, const MatrixXd& a, const MatrixXd& e) {
  const Index n = a.cols();
  if (r.result == verdict::holds && a.rows() > 0) {
    REQUIRE(r.direction.size() == n);
    const VectorXd d = r.direction;
    CHECK(d.lpNorm<Eigen::Infinity>() == doctest::Approx(1.0));
    CHECK(VectorXd(normalise_rows(a) * d).maxCoeff() <= -mfcq_band * mfcq_tau);
    if (e.rows() > 0)
      CHECK(VectorXd(normalise_rows(e) * d).lpNorm<Eigen::Infinity>() <= mfcq_tau);
  }
  const auto& c = r.certificate;
  if (c.kind == mfcq_certificate_kind::positive_dependence) {
    REQUIRE(c.lambda.size() == a.rows());
    REQUIRE(c.mu.size() == e.rows());
    CHECK(c.lambda.minCoeff() >= 0);
    CHECK(c.lambda.sum() == doctest::Approx(1.0));
    // The residual as documented (mfcq_certificate), on the data as given.
    const double residual = qualify_test::certificate_residual(a, e, c.lambda, c.mu);
    CHECK(std::abs(residual - c.residual) <= 1e-12 + 1e-6 * c.residual);
    if (r.result == verdict::fails) {
      // The proof that t* <= tau: on unit rows with sum lambda = 1, ||A^T l + E^T m||_1 bounds
      // t* (mfcq_certificate::margin_bound), recomputed here.
      VectorXd lu(a.rows()), mu(e.rows());
      for (Index i = 0; i < a.rows(); ++i) lu(i) = c.lambda(i) * a.row(i).norm();
      for (Index j = 0; j < e.rows(); ++j) mu(j) = c.mu(j) * e.row(j).norm();
      const double total = lu.sum();
      REQUIRE(total > 0);
      const VectorXd ru =
          (normalise_rows(a).transpose() * lu + normalise_rows(e).transpose() * mu) / total;
      CHECK(ru.lpNorm<1>() <= mfcq_tau);
    }
  } else if (c.kind == mfcq_certificate_kind::equality_dependence) {
    CHECK(c.mu.lpNorm<1>() == doctest::Approx(1.0));
    double size = 0;
    for (Index j = 0; j < e.rows(); ++j) size += std::abs(c.mu(j)) * e.row(j).norm();
    CHECK(VectorXd(e.transpose() * c.mu).norm() <= 1e-9 * size);
  }
  if (r.result == verdict::fails) CHECK(c.kind != mfcq_certificate_kind::none);
  // LICQ on [A; E] (by the library, itself checked against LAPACK above) implies MFCQ.
  if (check_licq(stack(a, e)).result == verdict::holds) CHECK(r.result == verdict::holds);
  if (r.licq && r.licq->result == verdict::holds) CHECK(r.result == verdict::holds);
}

TEST_CASE("property: MFCQ verdicts agree with GLPK, certificates verify, LICQ implies MFCQ, "
          "and scaling or permutation changes nothing") {
  int clear_cases = 0, holds = 0, fails = 0;
  for (unsigned seed : seeds(80)) {
    CAPTURE(seed);
    std::mt19937 rng(seed);
    const mfcq_case c = random_mfcq_case(seed, rng);
    const Index ma = c.a.rows(), me = c.e.rows(), n = c.a.cols();
    CAPTURE(c.a);
    CAPTURE(c.e);
    const mfcq_report base = check_mfcq(c.a, c.e);
    CAPTURE(fmt::format("{:f}", base));
    check_mfcq_claims(base, c.a, c.e);
    if (c.clear) {
      ++clear_cases;
      CHECK(base.result == c.expected);
    }
    holds += base.result == verdict::holds;
    fails += base.result == verdict::fails;

    const auto pa = random_permutation(ma, rng), pe = random_permutation(me, rng);
    const auto pc = random_permutation(n, rng);
    const VectorXd sa = random_scales(ma, rng), se = random_scales(me, rng);
    const VectorXd oa = VectorXd::Ones(ma), oe = VectorXd::Ones(me);
    struct variant {
      std::string name;
      MatrixXd a, e;
    };
    const variant variants[] = {
        {"scaled rows", rows_of(c.a, identity(ma), sa), rows_of(c.e, identity(me), se)},
        {"permuted rows", rows_of(c.a, pa, oa), rows_of(c.e, pe, oe)},
        {"permuted columns", cols_of(c.a, pc), cols_of(c.e, pc)},
        {"all three", cols_of(rows_of(c.a, pa, sa), pc), cols_of(rows_of(c.e, pe, se), pc)},
    };
    for (const auto& v : variants) {
      CAPTURE(v.name);
      const mfcq_report r = check_mfcq(v.a, v.e);
      CAPTURE(fmt::format("{:f}", r));
      check_same_verdict(base.result, r.result, c.clear);
      check_mfcq_claims(r, v.a, v.e);
      // t* is a property of the unit rows: the same LP up to its 1e-8 tolerances.
      if (c.clear && base.lp == lp_status::optimal && r.lp == lp_status::optimal)
        CHECK(std::abs(r.margin - base.margin) <= 1e-6);
    }

    // A duplicated inequality changes nothing (the same direction decreases both copies; a
    // dependence stays one); a duplicated equality makes E rank-deficient: MFCQ fails.
    if (ma > 0) {
      const MatrixXd a2 = with_row_copy(c.a, uniform_index(rng, 0, ma - 1), uniform_index(rng, 0, ma));
      const mfcq_report r = check_mfcq(a2, c.e);
      CAPTURE(fmt::format("{:f}", r));
      check_same_verdict(base.result, r.result, c.clear);
      check_mfcq_claims(r, a2, c.e);
    }
    if (me > 0) {
      const Index from = uniform_index(rng, 0, me - 1), at = uniform_index(rng, 0, me);
      const MatrixXd e2 = with_row_copy(c.e, from, at);
      const mfcq_report r = check_mfcq(c.a, e2);
      CAPTURE(fmt::format("{:f}", r));
      CHECK(r.result == verdict::fails);
      REQUIRE(r.equality_licq);
      CHECK(has_pair(r.equality_licq->duplicate_rows, from < at ? from : from + 1, at));
      check_mfcq_claims(r, c.a, e2);
    }
  }
  CHECK(clear_cases >= 50);
  CHECK(holds >= 15);
  CHECK(fails >= 15);
}

// ------------------------------------------------------------------------------------------
// Slater on affine systems: row_lower <= A x <= row_upper, col_lower <= x <= col_upper

struct affine_case {
  MatrixXd a;
  VectorXd rl, ru, cl, cu;
  verdict expected = verdict::holds;
  bool infeasible = false;
  std::vector<Index> implicit;  ///< rows tight on the whole feasible set, by construction
};

constexpr double inf = std::numeric_limits<double>::infinity();

/// Rows with O(1) slack around a point x_s; kind 1 adds a row -sum_S lambda_i a_i <= -sum
/// lambda_i u_i with the rows of S at their upper bound at x_s, which pins every row of S
/// and itself (they are implicit equalities, and no other row is); kind 2 moves that bound
/// by 0.5, so nothing is feasible.
affine_case random_affine_case(unsigned seed, std::mt19937& rng) {
  affine_case c;
  const Index n = uniform_index(rng, 2, 6), m = uniform_index(rng, 1, 7);
  c.a = gaussian(m, n, rng);
  const VectorXd xs = gaussian(n, 1, rng).col(0);
  const VectorXd ax = c.a * xs;
  c.rl.resize(m);
  c.ru.resize(m);
  for (Index i = 0; i < m; ++i) {
    c.rl(i) = rng() % 3 == 0 ? -inf : ax(i) - uniform(rng, 0.5, 2);
    c.ru(i) = rng() % 3 == 0 ? inf : ax(i) + uniform(rng, 0.5, 2);
  }
  c.cl = VectorXd::Constant(n, -inf);
  c.cu = VectorXd::Constant(n, inf);
  for (Index j = 0; j < n; ++j)
    if (rng() % 2) c.cl(j) = xs(j) - uniform(rng, 0.5, 2), c.cu(j) = xs(j) + uniform(rng, 0.5, 2);
  const unsigned kind = seed % 3;
  if (kind == 0) return c;
  std::vector<Index> s;
  VectorXd row = VectorXd::Zero(n);
  double bound = 0;
  for (Index i = 0; i < m; ++i) {
    if (!(i == 0 || rng() % 2)) continue;
    const double lambda = uniform(rng, 0.5, 2);
    c.ru(i) = ax(i);
    row -= lambda * c.a.row(i).transpose();
    bound -= lambda * ax(i);
    s.push_back(i);
  }
  c.a.conservativeResize(m + 1, n);
  c.a.row(m) = row.transpose();
  c.rl.conservativeResize(m + 1);
  c.ru.conservativeResize(m + 1);
  c.rl(m) = -inf;
  c.ru(m) = bound - (kind == 2 ? 0.5 * (1 + std::abs(bound)) : 0.0);
  c.expected = verdict::fails;
  if (kind == 2) {
    c.infeasible = true;
  } else {
    c.implicit = s;
    c.implicit.push_back(m);
  }
  return c;
}

/// The report's claims on the data: a strict point is strictly inside every inequality side
/// (relative slack as affine_slater_options defines it, >= band * tol), a Farkas vector
/// proves infeasibility.
void check_affine_claims(const affine_slater_report& r, const affine_case& c) {
  const affine_slater_options o;
  if (r.result == verdict::holds) {
    REQUIRE(r.strict_point.size() == c.a.cols());
    const VectorXd x = r.strict_point, ax = c.a * x;
    double least = inf;
    for (Index i = 0; i < c.a.rows(); ++i) {
      const double norm = c.a.row(i).norm();
      if (c.rl(i) == c.ru(i)) continue;
      if (std::isfinite(c.rl(i))) least = std::min(least, (ax(i) - c.rl(i)) / (norm + std::abs(c.rl(i))));
      if (std::isfinite(c.ru(i))) least = std::min(least, (c.ru(i) - ax(i)) / (norm + std::abs(c.ru(i))));
    }
    for (Index j = 0; j < x.size(); ++j) {
      if (std::isfinite(c.cl(j))) least = std::min(least, (x(j) - c.cl(j)) / (1 + std::abs(c.cl(j))));
      if (std::isfinite(c.cu(j))) least = std::min(least, (c.cu(j) - x(j)) / (1 + std::abs(c.cu(j))));
    }
    CHECK(least >= o.undecided_band * o.slack_tolerance);
  }
  if (r.feasible == feasibility::infeasible) {
    // Every feasible x has y^T (A x) >= inf over the row bounds of y^T r (lower), and
    // y^T A x = z^T x <= sup over the column bounds (upper): lower > upper is impossible.
    // Entries of z below 1e-7 (|A|^T |y|)_j are rounding (a relative perturbation of A).
    REQUIRE(r.farkas.size() == c.a.rows());
    const VectorXd y = r.farkas, z = c.a.transpose() * y;
    const VectorXd size = c.a.cwiseAbs().transpose() * y.cwiseAbs();
    double upper = 0, terms = 0;
    for (Index j = 0; j < z.size(); ++j) {
      if (std::abs(z(j)) <= 1e-7 * size(j)) continue;
      const double b = z(j) > 0 ? c.cu(j) : c.cl(j);
      REQUIRE(std::isfinite(b));
      upper += z(j) * b;
      terms += std::abs(z(j) * b);
    }
    double lower = 0;
    for (Index i = 0; i < y.size(); ++i) {
      if (y(i) == 0) continue;
      const double b = y(i) > 0 ? c.rl(i) : c.ru(i);
      REQUIRE(std::isfinite(b));
      lower += y(i) * b;
      terms += std::abs(y(i) * b);
    }
    CHECK(lower - upper > 1e-7 * terms);
  }
}

/// The rows of an implicit-equality list, mapped through `to_original`.
std::vector<Index> implicit_rows(const affine_slater_report& r, const std::vector<Index>& to_original) {
  std::vector<Index> out;
  for (Index i : r.implicit_equality_rows()) out.push_back(to_original[std::size_t(i)]);
  std::sort(out.begin(), out.end());
  out.erase(std::unique(out.begin(), out.end()), out.end());
  return out;
}

TEST_CASE("property: affine Slater verdicts, implicit equalities and certificates are "
          "invariant and verify") {
  for (unsigned seed : seeds(45)) {
    CAPTURE(seed);
    std::mt19937 rng(seed);
    const affine_case c = random_affine_case(seed, rng);
    const Index m = c.a.rows(), n = c.a.cols();
    CAPTURE(c.a);
    const auto base = check_affine_slater(c.a, c.rl, c.ru, c.cl, c.cu);
    CAPTURE(fmt::format("{:f}", base));
    // The construction is the reference: a point with O(1) slacks, or the pinching row.
    CHECK(base.result == c.expected);
    CHECK((base.feasible == feasibility::infeasible) == c.infeasible);
    CHECK(base.refined_slater == (c.infeasible ? verdict::fails : verdict::holds));
    if (!c.infeasible) CHECK(implicit_rows(base, identity(m)) == c.implicit);
    check_affine_claims(base, c);

    // Scaled rows (bounds with them), permuted rows, permuted columns.
    const VectorXd s = random_scales(m, rng);
    const auto pr = random_permutation(m, rng), pc = random_permutation(n, rng);
    for (int variant = 0; variant < 3; ++variant) {
      CAPTURE(variant);
      affine_case t = c;
      std::vector<Index> to_original = identity(m);
      if (variant == 0) {
        t.a = rows_of(c.a, identity(m), s);
        t.rl = c.rl.cwiseProduct(s);
        t.ru = c.ru.cwiseProduct(s);
      } else if (variant == 1) {
        t.a = rows_of(c.a, pr, VectorXd::Ones(m));
        t.rl = c.rl(pr);
        t.ru = c.ru(pr);
        to_original = pr;
      } else {
        t.a = cols_of(c.a, pc);
        t.cl = c.cl(pc);
        t.cu = c.cu(pc);
      }
      const auto r = check_affine_slater(t.a, t.rl, t.ru, t.cl, t.cu);
      CAPTURE(fmt::format("{:f}", r));
      CHECK(r.result == base.result);
      CHECK(r.feasible == base.feasible);
      CHECK(implicit_rows(r, to_original) == implicit_rows(base, identity(m)));
      check_affine_claims(r, t);
    }

    // A duplicated row changes no verdict; a copy of a pinched row is pinched too.
    const Index from = uniform_index(rng, 0, m - 1), at = uniform_index(rng, 0, m);
    affine_case d = c;
    d.a = with_row_copy(c.a, from, at);
    const auto copy_vec = [&](const VectorXd& v) {
      VectorXd out(m + 1);
      for (Index i = 0, k = 0; i <= m; ++i) out(i) = i == at ? v(from) : v(k++);
      return out;
    };
    d.rl = copy_vec(c.rl);
    d.ru = copy_vec(c.ru);
    const auto r = check_affine_slater(d.a, d.rl, d.ru, d.cl, d.cu);
    CAPTURE(fmt::format("{:f}", r));
    CHECK(r.result == base.result);
    CHECK(r.feasible == base.feasible);
    check_affine_claims(r, d);
    if (!c.infeasible) {
      std::vector<Index> old_of_new(std::size_t(m + 1));
      for (Index i = 0, k = 0; i <= m; ++i) old_of_new[std::size_t(i)] = i == at ? from : k++;
      // The copy makes the implicit-equality LPs degenerate and their optimum noisier: an
      // implicit row may come out undecided (seed 22), never strict, and no other row implicit.
      const std::vector<Index> found = implicit_rows(r, old_of_new);
      std::vector<Index> open;
      for (const auto& b : r.undecided_rows) open.push_back(old_of_new[std::size_t(b.index)]);
      for (Index k : found) CHECK(std::count(c.implicit.begin(), c.implicit.end(), k) == 1);
      for (Index k : c.implicit) {
        CAPTURE(k);
        CHECK(std::count(found.begin(), found.end(), k) + std::count(open.begin(), open.end(), k) >
              0);
      }
    }
  }
}

// ------------------------------------------------------------------------------------------
// Slater on convex callback models: rows c_i(x) = 1/2 x^T Q_i x + q_i . x + s_i

struct quad_row {
  MatrixXd q2;  ///< Q_i, positive semidefinite (zero for an affine row)
  VectorXd q1;
  double q0 = 0;
  constraint_type type = constraint_type::inequality;
  constraint_kind kind = constraint_kind::convex;
  double value(const VectorXd& x) const { return 0.5 * x.dot(q2 * x) + q1.dot(x) + q0; }
  VectorXd gradient(const VectorXd& x) const { return q2 * x + q1; }
};

struct quad_model {
  Index n = 0;
  std::vector<quad_row> rows;
  callback_model callbacks() const {
    callback_model m;
    m.variables = n;
    m.convex_model = true;
    for (const auto& r : rows) {
      m.types.push_back(r.type);
      m.kinds.push_back(r.kind);
    }
    const auto copy = rows;
    m.constraint_values = [copy](const VectorXd& x) {
      VectorXd v(Index(copy.size()));
      for (std::size_t i = 0; i < copy.size(); ++i) v(Index(i)) = copy[i].value(x);
      return v;
    };
    m.constraint_jacobian = [copy, n = n](const VectorXd& x) {
      MatrixXd j(Index(copy.size()), n);
      for (std::size_t i = 0; i < copy.size(); ++i) j.row(Index(i)) = copy[i].gradient(x).transpose();
      return j;
    };
    m.constraint_hessian = [copy](const VectorXd&, Index i) { return copy[std::size_t(i)].q2; };
    return m;
  }
};

/// A ball-like convex row 1/2 (x - c)^T Q (x - c) - r.
quad_row ellipsoid(const MatrixXd& q, const VectorXd& centre, double r) {
  return {q, -q * centre, 0.5 * centre.dot(q * centre) - r};
}

struct slater_case {
  quad_model model;
  verdict expected = verdict::holds;
  std::vector<Index> pinching;  ///< the rows a failure must name (a subset of them)
};

/// Kind 0: convex rows with value -U(0.5, 2) at a point x_s, affine rows with slack U(0, 1)
/// there (0 for some: refined Slater lets affine rows be tight), an affine equality through
/// x_s. Kind 1: the same plus a row 1/2 (x - p)^T Q (x - p) <= 0 (its minimum is 0: no strict
/// point) with every other row strict at p. Kind 2: two unit discs touching at one point.
slater_case random_slater_case(unsigned seed, std::mt19937& rng) {
  slater_case c;
  const Index n = uniform_index(rng, 2, 4);
  c.model.n = n;
  const auto pd = [&] {
    const MatrixXd b = gaussian(n, n, rng);
    return MatrixXd(b * b.transpose() + 0.5 * MatrixXd::Identity(n, n));
  };
  const auto random_point = [&] { return VectorXd(VectorXd::Random(n)); };
  std::srand(seed);  // VectorXd::Random draws from std::rand
  const VectorXd xs = random_point();
  auto& rows = c.model.rows;
  const unsigned kind = seed % 3;
  if (kind == 2) {
    const VectorXd u = gaussian(n, 1, rng).col(0).normalized();
    const MatrixXd two = 2 * MatrixXd::Identity(n, n);
    rows.push_back(ellipsoid(two, xs + u, 1));  // |x - xs - u|^2 <= 1
    rows.push_back(ellipsoid(two, xs - u, 1));  // touches the first only at xs
    c.expected = verdict::fails;
    c.pinching = {0, 1};
  }
  const Index convex = uniform_index(rng, 1, 3), affine = uniform_index(rng, 0, 3);
  for (Index i = 0; i < convex; ++i) {
    const MatrixXd q = pd();
    const VectorXd centre = random_point();
    const double at_xs = 0.5 * (xs - centre).dot(q * (xs - centre));
    rows.push_back(ellipsoid(q, centre, at_xs + uniform(rng, 0.5, 2)));
  }
  for (Index i = 0; i < affine; ++i) {
    const VectorXd a = gaussian(n, 1, rng).col(0);
    const double slack = i == 0 ? 0.0 : uniform(rng, 0, 1);
    rows.push_back({MatrixXd::Zero(n, n), a, -a.dot(xs) - slack, constraint_type::inequality,
                    constraint_kind::affine});
  }
  if (rng() % 2) {
    const VectorXd a = gaussian(n, 1, rng).col(0);
    rows.push_back({MatrixXd::Zero(n, n), a, -a.dot(xs), constraint_type::equality,
                    constraint_kind::affine});
  }
  if (kind == 1) {  // pinched at xs: the other rows are strict (or affine) there
    rows.push_back(ellipsoid(pd(), xs, 0));
    c.expected = verdict::fails;
    c.pinching = {Index(rows.size()) - 1};
  }
  return c;
}

/// The report's claims on the model's own rows, evaluated here: a Slater point is strictly
/// inside the convex rows and meets the others; a failure's dual certificate phi = sum_i
/// y_i c_i / w_i is a convex quadratic whose minimum over R^n (computed here) is >= -tau, so
/// no point has every convex row at c_i / w_i < -tau while the affine rows hold.
void check_slater_claims(const slater_report& r, const quad_model& m) {
  const slater_options o;
  const Index k = Index(m.rows.size());
  if (r.result == verdict::holds) {
    REQUIRE(r.point.size() == m.n);
    const VectorXd& x = r.point;
    for (Index i = 0; i < k; ++i) {
      const auto& row = m.rows[std::size_t(i)];
      const double v = row.value(x);
      const double size = 1 + row.gradient(x).cwiseAbs().dot(x.cwiseAbs()) + std::abs(row.q0);
      CAPTURE(i);
      CAPTURE(v);
      if (row.type == constraint_type::equality)
        CHECK(std::abs(v) <= o.feasibility_tolerance * size);
      else if (row.kind == constraint_kind::affine)
        CHECK(v <= o.feasibility_tolerance * size);
      else
        CHECK(v < 0);
    }
  }
  if (r.result == verdict::fails && r.feasible == feasibility::feasible) {
    REQUIRE(r.multipliers.size() == k);
    REQUIRE(r.weights.size() == k);
    MatrixXd h = MatrixXd::Zero(m.n, m.n);
    VectorXd g = VectorXd::Zero(m.n);
    double c0 = 0, convex_sum = 0;
    for (Index i = 0; i < k; ++i) {
      const auto& row = m.rows[std::size_t(i)];
      const double y = r.multipliers(i) / r.weights(i);
      if (row.type == constraint_type::inequality) CHECK(r.multipliers(i) >= 0);
      if (row.kind == constraint_kind::convex) convex_sum += r.multipliers(i);
      h += y * row.q2;
      g += y * row.q1;
      c0 += y * row.q0;
    }
    CHECK(convex_sum == doctest::Approx(1.0));
    const VectorXd x = Eigen::CompleteOrthogonalDecomposition<MatrixXd>(h).solve(-g);
    // A minimiser exists when the gradient vanishes there (else phi is unbounded below on
    // R^n and the certificate holds only within its proof radius: not the case here).
    REQUIRE(VectorXd(h * x + g).norm() <= 1e-8 * (1 + g.norm()));
    const double least = 0.5 * x.dot(h * x) + g.dot(x) + c0;
    CHECK(least >= -o.margin_tolerance);
  }
}

/// The same model with row i multiplied by scale(i), rows in order perm, variables in order
/// vperm (x_new(k) = x(vperm[k])).
quad_model transformed(const quad_model& m, const VectorXd& scale, const std::vector<Index>& perm,
                       const std::vector<Index>& vperm) {
  quad_model out;
  out.n = m.n;
  for (std::size_t k = 0; k < perm.size(); ++k) {
    quad_row r = m.rows[std::size_t(perm[k])];
    const double s = scale(Index(k));
    r.q2 = s * MatrixXd(r.q2(vperm, vperm));
    r.q1 = s * VectorXd(r.q1(vperm));
    r.q0 *= s;
    out.rows.push_back(r);
  }
  return out;
}

TEST_CASE("property: Slater verdicts on convex models are invariant, Slater points are strictly "
          "feasible, dual certificates verify") {
  int pinched = 0, pinched_decided = 0;
  for (unsigned seed : seeds(36)) {
    CAPTURE(seed);
    std::mt19937 rng(seed);
    const slater_case c = random_slater_case(seed, rng);
    const Index k = Index(c.model.rows.size()), n = c.model.n;
    const slater_report base = check_slater(c.model.callbacks());
    CAPTURE(fmt::format("{:f}", base));
    // The construction is the reference: every convex row is <= -0.5 at x_s (relative to
    // weights of order 1..100, s* <= -5e-3): holds, clear. Or a row's minimum is exactly 0,
    // s* = 0: the phase one must then prove s* >= -tau. On these pinched models it often
    // stalls before it can (its centring stops gaining, with 500 Newton steps or 20000:
    // seeds 1, 5, 7, 11, 14 among others) and says undecided: honest, and counted below, but
    // a pinched model is not a clear case, so its transforms are held only to the rule that
    // holds and fails never swap. It must never say holds.
    const bool clear = c.expected == verdict::holds;
    if (clear) {
      CHECK(base.result == verdict::holds);
    } else {
      ++pinched;
      pinched_decided += base.result == verdict::fails;
      CHECK(base.result != verdict::holds);
    }
    CHECK(base.feasible != feasibility::infeasible);
    check_slater_claims(base, c.model);
    if (base.result == verdict::fails)
      for (Index i : base.pinching)
        CHECK(std::find(c.pinching.begin(), c.pinching.end(), i) != c.pinching.end());

    const VectorXd s = random_scales(k, rng), ones = VectorXd::Ones(k);
    const auto pr = random_permutation(k, rng), pv = random_permutation(n, rng);
    struct variant {
      std::string name;
      quad_model model;
    };
    const variant variants[] = {
        {"scaled rows", transformed(c.model, s, identity(k), identity(n))},
        {"permuted rows", transformed(c.model, ones, pr, identity(n))},
        {"permuted variables", transformed(c.model, ones, identity(k), pv)},
    };
    // Regression: seed 30, scaled rows, held but said undecided when the phase one started at
    // t = 1 from a point with s = 4.5e5 (500 damped Newton steps at t = 1); it now starts
    // with t = 1 / s.
    for (const auto& v : variants) {
      CAPTURE(v.name);
      const slater_report r = check_slater(v.model.callbacks());
      CAPTURE(fmt::format("{:f}", r));
      check_same_verdict(base.result, r.result, clear);
      check_slater_claims(r, v.model);
    }
    // A duplicated row (convex or affine) changes nothing.
    quad_model dup = c.model;
    dup.rows.insert(dup.rows.begin() + std::ptrdiff_t(uniform_index(rng, 0, k)),
                    c.model.rows[std::size_t(uniform_index(rng, 0, k - 1))]);
    const slater_report r = check_slater(dup.callbacks());
    CAPTURE(fmt::format("{:f}", r));
    check_same_verdict(base.result, r.result, clear);
    check_slater_claims(r, dup);
  }
  MESSAGE(pinched_decided, " of ", pinched, " pinched models decided");
  CHECK(pinched_decided * 4 >= pinched);  // measured: 9 of 24 (not to fall further)
}

// ------------------------------------------------------------------------------------------
// KKT at a point

struct kkt_case {
  model_at_point p;
  VectorXd y;  ///< the multipliers the construction used (kind 0)
  verdict expected = verdict::holds;
};

/// Active rows with random gradients and multipliers (inequalities > 0), inactive rows at
/// -U(0.5, 2), grad f = -J^T y: a KKT point (kind 0). Kind 1 adds to grad f a unit vector
/// orthogonal to every active gradient, which no multipliers can cancel: stationarity fails.
kkt_case random_kkt_case(unsigned seed, std::mt19937& rng) {
  kkt_case c;
  const Index n = uniform_index(rng, 2, 6);
  const bool broken = seed % 2 == 1;
  const Index active = uniform_index(rng, 0, broken ? n - 1 : n), inactive = uniform_index(rng, 0, 3);
  const Index m = active + inactive;
  auto& p = c.p;
  p.x = gaussian(n, 1, rng).col(0);
  p.jacobian = gaussian(m, n, rng);
  p.values = VectorXd::Zero(m);
  c.y = VectorXd::Zero(m);
  for (Index i = 0; i < m; ++i) {
    const bool eq = i < active && rng() % 3 == 0;
    p.types.push_back(eq ? constraint_type::equality : constraint_type::inequality);
    p.kinds.push_back(constraint_kind::nonlinear);
    if (i < active)
      c.y(i) = eq ? uniform(rng, -2, 2) : uniform(rng, 0.1, 2);
    else
      p.values(i) = -uniform(rng, 0.5, 2);
  }
  p.objective_gradient = -p.jacobian.transpose() * c.y;
  if (broken) {
    const MatrixXd ja = p.jacobian.topRows(active);
    VectorXd v = gaussian(n, 1, rng).col(0);
    if (active > 0) v -= ja.transpose() * Eigen::CompleteOrthogonalDecomposition<MatrixXd>(ja.transpose()).solve(v);
    p.objective_gradient += v.normalized();
    c.expected = verdict::fails;
  }
  return c;
}

/// The residuals of a report recomputed from its multipliers and the point (kkt_options
/// defines them); holds needs each within its threshold, recomputed here too.
void check_kkt_claims(const kkt_report& r, const model_at_point& p) {
  const kkt_options o;
  const Index m = p.values.size();
  REQUIRE(r.multipliers.size() == m);
  const VectorXd& y = r.multipliers;
  const double st = (p.objective_gradient + p.jacobian.transpose() * y).lpNorm<Eigen::Infinity>();
  const double scale_f = std::max(1.0, p.objective_gradient.lpNorm<Eigen::Infinity>());
  CHECK(std::abs(st - r.stationarity.raw) <= 1e-12 * (scale_f + y.lpNorm<Eigen::Infinity>()));
  double negative = 0, product = 0, violation = 0;
  for (Index i = 0; i < m; ++i) {
    const double norm = std::max(1.0, p.jacobian.row(i).norm());
    if (p.types[std::size_t(i)] == constraint_type::equality) {
      violation = std::max(violation, std::abs(p.values(i)) / norm);
      continue;
    }
    violation = std::max(violation, std::max(0.0, p.values(i)) / norm);
    negative = std::max(negative, -y(i));
    product = std::max(product, std::abs(y(i) * p.values(i)));
  }
  CHECK(std::abs(product - r.complementarity.raw) <= 1e-12 * (1 + product));
  CHECK(violation == doctest::Approx(r.primal.scaled));
  if (r.result == verdict::holds) {
    const double sd =
        m > 0 ? std::max(o.multiplier_scale_cap, y.lpNorm<1>() / double(m)) / o.multiplier_scale_cap : 1.0;
    CHECK(st / sd <= o.stationarity_tolerance * scale_f);
    CHECK(negative / std::max(1.0, m > 0 ? y.lpNorm<Eigen::Infinity>() : 0.0) <= o.dual_tolerance);
    CHECK(product / sd <= o.complementarity_tolerance * scale_f);
    CHECK(violation <= o.activity.activity_tolerance);
  }
  // LICQ on the active rows makes the multipliers unique.
  if (r.licq.result == verdict::holds && r.result == verdict::holds)
    CHECK(r.multipliers_unique == verdict::holds);
}

/// The point with row i multiplied by scale(i) (value and gradient), rows in order perm,
/// variables in order vperm.
model_at_point transformed(const model_at_point& p, const VectorXd& scale,
                           const std::vector<Index>& perm, const std::vector<Index>& vperm) {
  model_at_point out = p;
  out.x = p.x(vperm);
  out.objective_gradient = p.objective_gradient(vperm);
  out.jacobian = cols_of(rows_of(p.jacobian, perm, scale), vperm);
  for (std::size_t k = 0; k < perm.size(); ++k) {
    out.values(Index(k)) = scale(Index(k)) * p.values(perm[k]);
    out.types[k] = p.types[std::size_t(perm[k])];
    out.kinds[k] = p.kinds[std::size_t(perm[k])];
  }
  return out;
}

TEST_CASE("property: KKT verdicts are invariant, residuals recompute, duplicates are named") {
  for (unsigned seed : seeds(60)) {
    CAPTURE(seed);
    std::mt19937 rng(seed);
    const kkt_case c = random_kkt_case(seed, rng);
    const Index m = c.p.values.size(), n = c.p.x.size();
    CAPTURE(c.p.jacobian);
    const kkt_report base = check_kkt(c.p);
    CAPTURE(fmt::format("{:f}", base));
    // The construction is the reference: exact multipliers exist (kind 0), or a unit residual
    // orthogonal to every active gradient is left whatever the multipliers (kind 1).
    CHECK(base.result == c.expected);
    check_kkt_claims(base, c.p);
    if (c.expected == verdict::holds) {
      const kkt_report given = check_kkt(c.p, c.y);
      CAPTURE(fmt::format("{:f}", given));
      CHECK(given.result == verdict::holds);
      check_kkt_claims(given, c.p);
    }

    // Scaling rows is not neutral for check_kkt, by its documented rules: an inactive row
    // scaled by 1e-8 can become active (the activity test is absolute for gradients of norm
    // below 1: activity_options, s_i = max(1, ||g_i||)), and the multipliers of a row scaled
    // by c are divided by c, which moves s_d = max(s_max, ||y||_1 / m) / s_max, the divisor of
    // the stationarity residual (kkt_options; seed 53: a residual of 0.728 that fails becomes
    // undecided once s_d = 2e4). Required here: a KKT point stays one, and the least
    // stationarity residual (bounded least squares on the same active set) does not move.
    const VectorXd s = random_scales(m, rng), ones = VectorXd::Ones(m);
    const auto pr = random_permutation(m, rng), pv = random_permutation(n, rng);
    const model_at_point scaled = transformed(c.p, s, identity(m), identity(n));
    const kkt_report rs = check_kkt(scaled);
    CAPTURE(fmt::format("{:f}", rs));
    if (base.result == verdict::holds) CHECK(rs.result == verdict::holds);
    if (rs.active.active == base.active.active)
      CHECK(std::abs(rs.stationarity_norm - base.stationarity_norm) <=
            1e-9 * (1 + c.p.objective_gradient.norm()));
    check_kkt_claims(rs, scaled);
    for (const auto& t : {transformed(c.p, ones, pr, identity(n)), transformed(c.p, ones, identity(m), pv)}) {
      const kkt_report r = check_kkt(t);
      CAPTURE(fmt::format("{:f}", r));
      CHECK(r.result == base.result);
      CHECK(r.classification == base.classification);
      CHECK(r.multipliers_unique == base.multipliers_unique);
      check_kkt_claims(r, t);
    }

    // A duplicated active row: still a KKT point, LICQ fails and names the pair.
    const Index active = Index(base.active.active.size());
    if (active > 0) {
      const Index from = base.active.active[std::size_t(uniform_index(rng, 0, active - 1))];
      const Index at = uniform_index(rng, 0, m);
      model_at_point d = c.p;
      d.jacobian = with_row_copy(c.p.jacobian, from, at);
      d.values = with_row_copy(MatrixXd(c.p.values), from, at).col(0);
      d.types.insert(d.types.begin() + std::ptrdiff_t(at), c.p.types[std::size_t(from)]);
      d.kinds.insert(d.kinds.begin() + std::ptrdiff_t(at), c.p.kinds[std::size_t(from)]);
      const kkt_report r = check_kkt(d);
      CAPTURE(fmt::format("{:f}", r));
      CHECK(r.result == base.result);
      CHECK(r.licq.result == verdict::fails);
      CHECK(has_pair(r.licq.duplicate_rows, from < at ? from : from + 1, at));
      check_kkt_claims(r, d);
    }
  }
}

}  // namespace
