// qualify tests: MFCQ verdicts, margins and certificates against GLPK and published examples.
// SPDX-License-Identifier: MIT
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <qualify/doctest.hpp>
#include <qualify/json.hpp>
#include <qualify/mfcq.hpp>
#include <random>

#include "mfcq_reference.hpp"
#include "reference.hpp"
#include "sparse_cases.hpp"

using namespace qualify;
using Eigen::MatrixXd;
using Eigen::VectorXd;
using qualify_test::gaussian;
using qualify_test::glpk_margin;
using qualify_test::normalise_rows;
using qualify_test::sparse_rows;

namespace {

bool has_code(const mfcq_report& r, const std::string& code) {
  return std::any_of(r.findings.begin(), r.findings.end(),
                     [&](const finding& f) { return f.code == code; });
}

/// What a report claims, checked on the data here: a holding verdict's direction decreases
/// every inequality and keeps the equalities; a certificate is a positive dependence.
template <class Matrix>
void check_claims(const mfcq_report& r, const Matrix& a, const Matrix& e) {
  if (r.result == verdict::holds && a.rows() > 0) {
    REQUIRE(r.direction.size() == a.cols());
    CHECK(VectorXd(a * r.direction).maxCoeff() < 0);
    CHECK(r.direction.lpNorm<Eigen::Infinity>() == doctest::Approx(1.0));
    if (e.rows() > 0)
      CHECK(VectorXd(normalise_rows(e) * r.direction).lpNorm<Eigen::Infinity>() <= 1e-12);
  }
  if (r.certificate.kind == mfcq_certificate_kind::positive_dependence) {
    const auto& c = r.certificate;
    CHECK(c.lambda.minCoeff() >= 0);
    CHECK(c.lambda.sum() == doctest::Approx(1.0));
    const double residual = qualify_test::certificate_residual(a, e, c.lambda, c.mu);
    CHECK(residual <= 1e-9);
    CHECK(std::abs(residual - c.residual) <= 1e-12);
    for (Index i : c.ineq_rows) CHECK(c.lambda(i) > 0);
  }
}

}  // namespace

TEST_CASE("complementarity constraints violate MFCQ at every feasible point") {
  // Scheel and Scholtes, "Mathematical programs with complementarity constraints: stationarity,
  // optimality, and sensitivity", Math. Oper. Res. 25 (2000): x1 >= 0, x2 >= 0, x1 x2 <= 0,
  // written -x1 <= 0, -x2 <= 0, x1 x2 <= 0 with gradients (-1, 0), (0, -1), (x2, x1).
  SUBCASE("at (0, 0) all three are active and x1 x2 has a zero gradient") {
    MatrixXd a(3, 2);
    a << -1, 0, 0, -1, 0, 0;
    const auto rep = check_mfcq(a, {}, {"x1_nonneg", "x2_nonneg", "product"});
    QUALIFY_CHECK_FAILS(rep);
    CHECK(has_code(rep, "zero_gradient"));
    CHECK(rep.certificate.ineq_rows == std::vector<Index>{2});
    CHECK(rep.margin == 0);
    check_claims(rep, a, MatrixXd(0, 2));
  }
  SUBCASE("at (1, 0): -x2 <= 0 and x1 x2 <= 0 are active, gradients (0, -1) and (0, 1)") {
    MatrixXd a(2, 2);
    a << 0, -1, 0, 1;
    const auto rep = check_mfcq(a);
    QUALIFY_CHECK_FAILS(rep);
    CHECK(rep.certificate.kind == mfcq_certificate_kind::positive_dependence);
    CHECK(rep.certificate.ineq_rows == std::vector<Index>{0, 1});
    CHECK(std::abs(rep.margin) <= 1e-7);  // hand-checked: d2 <= -t and -d2 <= -t force t <= 0
    check_claims(rep, a, MatrixXd(0, 2));
  }
}

