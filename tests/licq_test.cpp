// qualify tests: LICQ verdicts, ranks and explanations against LAPACK's SVD and published matrices.
// SPDX-License-Identifier: MIT
#include <doctest/doctest.h>
#include <qualify/doctest.hpp>
#include <qualify/licq.hpp>

#include "reference.hpp"

#include <algorithm>
#include <numeric>

using namespace qualify;
using qualify_test::gaussian;
using qualify_test::lapack_rank_of_unit_rows;
using qualify_test::lapack_singular_values;
using qualify_test::normalise_rows;
using qualify_test::with_singular_values;
using Eigen::MatrixXd;
using Eigen::VectorXd;

namespace {

double automatic_tau(const MatrixXd& j) {
  return double(std::max(j.rows(), j.cols())) * std::numeric_limits<double>::epsilon();
}

}  // namespace

TEST_CASE("random full-rank Jacobians hold, with the rank LAPACK's SVD gives") {
  std::mt19937 rng(20261201);
  for (auto [m, n] : {std::pair{1, 1}, {3, 5}, {20, 20}, {40, 90}, {150, 300}}) {
    const MatrixXd j = gaussian(m, n, rng);
    const auto rep = check_licq(j);
    CAPTURE(m);
    CAPTURE(n);
    QUALIFY_CHECK_HOLDS(rep);
    // Reference: LAPACK dgesdd on the same unit rows.
    CHECK(rep.rank == lapack_rank_of_unit_rows(j, automatic_tau(j)));
    CHECK(rep.method == rank_method::householder_bound);
    CHECK(rep.dependencies.empty());
    const double sigma_min = lapack_singular_values(normalise_rows(j)).minCoeff();
    CHECK(rep.deciding_value <= sigma_min * (1 + 1e-12));  // a lower bound, never above
    CHECK(rep.smallest_singular_value == doctest::Approx(sigma_min).epsilon(0.5));
  }
}

TEST_CASE("prescribed singular values: exact gaps fail, ill-conditioned full rank holds") {
  std::mt19937 rng(7);
  const Index m = 30, n = 50;
  SUBCASE("exact rank gap") {
    for (Index rank : {1, 10, 29}) {
      VectorXd sigma = VectorXd::Zero(m);
      sigma.head(rank).setLinSpaced(rank, 1.0, 0.5);
      const MatrixXd j = with_singular_values(m, n, sigma, rng);
      const auto rep = check_licq(j);
      CAPTURE(rank);
      QUALIFY_CHECK_FAILS(rep);
      CHECK(rep.rank == lapack_rank_of_unit_rows(j, automatic_tau(j)));  // LAPACK dgesdd
      CHECK(rep.rank == rank);
      CHECK(rep.dependencies.size() == std::size_t(m - rank));
      for (const auto& d : rep.dependencies) CHECK(d.residual < 1e-10);
      CHECK(rep.independent_rows.size() == std::size_t(rank));
    }
  }
  SUBCASE("ill-conditioned but full rank") {
    VectorXd sigma(m);
    for (Index i = 0; i < m; ++i) sigma(i) = std::pow(10.0, -10.0 * double(i) / double(m - 1));
    const MatrixXd j = with_singular_values(m, n, sigma, rng);
    const auto rep = check_licq(j);
    QUALIFY_CHECK_HOLDS(rep);
    CHECK(rep.rank == lapack_rank_of_unit_rows(j, automatic_tau(j)));
    const double ref = lapack_singular_values(normalise_rows(j)).minCoeff();
    CHECK(rep.smallest_singular_value == doctest::Approx(ref).epsilon(0.5));
    CHECK(std::any_of(rep.findings.begin(), rep.findings.end(),
                      [](const finding& f) { return f.code == "ill_conditioned"; }));
  }
  SUBCASE("a singular value on the threshold is undecided") {
    VectorXd sigma = VectorXd::Ones(m);
    sigma(m - 1) = 1e-14;
    const MatrixXd j = with_singular_values(m, n, sigma, rng);
    const double ref = lapack_singular_values(normalise_rows(j)).minCoeff();
    licq_options options;
    options.relative_threshold = ref / 3;  // (tau, 10 tau) is the undecided zone
    const auto rep = check_licq(j, options);
    QUALIFY_CHECK_VERDICT(rep, verdict::undecided);
    CHECK(rep.margin == doctest::Approx(3.0).epsilon(0.05));
    options.relative_threshold = ref * 3;  // below tau: dependent to that precision
    QUALIFY_CHECK_FAILS(check_licq(j, options));
  }
}