TEST_CASE("the Kuhn-Tucker cusp: MFCQ fails with lambda = (1/2, 1/2)") {
  // Kuhn and Tucker, "Nonlinear programming", Proc. 2nd Berkeley Symposium (1951): min -x1
  // s.t. x2 - (1 - x1)^3 <= 0, -x2 <= 0; at x* = (1, 0) the gradients are (0, 1), (0, -1),
  // and (0,1)/2 + (0,-1)/2 = 0 is the only normalised positive dependence (hand-checked).
  MatrixXd a(2, 2);
  a << 0, 1, 0, -1;
  const auto rep = check_mfcq(a, {}, {"cusp", "floor"});
  QUALIFY_CHECK_FAILS(rep);
  REQUIRE(rep.certificate.lambda.size() == 2);
  CHECK(rep.certificate.lambda(0) == doctest::Approx(0.5).epsilon(1e-9));
  CHECK(rep.certificate.lambda(1) == doctest::Approx(0.5).epsilon(1e-9));
  CHECK(rep.certificate.residual <= 1e-12);
  CHECK(rep.message.find("positively dependent on 2 inequalities") != std::string::npos);
  const auto it = std::find_if(rep.findings.begin(), rep.findings.end(),
                               [](const finding& f) { return f.code == "positive_dependence"; });
  REQUIRE(it != rep.findings.end());
  CHECK(it->labels == std::vector<std::string>{"cusp", "floor"});
  check_claims(rep, a, MatrixXd(0, 2));
  // LICQ fails here too (opposed rows): the finding of the combined check says so.
  REQUIRE(rep.licq);
  CHECK(rep.licq->result == verdict::fails);
}

TEST_CASE("three lines through a point: LICQ fails, MFCQ holds, and the report explains it") {
  // -x1 <= 0, -x2 <= 0, -x1 - x2 <= 0 at 0: three gradients in the plane are dependent, but
  // d = (1, 1) decreases all three (hand-checked: slopes -1, -1, -2), so t* = 1 (the cap).
  MatrixXd a(3, 2);
  a << -1, 0, 0, -1, -1, -1;
  const auto rep = check_mfcq(a);
  QUALIFY_CHECK_HOLDS(rep);
  CHECK(rep.margin == doctest::Approx(1.0).epsilon(1e-7));
  CHECK(rep.margin == doctest::Approx(glpk_margin(a, MatrixXd(0, 2))).epsilon(1e-7));  // GLPK
  REQUIRE(rep.licq);
  CHECK(rep.licq->result == verdict::fails);
  CHECK(has_code(rep, "mfcq_without_licq"));
  CHECK(rep.message.find("LICQ fails: multipliers are bounded but need not be unique") !=
        std::string::npos);
  check_claims(rep, a, MatrixXd(0, 2));
}

TEST_CASE("a duplicated equality gradient is a rank failure, explained by check_licq") {
  // Hand-checkable: e_1 = e_0, so mu = (1/2, -1/2) gives E^T mu = 0.
  MatrixXd a(1, 3), e(2, 3);
  a << 1, 0, 0;
  e << 0, 1, 1, 0, 1, 1;
  const auto rep = check_mfcq(a, e, {}, {"g", "h", "h_again"});
  QUALIFY_CHECK_FAILS(rep);
  CHECK(has_code(rep, "equality_rank_deficient"));
  CHECK(has_code(rep, "duplicate_rows"));
  REQUIRE(rep.equality_licq);
  CHECK(rep.equality_licq->rank == 1);
  CHECK(rep.certificate.kind == mfcq_certificate_kind::equality_dependence);
  CHECK(rep.certificate.eq_rows == std::vector<Index>{0, 1});
  CHECK(rep.certificate.residual <= 1e-15);
  CHECK(std::abs(rep.certificate.mu(0) + rep.certificate.mu(1)) <= 1e-15);
  CHECK(rep.message.find("equality gradients are linearly dependent") != std::string::npos);
  // The direction part still holds: d = (-1, 0, 0) keeps both equalities.
  CHECK(rep.margin == doctest::Approx(glpk_margin(a, e)).epsilon(1e-7));
}

TEST_CASE("equalities written as two opposed inequalities fail MFCQ") {
  // A classic modelling slip (common practice, no source): h(x) = 0 as h <= 0 and -h <= 0.
  std::mt19937 rng(3);
  MatrixXd a = gaussian(4, 6, rng);
  a.row(3) = -a.row(1);
  const auto rep = check_mfcq(a);
  QUALIFY_CHECK_FAILS(rep);
  CHECK(rep.certificate.ineq_rows == std::vector<Index>{1, 3});
  check_claims(rep, a, MatrixXd(0, 6));
}

TEST_CASE("t* agrees with GLPK's simplex on seeded random cases; LICQ holds implies MFCQ holds") {
  std::mt19937 rng(20261202);
  std::uniform_int_distribution<int> pick(0, 3);
  int held = 0, failed = 0, licq_held = 0;
  for (int trial = 0; trial < 60; ++trial) {
    const Index n = 3 + trial % 9;
    const Index me = trial % 3 == 0 ? 0 : std::min<Index>(n - 1, 1 + trial % 3);
    const Index ma = 1 + pick(rng) + (trial % 4 == 0 ? 2 * n : 0);  // some with ma > n
    MatrixXd a = gaussian(ma, n, rng);
    const MatrixXd e = gaussian(me, n, rng);
    if (trial % 5 == 1 && ma >= 2) {
      // Built to be positively dependent: the last row is -(positive mix of the others),
      // plus an equality term, so that 0 = sum lambda_i a_i + E^T mu with lambda > 0.
      VectorXd w = VectorXd::NullaryExpr(ma - 1, [&] { return 0.5 + double(pick(rng)); });
      Eigen::RowVectorXd last = -(w.transpose() * a.topRows(ma - 1));
      if (me > 0) last += gaussian(1, me, rng) * e;
      a.row(ma - 1) = last;
    }
    if (trial % 7 == 3) a.row(0) *= 1e6;  // scaling a constraint changes nothing
    const auto rep = check_mfcq(a, e);
    CAPTURE(trial);
    CAPTURE(fmt::format("{:f}", rep));
    const double ref = glpk_margin(a, e);
    REQUIRE(std::isfinite(ref));
    CHECK(std::abs(rep.margin - ref) <= 1e-7);  // GLPK simplex on the same LP
    CHECK(rep.result != verdict::undecided);
    CHECK(rep.result == (ref > 1e-6 ? verdict::holds : verdict::fails));
    check_claims(rep, a, e);
    if (rep.licq && rep.licq->result == verdict::holds) {
      ++licq_held;
      QUALIFY_CHECK_HOLDS(rep);  // LICQ implies MFCQ (Mangasarian and Fromovitz, 1967)
    }
    held += rep.result == verdict::holds;
    failed += rep.result == verdict::fails;
  }
  // The generator must exercise both outcomes and the LICQ tie, or the comparison says little.
  CHECK(held > 10);
  CHECK(failed > 10);
  CHECK(licq_held > 5);
}

TEST_CASE("verdicts and t* do not change when a row is scaled by 1e-8 or 1e8") {
  std::mt19937 rng(5);
  MatrixXd a = gaussian(5, 4, rng);
  const auto base = check_mfcq(a);
  for (double s : {1e-8, 1e8}) {
    MatrixXd scaled = a;
    scaled.row(2) *= s;
    const auto rep = check_mfcq(scaled);
    QUALIFY_CHECK_VERDICT(rep, base.result);
    CHECK(rep.margin == doctest::Approx(base.margin).epsilon(1e-7));
  }
}