TEST_CASE("verdicts do not change under row scaling over 16 orders or row permutation") {
  std::mt19937 rng(11);
  std::uniform_real_distribution<double> exponent(-8.0, 8.0);
  for (Index rank : {12, 20}) {
    VectorXd sigma = VectorXd::Zero(20);
    sigma.head(rank).setConstant(1.0);
    const MatrixXd j = with_singular_values(20, 35, sigma, rng);
    const auto base = check_licq(j);
    MatrixXd scaled = j;
    for (Index i = 0; i < j.rows(); ++i) scaled.row(i) *= std::pow(10.0, exponent(rng));
    std::vector<Index> order(20);
    std::iota(order.begin(), order.end(), 0);
    std::shuffle(order.begin(), order.end(), rng);
    const MatrixXd permuted = scaled(order, Eigen::all);
    const MatrixXd& scaled_ref = scaled;
    for (const MatrixXd* variant : {&scaled_ref, &permuted}) {
      const auto rep = check_licq(*variant);
      CAPTURE(rank);
      QUALIFY_CHECK_VERDICT(rep, base.result);
      CHECK(rep.rank == base.rank);
      CHECK(rep.rank == lapack_rank_of_unit_rows(*variant, automatic_tau(*variant)));
    }
  }
}

TEST_CASE("scaling-sensitive rows: normalised rank holds while the raw rank drops") {
  MatrixXd j(2, 3);
  j << 1, 0, 0, 0, 1e-20, 0;  // an independent row, tiny only because of its units
  const auto rep = check_licq(j);
  QUALIFY_CHECK_HOLDS(rep);
  CHECK(rep.raw_rank == 1);  // reference: sigma = {1, 1e-20} by inspection, 1e-20 < tau
  CHECK(std::any_of(rep.findings.begin(), rep.findings.end(),
                    [](const finding& f) { return f.code == "scaling_sensitive"; }));
}

TEST_CASE_TEMPLATE("float and long double follow the double verdicts", Scalar, float, double,
                   long double) {
  std::mt19937 rng(3);
  using M = Eigen::Matrix<Scalar, Eigen::Dynamic, Eigen::Dynamic>;
  const MatrixXd full = gaussian(8, 12, rng);
  MatrixXd deficient = full;
  deficient.row(7) = 2 * deficient.row(1) - deficient.row(4);
  // The dependence is built in Scalar arithmetic: built in double, it would hold only to
  // double rounding, which long double resolves.
  M deficient_scalar = full.cast<Scalar>();
  deficient_scalar.row(7) = 2 * deficient_scalar.row(1) - deficient_scalar.row(4);
  const auto good = check_licq(M(full.cast<Scalar>()));
  const auto bad = check_licq(deficient_scalar);
  QUALIFY_CHECK_HOLDS(good);
  QUALIFY_CHECK_FAILS(bad);
  CHECK(bad.rank == 7);  // LAPACK dgesdd on the double matrix gives 7 too:
  CHECK(lapack_rank_of_unit_rows(deficient, automatic_tau(deficient)) == 7);
  CHECK(good.threshold == doctest::Approx(12 * double(std::numeric_limits<Scalar>::epsilon())));
  REQUIRE(bad.dependencies.size() == 1);
  CHECK(bad.dependencies[0].residual < 100 * double(std::numeric_limits<Scalar>::epsilon()));
}