TEST_CASE("a margin inside the band is undecided, above it holds, below it fails") {
  // Rows (1, 0) and (-1, -s): nearly opposed, so t* is small, about s / 2 (hand-checked:
  // d = (-t, 1) gives t <= s / (1 + sqrt(1 + s^2))); its value is taken from GLPK.
  MatrixXd a(2, 2);
  const double s = 1e-5;
  a << 1, 0, -1, -s;
  const double ref = glpk_margin(a, MatrixXd(0, 2));  // GLPK simplex
  REQUIRE(ref > 0);
  mfcq_options options;
  options.relative_threshold = ref / 3;  // (tau, 10 tau) is the undecided zone
  auto rep = check_mfcq(a, options);
  QUALIFY_CHECK_VERDICT(rep, verdict::undecided);
  CHECK(rep.margin == doctest::Approx(ref).epsilon(1e-6));
  options.relative_threshold = ref / 20;
  QUALIFY_CHECK_HOLDS(check_mfcq(a, options));
  options.relative_threshold = ref * 3;  // the dual bound equals t* <= tau: proven to fail
  rep = check_mfcq(a, options);
  QUALIFY_CHECK_FAILS(rep);
  CHECK(rep.certificate.margin_bound >= ref * (1 - 1e-6));  // a valid upper bound on t*
}

TEST_CASE("no rows at all: MFCQ holds vacuously; equalities alone need full rank") {
  const auto none = check_mfcq(MatrixXd(0, 3), MatrixXd(0, 3));
  QUALIFY_CHECK_HOLDS(none);
  CHECK(none.message.find("vacuously") != std::string::npos);
  CHECK(check_mfcq(MatrixXd(0, 0)).result == verdict::holds);

  MatrixXd e(2, 3);
  e << 1, 0, 0, 0, 1, 0;
  const auto eq_only = check_mfcq(MatrixXd(0, 3), e);
  QUALIFY_CHECK_HOLDS(eq_only);
  MatrixXd e_bad(2, 3);
  e_bad << 1, 0, 0, 2, 0, 0;
  QUALIFY_CHECK_FAILS(check_mfcq(MatrixXd(0, 3), e_bad));
}

TEST_CASE("bad input is an invalid_input report naming the problem") {
  MatrixXd a = MatrixXd::Identity(2, 3);
  a(1, 2) = std::numeric_limits<double>::quiet_NaN();
  auto rep = check_mfcq(a);
  QUALIFY_CHECK_VERDICT(rep, verdict::invalid_input);
  CHECK(rep.message.find("inequality Jacobian entry (1, 2) is NaN") != std::string::npos);
  MatrixXd e = MatrixXd::Identity(1, 3);
  e(0, 0) = std::numeric_limits<double>::infinity();
  rep = check_mfcq(MatrixXd::Identity(2, 3), e);
  CHECK(rep.message.find("equality Jacobian entry (0, 0) is +Inf") != std::string::npos);

  rep = check_mfcq(MatrixXd::Identity(2, 3), MatrixXd::Identity(2, 4));
  CHECK(rep.findings.at(0).code == "dimension_mismatch");
  CHECK(rep.message.find("3 columns, the equality Jacobian 4") != std::string::npos);
  rep = check_mfcq(MatrixXd::Identity(2, 3), MatrixXd::Identity(1, 3), {}, {"a", "b"});
  CHECK(rep.findings.at(0).code == "label_count");
  CHECK(rep.message.find("2 labels for 2 inequality and 1 equality rows") != std::string::npos);
  CHECK(check_mfcq(MatrixXd(2, 0)).findings.at(0).code == "empty_jacobian");

  for (double bad : {-1.0, 0.0, 1.0, std::numeric_limits<double>::quiet_NaN()}) {
    mfcq_options options;
    options.relative_threshold = bad;
    CHECK(check_mfcq(MatrixXd::Identity(2, 2), options).findings.at(0).code == "bad_option");
  }
  mfcq_options band;
  band.undecided_band = 0.5;
  CHECK(check_mfcq(MatrixXd::Identity(2, 2), band).message.find("undecided_band") !=
        std::string::npos);
  mfcq_options lp;
  lp.lp.gap_tolerance = -1;
  CHECK(check_mfcq(MatrixXd::Identity(2, 2), lp).message.find("mfcq_options.lp.gap_tolerance") !=
        std::string::npos);
  mfcq_options licq;
  licq.licq.undecided_band = 0;
  CHECK(check_mfcq(MatrixXd::Identity(2, 2), licq).message.find("mfcq_options.licq_options") !=
        std::string::npos);

  const mfcq_report untouched;
  CHECK(untouched.result == verdict::not_checked);
  CHECK(untouched.message == "check_mfcq was not called");
}

TEST_CASE_TEMPLATE("float and long double inputs give the double verdicts", Scalar, float,
                   long double) {
  using M = Eigen::Matrix<Scalar, Eigen::Dynamic, Eigen::Dynamic>;
  MatrixXd a(3, 2);
  a << -1, 0, 0, -1, -1, -1;
  QUALIFY_CHECK_HOLDS(check_mfcq(M(a.cast<Scalar>())));
  MatrixXd cusp(2, 2);
  cusp << 0, 1, 0, -1;
  QUALIFY_CHECK_FAILS(check_mfcq(M(cusp.cast<Scalar>())));
}

TEST_CASE("report output: brief, full and JSON forms") {
  MatrixXd a(2, 2);
  a << 0, 1, 0, -1;
  const auto rep = check_mfcq(a, {}, {"cusp", "floor"});
  const std::string brief = fmt::format("{}", rep);
  CHECK(brief.find("MFCQ fails") == 0);
  CHECK(brief.find('\n') == std::string::npos);
  const std::string full = fmt::format("{:f}", rep);
  CHECK(full.find("certificate  positive_dependence") != std::string::npos);
  CHECK(full.find("lambda > 0   cusp, floor") != std::string::npos);
  const std::string json = to_json(rep);
  CHECK(json.find("\"check\":\"mfcq\"") != std::string::npos);
  CHECK(json.find("\"verdict\":\"fails\"") != std::string::npos);
  CHECK(json.find("\"ineq_rows\":[0,1]") != std::string::npos);
  CHECK(json.find("\"eq_rows\":[]") != std::string::npos);
}

TEST_CASE("larger cases: 300 active rows, 20 equalities, 150 variables agree with GLPK") {
  // Sizes of the dense MFCQ LP of tests/lp_test.cpp; one case holds (a cone with interior,
  // built around a direction d0), one fails (a row added as minus a positive mix of others).
  std::mt19937 rng(29);
  const Index ma = 300, me = 20, n = 150;
  const MatrixXd e = gaussian(me, n, rng);
  MatrixXd a = gaussian(ma, n, rng);
  // Keep a d0 in null(E) with a_i . d0 < 0 for every row: flip the rows that increase along d0.
  VectorXd d0 = VectorXd::NullaryExpr(n, [&] { return std::normal_distribution<double>()(rng); });
  d0 -= e.transpose() * (e * e.transpose()).ldlt().solve(e * d0);
  for (Index i = 0; i < ma; ++i)
    if (a.row(i).dot(d0) > 0) a.row(i) *= -1;
  SUBCASE("holds") {
    const auto rep = check_mfcq(a, e);
    QUALIFY_CHECK_HOLDS(rep);
    CHECK(std::abs(rep.margin - glpk_margin(a, e)) <= 1e-7);  // GLPK simplex
    check_claims(rep, a, e);
  }
  SUBCASE("fails") {
    a.row(ma - 1) = -(a.row(3) + 2 * a.row(70) + 0.5 * a.row(200)) + gaussian(1, me, rng) * e;
    const auto rep = check_mfcq(a, e);
    QUALIFY_CHECK_FAILS(rep);
    CHECK(std::abs(rep.margin - glpk_margin(a, e)) <= 1e-7);  // GLPK simplex
    check_claims(rep, a, e);
    for (Index i : {Index(3), Index(70), Index(200), ma - 1})
      CHECK(std::find(rep.certificate.ineq_rows.begin(), rep.certificate.ineq_rows.end(), i) !=
            rep.certificate.ineq_rows.end());
  }
}