TEST_CASE("Kahan's matrix: plain column-pivoted QR misses the rank deficiency, the check does not") {
  // Kahan, "Numerical linear algebra", Canadian Math. Bulletin 9 (1966): R = diag(s^i) times
  // the unit upper triangle with -c above the diagonal; every column has unit norm. Columns
  // are scaled by 1 + (n - j) * 1e-8 so that pivoting keeps the natural order (Golub and Van
  // Loan, Matrix Computations, 4th ed., 2013, sec. 5.4.1 use the same device).
  const Index n = 120;
  const double c = 0.285, s = std::sqrt(1 - c * c);
  MatrixXd k = MatrixXd::Zero(n, n);
  for (Index i = 0; i < n; ++i) {
    k(i, i) = std::pow(s, double(i));
    for (Index j = i + 1; j < n; ++j) k(i, j) = -c * std::pow(s, double(i));
  }
  for (Index j = 0; j < n; ++j) k.col(j) *= 1 + double(n - j) * 1e-8;
  const double tau = automatic_tau(k);
  const VectorXd sigma = lapack_singular_values(k);  // LAPACK dgesdd
  REQUIRE(sigma(n - 1) < tau / 10);                  // numerically singular
  // LAPACK dgeqp3, plain column pivoting: its last diagonal entry is far above tau.
  MatrixXd factor = k;
  std::vector<lapack_int> pivots(n, 0);
  VectorXd tau_h(n);
  REQUIRE(LAPACKE_dgeqp3(LAPACK_COL_MAJOR, lapack_int(n), lapack_int(n), factor.data(),
                         lapack_int(n), pivots.data(), tau_h.data()) == 0);
  CHECK(std::abs(factor(n - 1, n - 1)) > 1e6 * tau);

  // The rank core on K itself: its diagonal says full rank, the bound on sigma_min of the
  // kept block disagrees, and the SVD decides.
  const auto decision = detail::decide_rank_pivoted<double>(k, tau, 10.0, 2000);
  CHECK(decision.method == rank_method::svd);
  CHECK(decision.rank == n - 1);
  CHECK(decision.rank == Index((sigma.array() > tau).count()));

  const auto rep = check_licq(MatrixXd(k.transpose()));  // rows of J are columns of J^T = K
  QUALIFY_CHECK_FAILS(rep);
  CHECK(rep.method != rank_method::householder_bound);
  CHECK(rep.rank == lapack_rank_of_unit_rows(k.transpose(), tau));
}

TEST_CASE("Lauchli's matrix: normal equations lose the rank that is there") {
  // Lauchli, "Jordan-Elimination und Ausgleichung nach kleinsten Quadraten", Numer. Math. 3
  // (1961): rows [1, e, 0, 0], [1, 0, e, 0], [1, 0, 0, e] are independent for any e != 0, but
  // J J^T = 1 1^T + e^2 I rounds to rank one once e^2 < eps.
  const double e = 1e-9;
  MatrixXd j(3, 4);
  j << 1, e, 0, 0, 1, 0, e, 0, 1, 0, 0, e;
  const MatrixXd gram = j * j.transpose();
  Eigen::SelfAdjointEigenSolver<MatrixXd> normal(gram);
  const double tau = automatic_tau(j);
  CHECK((normal.eigenvalues().array() > tau * normal.eigenvalues().maxCoeff()).count() == 1);
  const auto rep = check_licq(j);
  QUALIFY_CHECK_HOLDS(rep);
  CHECK(rep.rank == 3);
  CHECK(rep.rank == lapack_rank_of_unit_rows(j, tau));  // LAPACK dgesdd on J itself
  const double ref = lapack_singular_values(normalise_rows(j)).minCoeff();
  CHECK(rep.smallest_singular_value == doctest::Approx(ref).epsilon(0.5));
}

TEST_CASE("the Kuhn-Tucker cusp: opposed active gradients at the minimiser") {
  // Kuhn and Tucker, "Nonlinear programming", Proc. 2nd Berkeley Symposium (1951): min -x1
  // s.t. x2 - (1 - x1)^3 <= 0, -x2 <= 0; at x* = (1, 0) the gradients are (0, 1), (0, -1).
  MatrixXd j(2, 2);
  j << 0, 1, 0, -1;
  const auto rep = check_licq(j, {}, {"cusp", "floor"});
  QUALIFY_CHECK_FAILS(rep);
  REQUIRE(rep.opposed_rows.size() == 1);
  CHECK(rep.opposed_rows[0].first == 0);
  CHECK(rep.opposed_rows[0].second == 1);
  CHECK(rep.opposed_rows[0].ratio == doctest::Approx(-1.0));
  CHECK(rep.findings.size() >= 2);
  CHECK(rep.findings.back().labels == std::vector<std::string>{"cusp", "floor"});
}