// ---- sparse gradients ----------------------------------------------------------------------

namespace {

sparse_rows sparse_of(const MatrixXd& m) { return m.sparseView(0.0, 0.0); }

/// The sparse check on the same gradients as a dense report: the same verdict, t*, ranks and
/// certificate (kind and rows), with the sparse report's own claims checked on the data. The
/// LP may have many optimal directions and multipliers (t* at its cap of 1, several positive
/// dependences), so those are compared only where they are unique: lambda of a dependence
/// between two rows.
void check_sparse_agrees(const mfcq_report& dense, const MatrixXd& a, const MatrixXd& e,
                         const mfcq_options& options = {}) {
  const sparse_rows sa = sparse_of(a), se = sparse_of(e);
  const auto rep = check_mfcq(sa, se, options);
  CAPTURE(fmt::format("{:f}", rep));
  CHECK(rep.result == dense.result);
  CHECK(std::abs(rep.margin - dense.margin) <= 1e-7);
  CHECK(rep.lp == dense.lp);
  CHECK(rep.certificate.kind == dense.certificate.kind);
  CHECK(rep.certificate.ineq_rows == dense.certificate.ineq_rows);
  CHECK(rep.certificate.eq_rows == dense.certificate.eq_rows);
  if (rep.certificate.kind == dense.certificate.kind &&
      rep.certificate.kind != mfcq_certificate_kind::none) {
    if (dense.certificate.ineq_rows.size() == 2 && dense.certificate.eq_rows.empty())
      CHECK((rep.certificate.lambda - dense.certificate.lambda).lpNorm<Eigen::Infinity>() <= 1e-6);
    CHECK(rep.certificate.residual <= std::max(1e-9, 10 * dense.certificate.residual));
  }
  if (rep.result == verdict::holds) CHECK(rep.direction_margin >= 10 * rep.relative_threshold);
  CHECK(rep.equality_licq.has_value() == dense.equality_licq.has_value());
  if (rep.equality_licq && dense.equality_licq) {
    CHECK(rep.equality_licq->result == dense.equality_licq->result);
    CHECK(rep.equality_licq->rank == dense.equality_licq->rank);
  }
  REQUIRE(rep.licq);
  CHECK(rep.licq->result == dense.licq->result);
  check_claims(rep, sa, se);
}

}  // namespace

TEST_CASE("sparse gradients: the published examples give the dense verdicts and certificates") {
  // The cases above, stored sparse: complementarity (Scheel and Scholtes 2000) at (0, 0) and
  // (1, 0), the Kuhn-Tucker (1951) cusp, three lines through a point, a duplicated equality.
  MatrixXd comp0(3, 2), comp1(2, 2), lines(3, 2), a1(1, 3), e2(2, 3);
  comp0 << -1, 0, 0, -1, 0, 0;
  comp1 << 0, -1, 0, 1;
  lines << -1, 0, 0, -1, -1, -1;
  a1 << 1, 0, 0;
  e2 << 0, 1, 1, 0, 1, 1;
  for (const MatrixXd* a : {&comp0, &comp1, &lines}) {
    const MatrixXd none(0, a->cols());
    check_sparse_agrees(check_mfcq(*a, none), *a, none);
  }
  check_sparse_agrees(check_mfcq(a1, e2), a1, e2);
  const auto cusp = check_mfcq(sparse_of(comp1), mfcq_options{}, {"cusp", "floor"});
  QUALIFY_CHECK_FAILS(cusp);
  CHECK(cusp.certificate.lambda(0) == doctest::Approx(0.5).epsilon(1e-9));  // hand-checked
  const auto dup = check_mfcq(sparse_of(a1), sparse_of(e2), {}, {"g", "h", "h_again"});
  CHECK(has_code(dup, "equality_rank_deficient"));
  CHECK(has_code(dup, "duplicate_rows"));
  CHECK(dup.certificate.kind == mfcq_certificate_kind::equality_dependence);
  CHECK(dup.margin == doctest::Approx(glpk_margin(a1, e2)).epsilon(1e-7));  // GLPK
}

TEST_CASE("sparse gradients agree with the dense check and GLPK on seeded random cases") {
  std::mt19937 rng(5150);
  std::uniform_real_distribution<double> unit(0, 1);
  int held = 0, failed = 0;
  for (int trial = 0; trial < 40; ++trial) {
    const Index n = 4 + trial % 12;
    const Index me = trial % 3 == 0 ? 0 : std::min<Index>(n - 1, 1 + trial % 3);
    const Index ma = 2 + trial % 5 + (trial % 4 == 0 ? n : 0);
    MatrixXd a = gaussian(ma, n, rng), e = gaussian(me, n, rng);
    for (Index i = 0; i < a.size(); ++i)  // about half the entries zero
      if (unit(rng) < 0.5) a.data()[i] = 0;
    for (Index i = 0; i < ma; ++i)
      if (a.row(i).norm() == 0) a(i, i % n) = 1;
    if (trial % 5 == 1) {  // positively dependent by construction, as in the dense test
      a.row(ma - 1) = -(0.5 * a.row(0) + 2 * a.row(1));
      if (me > 0) a.row(ma - 1) += e.row(0);
    }
    const auto dense = check_mfcq(a, e);
    CAPTURE(trial);
    CHECK(std::abs(dense.margin - glpk_margin(a, e)) <= 1e-7);  // GLPK simplex
    check_sparse_agrees(dense, a, e);
    held += dense.result == verdict::holds;
    failed += dense.result == verdict::fails;
  }
  CHECK(held > 5);
  CHECK(failed > 5);
}

TEST_CASE("sparse gradients: 300 active rows, 20 equalities, 150 variables as in the dense case") {
  std::mt19937 rng(29);
  const Index ma = 300, me = 20, n = 150;
  const MatrixXd e = gaussian(me, n, rng);
  MatrixXd a = gaussian(ma, n, rng);
  VectorXd d0 = VectorXd::NullaryExpr(n, [&] { return std::normal_distribution<double>()(rng); });
  d0 -= e.transpose() * (e * e.transpose()).ldlt().solve(e * d0);
  for (Index i = 0; i < ma; ++i)
    if (a.row(i).dot(d0) > 0) a.row(i) *= -1;
  check_sparse_agrees(check_mfcq(a, e), a, e);
  a.row(ma - 1) = -(a.row(3) + 2 * a.row(70) + 0.5 * a.row(200)) + gaussian(1, me, rng) * e;
  check_sparse_agrees(check_mfcq(a, e), a, e);
}