TEST_CASE("zero, duplicated and parallel rows are named, and dependent rows explained") {
  // Hand-checkable by inspection: rows 2 = row 0, row 3 = 3 row 1, row 4 = 0, row 5 = row 0 + row 1.
  MatrixXd j(6, 4);
  j << 1, 2, 0, 0,  //
      0, 1, 1, 0,   //
      1, 2, 0, 0,   //
      0, 3, 3, 0,   //
      0, 0, 0, 0,   //
      1, 3, 1, 0;
  const auto rep = check_licq(j, {}, {"a", "b", "a_again", "b_times_3", "nothing", "a_plus_b"});
  QUALIFY_CHECK_FAILS(rep);
  CHECK(rep.rank == 2);
  CHECK(rep.rank == lapack_rank_of_unit_rows(j, automatic_tau(j)));  // LAPACK dgesdd
  CHECK(rep.zero_rows == std::vector<Index>{4});
  REQUIRE(rep.duplicate_rows.size() == 1);
  CHECK(rep.duplicate_rows[0].first == 0);
  CHECK(rep.duplicate_rows[0].second == 2);
  REQUIRE(rep.parallel_rows.size() == 1);
  CHECK(rep.parallel_rows[0].second == 3);
  CHECK(rep.parallel_rows[0].ratio == doctest::Approx(3.0));
  CHECK(rep.dependencies.size() == 4);
  for (const auto& d : rep.dependencies) {
    // Rebuild each dependent gradient from its terms: the residual must be what is reported.
    Eigen::RowVectorXd rebuilt = Eigen::RowVectorXd::Zero(4);
    for (const auto& t : d.terms) rebuilt += t.coefficient * j.row(t.row);
    const double norm = j.row(d.row).norm();
    const double residual = norm > 0 ? (j.row(d.row) - rebuilt).norm() / norm : 0.0;
    CHECK(std::abs(residual - d.residual) < 1e-14);
    CHECK(d.residual < 1e-12);
  }
}

TEST_CASE("more rows than variables fail by structure") {
  std::mt19937 rng(5);
  const MatrixXd j = gaussian(6, 4, rng);
  const auto rep = check_licq(j);
  QUALIFY_CHECK_FAILS(rep);
  CHECK(rep.rank == 4);
  CHECK(rep.rank == lapack_rank_of_unit_rows(j, automatic_tau(j)));
  CHECK(rep.dependencies.size() == 2);
}

TEST_CASE("rows of denormal entries: the dependence is explained with a finite residual") {
  // Found by fuzzing: 7e-323 and 2e-323 (14 and 4 times the smallest denormal) in one column.
  // The residual was computed through coefficient / norm, which overflows for a norm below
  // 1 / DBL_MAX, and came out NaN. Either row is the other times 7/2 (or 2/7), exactly.
  MatrixXd j(2, 1);
  j << 7e-323, 2e-323;
  const auto rep = check_licq(j);
  QUALIFY_CHECK_FAILS(rep);
  REQUIRE(rep.dependencies.size() == 1);
  const auto& dep = rep.dependencies.front();
  REQUIRE(dep.terms.size() == 1);
  CHECK(std::isfinite(dep.residual));
  CHECK(dep.residual <= 1e-12);
  CHECK(dep.terms.front().coefficient ==
        doctest::Approx(j(dep.row, 0) / j(dep.terms.front().row, 0)).epsilon(1e-12));
}

TEST_CASE("the active-set overload picks rows by value and keeps the caller's numbering") {
  // Rows: an active inequality, an inactive one, a near-active one, an equality, and an
  // active inequality duplicating row 0.
  MatrixXd j(5, 3);
  j << 1, 0, 0, 0, 1, 0, 0, 0, 1, 0, 1, 1, 1, 0, 0;
  VectorXd g(5);
  g << 0.0, -1.0, -1e-5, 0.0, -1e-9;
  const std::vector<constraint_type> types{constraint_type::inequality, constraint_type::inequality,
                                           constraint_type::inequality, constraint_type::equality,
                                           constraint_type::inequality};
  const auto rep = check_licq(j, g, types);
  REQUIRE(rep.active);
  CHECK(rep.active->active == std::vector<Index>{0, 3, 4});
  CHECK(rep.active->near_active == std::vector<Index>{2});
  QUALIFY_CHECK_FAILS(rep);
  CHECK(rep.dependent_rows() == std::vector<Index>{4});
  REQUIRE(rep.duplicate_rows.size() == 1);
  CHECK(rep.duplicate_rows[0].first == 0);
  CHECK(rep.duplicate_rows[0].second == 4);

  const auto none = check_licq(j, VectorXd::Constant(5, -1.0),
                               std::vector<constraint_type>(5, constraint_type::inequality));
  QUALIFY_CHECK_HOLDS(none);  // no active constraint: LICQ holds vacuously
  CHECK(none.rows == 0);
}