TEST_CASE("banded optimal control: MFCQ on thousands of sparse rows, checked against GLPK") {
  // E: the dynamics of qualify_test::banded_control (2000 stages: 8004 rows, 12004 variables).
  // A: bounds u <= 1 active on the first control of every tenth stage (gradients e_u) and a
  // state constraint active at stage 3. A direction exists: move the controls down and let
  // the states follow the dynamics. Then an opposed copy of one active bound makes the pair
  // positively dependent (a bound written twice with opposite signs, common practice, no
  // source): MFCQ fails and the certificate names that pair.
  std::mt19937 rng(99);
  const Index nx = 4, nu = 2, stages = 2000, stride = nx + nu;
  const auto oc = qualify_test::banded_control(stages, nx, nu, rng);
  const sparse_rows e = oc.matrix<Eigen::RowMajor>();
  std::vector<Eigen::Triplet<double>> bounds;
  Index ma = 0;
  for (Index k = 0; k < stages; k += 10) bounds.emplace_back(ma++, k * stride + nx, 1.0);
  bounds.emplace_back(ma++, 3 * stride + 1, -1.0);
  sparse_rows a(ma, e.cols());
  a.setFromTriplets(bounds.begin(), bounds.end());
  const auto holds = check_mfcq(a, e);
  CAPTURE(fmt::format("{}", holds));
  QUALIFY_CHECK_HOLDS(holds);
  CHECK(std::abs(holds.margin - glpk_margin(a, e)) <= 1e-7);  // GLPK simplex
  check_claims(holds, a, e);

  bounds.emplace_back(ma++, 50 * stride + nx, -1.0);  // the bound of stage 50, opposed
  a.resize(ma, e.cols());
  a.setFromTriplets(bounds.begin(), bounds.end());
  const auto fails = check_mfcq(a, e);
  CAPTURE(fmt::format("{}", fails));
  QUALIFY_CHECK_FAILS(fails);
  CHECK(std::abs(fails.margin - glpk_margin(a, e)) <= 1e-7);  // GLPK simplex
  CHECK(fails.certificate.ineq_rows == std::vector<Index>{5, ma - 1});
  REQUIRE(fails.certificate.lambda.size() == ma);
  CHECK(fails.certificate.lambda(5) == doctest::Approx(0.5).epsilon(1e-7));
  check_claims(fails, a, e);
}

TEST_CASE("sparse gradients: bad input is an invalid_input report naming the problem") {
  sparse_rows a(2, 3), e(1, 3);
  a.insert(0, 0) = 1;
  a.insert(1, 2) = std::numeric_limits<double>::quiet_NaN();
  e.insert(0, 1) = 1;
  auto rep = check_mfcq(a, e);
  QUALIFY_CHECK_VERDICT(rep, verdict::invalid_input);
  CHECK(rep.message.find("inequality Jacobian entry (1, 2) is NaN") != std::string::npos);
  a.coeffRef(1, 2) = 1;
  e.coeffRef(0, 0) = -std::numeric_limits<double>::infinity();
  rep = check_mfcq(a, e);
  CHECK(rep.message.find("equality Jacobian entry (0, 0) is -Inf") != std::string::npos);
  e.coeffRef(0, 0) = 0;

  std::vector<int> outer{0, 1, 2}, inner{0, 9};
  std::vector<double> values{1, 1};
  using map_rows = Eigen::Map<const sparse_rows>;
  rep = check_mfcq(map_rows(2, 3, 2, outer.data(), inner.data(), values.data()), e);
  CHECK(rep.findings.at(0).code == "invalid_sparse_structure");
  CHECK(rep.message.find("the inequality Jacobian row 1 has an entry in column 9") !=
        std::string::npos);
  rep = check_mfcq(a, map_rows(2, 3, 2, outer.data(), inner.data(), values.data()));
  CHECK(rep.message.find("the equality Jacobian row 1 has an entry in column 9") !=
        std::string::npos);
  // Repeated entries of a host's arrays are summed: rows (2, 0, 0) and (0, 1, 0).
  inner = {0, 0, 1};
  outer = {0, 2, 3};
  values = {1, 1, 1};
  QUALIFY_CHECK_HOLDS(check_mfcq(map_rows(2, 3, 3, outer.data(), inner.data(), values.data())));

  rep = check_mfcq(a, sparse_rows(1, 4));
  CHECK(rep.findings.at(0).code == "dimension_mismatch");
  rep = check_mfcq(a, e, {}, {"only", "two"});
  CHECK(rep.findings.at(0).code == "label_count");
  CHECK(check_mfcq(sparse_rows(2, 0)).findings.at(0).code == "empty_jacobian");
  mfcq_options bad;
  bad.support_threshold = 1;
  CHECK(check_mfcq(a, bad).findings.at(0).code == "bad_option");
  QUALIFY_CHECK_HOLDS(check_mfcq(sparse_rows(0, 3), sparse_rows(0, 3)));  // vacuous
}