TEST_CASE("bad input is an invalid_input report naming the problem") {
  MatrixXd j = MatrixXd::Identity(3, 3);
  j(1, 2) = std::numeric_limits<double>::quiet_NaN();
  auto rep = check_licq(j);
  QUALIFY_CHECK_VERDICT(rep, verdict::invalid_input);
  CHECK(rep.message.find("(1, 2) is NaN") != std::string::npos);
  j(1, 2) = -std::numeric_limits<double>::infinity();
  CHECK(check_licq(j).message.find("(1, 2) is -Inf") != std::string::npos);

  CHECK(check_licq(MatrixXd(2, 0)).findings.at(0).code == "empty_jacobian");
  CHECK(check_licq(MatrixXd::Identity(2, 2), {}, {"only one"}).findings.at(0).code == "label_count");
  for (double bad : {-1.0, 0.0, 2.0, std::numeric_limits<double>::infinity()}) {
    licq_options options;
    options.relative_threshold = bad;
    CHECK(check_licq(MatrixXd::Identity(2, 2), options).findings.at(0).code == "bad_option");
  }
  licq_options negative_band;
  negative_band.undecided_band = 0.5;
  CHECK(check_licq(MatrixXd::Identity(2, 2), negative_band).message.find("undecided_band") !=
        std::string::npos);
  licq_options bad_activity;
  bad_activity.activity.activity_tolerance = std::numeric_limits<double>::quiet_NaN();
  CHECK(check_licq(MatrixXd::Identity(2, 2), bad_activity).result == verdict::invalid_input);

  const MatrixXd id = MatrixXd::Identity(2, 2);
  const std::vector<constraint_type> two(2, constraint_type::inequality);
  CHECK(check_licq(id, VectorXd::Zero(3), two).findings.at(0).code == "value_count");
  CHECK(check_licq(id, VectorXd::Zero(2), std::vector<constraint_type>(1)).findings.at(0).code ==
        "type_count");
  VectorXd nan_values = VectorXd::Zero(2);
  nan_values(1) = std::numeric_limits<double>::quiet_NaN();
  CHECK(check_licq(id, nan_values, two).message.find("value entry (1, 0) is NaN") !=
        std::string::npos);

  const licq_report untouched;
  CHECK(untouched.result == verdict::not_checked);
  CHECK(untouched.message == "check_licq was not called");
}

TEST_CASE("no rows: LICQ holds vacuously; only zero rows: it fails") {
  CHECK(check_licq(MatrixXd(0, 3)).result == verdict::holds);
  const auto rep = check_licq(MatrixXd::Zero(2, 3));
  QUALIFY_CHECK_FAILS(rep);
  CHECK(rep.zero_rows == std::vector<Index>{0, 1});
}

TEST_CASE("a few exact combinations are found by deflation, as LAPACK's SVD counts them") {
  std::mt19937 rng(17);
  MatrixXd j = gaussian(60, 120, rng);
  // Rows 10, 30, 50 become combinations of earlier rows.
  j.row(10) = 0.5 * j.row(2) - 3 * j.row(7);
  j.row(30) = j.row(11) + j.row(29);
  j.row(50) = -2 * j.row(49);
  const auto rep = check_licq(j);
  QUALIFY_CHECK_FAILS(rep);
  CHECK(rep.method == rank_method::deflated_qr);
  CHECK(rep.rank == lapack_rank_of_unit_rows(j, automatic_tau(j)));  // LAPACK dgesdd
  CHECK(rep.dependent_rows() == std::vector<Index>{10, 30, 50});
  REQUIRE(rep.dependencies.size() == 3);
  CHECK(rep.dependencies[0].terms.size() == 2);
  CHECK(rep.dependencies[0].terms[0].row == 7);
  CHECK(rep.dependencies[0].terms[0].coefficient == doctest::Approx(-3.0));
  CHECK(rep.dependencies[0].terms[1].coefficient == doctest::Approx(0.5));
  for (const auto& d : rep.dependencies) CHECK(d.residual < 1e-13);
  REQUIRE(rep.opposed_rows.size() == 1);
  CHECK(rep.opposed_rows[0].ratio == doctest::Approx(-2.0));
}
