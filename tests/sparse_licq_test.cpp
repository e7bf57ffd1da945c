// qualify tests: LICQ on sparse Jacobians against the dense path, LAPACK's SVD and Netlib models.
// SPDX-License-Identifier: MIT
#include <doctest/doctest.h>

#include <algorithm>
#include <fstream>
#include <numeric>
#include <qualify/doctest.hpp>
#include <qualify/sparse_licq.hpp>
#include <random>
#include <set>
#include <sstream>

#include "netlib_rows.hpp"
#include "reference.hpp"

using namespace qualify;
using Eigen::MatrixXd;
using Eigen::VectorXd;
using qualify_test::lapack_rank_of_unit_rows;
using qualify_test::lapack_singular_values;
using qualify_test::normalise_rows;
using sparse_cols = Eigen::SparseMatrix<double>;
using sparse_rows = Eigen::SparseMatrix<double, Eigen::RowMajor>;

namespace {

double automatic_tau(Index m, Index n) {
  return double(std::max(m, n)) * std::numeric_limits<double>::epsilon();
}

bool has_code(const licq_report& rep, const std::string& code) {
  return std::any_of(rep.findings.begin(), rep.findings.end(),
                     [&](const finding& f) { return f.code == code; });
}

/// Rebuilds each dependent gradient from its terms: the residual must be the one reported
/// and small (the explanation is a certificate a reader can recheck).
template <class Matrix>
void check_explanations(const licq_report& rep, const Matrix& j, double small) {
  const sparse_rows rows = j;
  for (const auto& d : rep.dependencies) {
    Eigen::SparseVector<double> rebuilt(j.cols());
    for (const auto& t : d.terms)
      rebuilt += t.coefficient * Eigen::SparseVector<double>(rows.row(t.row).transpose());
    const Eigen::SparseVector<double> own = rows.row(d.row).transpose();
    const double norm = own.norm();
    const double residual = norm > 0 ? (own - rebuilt).norm() / norm : 0.0;
    CAPTURE(d.row);
    CHECK(std::abs(residual - d.residual) <= 1e-12 + 1e-6 * d.residual);
    CHECK(d.residual < small);
  }
}

/// A random sparse m x n Jacobian with `density` and planted dependencies: rows that are
/// combinations of earlier ones, duplicates, opposed and parallel copies, a zero row.
sparse_cols random_sparse(Index m, Index n, double density, int planted, std::mt19937& rng) {
  std::uniform_real_distribution<double> unit(0, 1), value(-2, 2);
  MatrixXd a = MatrixXd::Zero(m, n);
  for (Index i = 0; i < m; ++i) {
    for (Index c = 0; c < n; ++c)
      if (unit(rng) < density) a(i, c) = value(rng);
    if (a.row(i).squaredNorm() == 0) a(i, Index(unit(rng) * double(n)) % n) = 1;
  }
  std::uniform_int_distribution<Index> pick(0, m - 1);
  for (int p = 0; p < planted; ++p) {
    const Index target = pick(rng), x = pick(rng), y = pick(rng);
    if (target == x || target == y) continue;
    switch (p % 5) {
      case 0:
        a.row(target) = 2 * a.row(x) - 0.5 * a.row(y);
        break;
      case 1:
        a.row(target) = a.row(x);
        break;
      case 2:
        a.row(target) = -3 * a.row(x);
        break;
      case 3:
        a.row(target) = 1e6 * a.row(x);
        break;
      default:
        a.row(target).setZero();
    }
  }
  return a.sparseView();
}

/// Compares the sparse report with the dense one on the same matrix and with LAPACK's SVD.
void check_agreement(const sparse_cols& j, const std::string& what) {
  CAPTURE(what);
  const MatrixXd dense = j;
  const auto d = check_licq(dense);
  const auto s = check_licq(j);
  const auto r = check_licq(sparse_rows(j));
  CHECK(s.result == d.result);
  CHECK(r.result == d.result);
  CHECK(s.rank == d.rank);
  CHECK(r.rank == d.rank);
  CHECK(s.raw_rank == d.raw_rank);
  // Reference: LAPACK dgesdd on the same unit rows.
  CHECK(s.rank == lapack_rank_of_unit_rows(dense, automatic_tau(j.rows(), j.cols())));
  CHECK(s.dependencies.size() == d.dependencies.size());
  CHECK(s.zero_rows == d.zero_rows);
  const auto pairs = [](const std::vector<row_pair>& v) {
    std::set<std::pair<Index, Index>> out;
    for (const auto& p : v) out.insert({p.first, p.second});
    return out;
  };
  CHECK(pairs(s.duplicate_rows) == pairs(d.duplicate_rows));
  CHECK(pairs(s.parallel_rows) == pairs(d.parallel_rows));
  CHECK(pairs(s.opposed_rows) == pairs(d.opposed_rows));
  check_explanations(s, j, 1e-10);
  check_explanations(r, j, 1e-10);
  CHECK(s.threshold == d.threshold);
  CHECK(s.dependent_rows() == r.dependent_rows());
}

/// A discretised optimal-control Jacobian: states x_0..x_N (nx each), controls u_0..u_{N-1}
/// (nu each), variables ordered x_0, u_0, x_1, u_1, ..., x_N. Rows: the initial condition
/// x_0 = given (nx rows), then the dynamics x_{k+1} - A_k x_k - B_k u_k = 0 for each stage
/// (nx rows, 1 + nx + nu entries each). A_k, B_k are random.
struct control_jacobian {
  std::vector<Eigen::Triplet<double>> entries;
  Index rows = 0, cols = 0;
  Index nx = 0, nu = 0;
  Index dynamics_row(Index stage, Index i) const { return nx + stage * nx + i; }
};

control_jacobian banded_control(Index stages, Index nx, Index nu, std::mt19937& rng) {
  std::uniform_real_distribution<double> value(-1, 1);
  control_jacobian out;
  out.nx = nx;
  out.nu = nu;
  const Index stride = nx + nu;
  out.cols = stages * stride + nx;
  out.rows = nx + stages * nx;
  for (Index i = 0; i < nx; ++i) out.entries.emplace_back(i, i, 1.0);
  for (Index k = 0; k < stages; ++k)
    for (Index i = 0; i < nx; ++i) {
      const Index row = out.dynamics_row(k, i);
      out.entries.emplace_back(row, (k + 1) * stride + i, 1.0);
      for (Index c = 0; c < nx; ++c) out.entries.emplace_back(row, k * stride + c, value(rng));
      for (Index c = 0; c < nu; ++c) out.entries.emplace_back(row, k * stride + nx + c, value(rng));
    }
  return out;
}

}  // namespace

TEST_CASE("random sparse Jacobians: the sparse check agrees with the dense one and LAPACK") {
  std::mt19937 rng(20261202);
  for (auto [m, n, density, planted] : {std::tuple{5, 8, 0.5, 0},
                                        {30, 40, 0.15, 0},
                                        {30, 40, 0.15, 6},
                                        {60, 50, 0.1, 0},
                                        {80, 120, 0.05, 10},
                                        {150, 200, 0.03, 12},
                                        {200, 260, 0.02, 25}}) {
    const sparse_cols j = random_sparse(m, n, density, planted, rng);
    check_agreement(
        j, std::to_string(m) + "x" + std::to_string(n) + " planted " + std::to_string(planted));
  }
}

TEST_CASE("full-rank sparse Jacobians hold with a lower bound on sigma_min") {
  std::mt19937 rng(41);
  for (Index m : {10, 60, 200}) {
    const sparse_cols j = random_sparse(m, m + m / 2, 0.08, 0, rng);
    const MatrixXd dense = j;
    const auto rep = check_licq(j);
    CAPTURE(m);
    if (lapack_rank_of_unit_rows(dense, automatic_tau(j.rows(), j.cols())) < m) continue;
    QUALIFY_CHECK_HOLDS(rep);
    if (sparse_engine_available) CHECK(rep.method == rank_method::sparse_qr);
    // Reference: LAPACK dgesdd on the unit rows.
    const double sigma_min = lapack_singular_values(normalise_rows(dense)).minCoeff();
    CHECK(rep.deciding_value <= sigma_min * (1 + 1e-12));           // a lower bound, never above
    CHECK(rep.smallest_singular_value >= sigma_min * (1 - 1e-12));  // power steps: from above
    CHECK(rep.smallest_singular_value == doctest::Approx(sigma_min).epsilon(0.5));
  }
}

TEST_CASE("verdicts of the sparse check do not change under row scaling") {
  std::mt19937 rng(12);
  std::uniform_real_distribution<double> exponent(-8.0, 8.0);
  const sparse_cols j = random_sparse(60, 80, 0.08, 8, rng);
  const auto base = check_licq(j);
  sparse_rows scaled = j;
  for (Index i = 0; i < scaled.rows(); ++i) scaled.row(i) *= std::pow(10.0, exponent(rng));
  const auto rep = check_licq(scaled);
  QUALIFY_CHECK_VERDICT(rep, base.result);
  CHECK(rep.rank == base.rank);
  CHECK(rep.dependent_rows().size() == base.dependent_rows().size());
  check_explanations(rep, scaled, 1e-9);
}

TEST_CASE("banded optimal-control Jacobians: a redundant constraint at a random stage is found") {
  std::mt19937 rng(2026);
  const Index nx = 4, nu = 2;
  for (Index stages : {40, 20000}) {
    auto oc = banded_control(stages, nx, nu, rng);
    std::uniform_int_distribution<Index> stage(0, stages - 1);
    const Index k = stage(rng);
    // The planted row: 2 * (dynamics row 1 of stage k) - 0.5 * (dynamics row 3 of stage k),
    // a path constraint that restates the dynamics.
    const Index planted = oc.rows++;
    const Index a = oc.dynamics_row(k, 1), b = oc.dynamics_row(k, 3);
    std::vector<Eigen::Triplet<double>> extra;
    for (const auto& e : oc.entries) {
      if (e.row() == a) extra.emplace_back(planted, e.col(), 2 * e.value());
      if (e.row() == b) extra.emplace_back(planted, e.col(), -0.5 * e.value());
    }
    oc.entries.insert(oc.entries.end(), extra.begin(), extra.end());
    sparse_cols j(oc.rows, oc.cols);
    j.setFromTriplets(oc.entries.begin(), oc.entries.end());
    CAPTURE(stages);
    CAPTURE(k);
    const auto rep = check_licq(j);
    if (stages > 40 && !sparse_engine_available) {  // too large for the dense core
      QUALIFY_CHECK_VERDICT(rep, verdict::undecided);
      CHECK(has_code(rep, "no_sparse_engine"));
      continue;
    }
    QUALIFY_CHECK_FAILS(rep);
    CHECK(rep.rank == oc.rows - 1);
    REQUIRE(rep.dependencies.size() == 1);
    // Whichever of the three rows is called dependent, it is explained by the other two.
    const std::set<Index> trio{a, b, planted};
    const auto& dep = rep.dependencies[0];
    CHECK(trio.count(dep.row) == 1);
    REQUIRE(dep.terms.size() == 2);
    for (const auto& t : dep.terms) CHECK(trio.count(t.row) == 1);
    check_explanations(rep, j, 1e-12);
    if (stages == 40)
      check_agreement(j, "banded control, 40 stages");
    else
      CHECK(rep.method == rank_method::sparse_qr);
  }
}

TEST_CASE("Netlib equality blocks: rank against LAPACK's SVD, dependent rows by residual") {
  const std::string data = QUALIFY_TEST_DATA_DIR;
  if (data.empty()) {
    MESSAGE("skipped: QUALIFY_TEST_DATA_DIR is empty (no Netlib data)");
    return;
  }
  // Source of the counts: the Netlib lp/data readme, as copied into INDEX.csv.
  std::ifstream index(data + "/netlib/INDEX.csv");
  REQUIRE(index);
  std::string line;
  std::getline(index, line);  // header
  int models = 0, with_dependent_rows = 0, by_sparse_qr = 0;
  while (std::getline(index, line)) {
    std::stringstream fields(line);
    std::string file, rows, cols, nonzeros;
    std::getline(fields, file, ',');
    std::getline(fields, rows, ',');
    std::getline(fields, cols, ',');
    std::getline(fields, nonzeros, ',');
    const auto mps = qualify_test::read_mps_rows(data + "/netlib/" + file);
    CAPTURE(file);
    REQUIRE_MESSAGE(mps.ok, mps.message);
    // The test-only reader is itself checked against the published counts.
    // boeing1.mps has 351 constraint rows and its objective, one more than the readme's 351
    // (observed here; the other counts match).
    CHECK(Index(mps.row_names.size()) + 1 == std::stol(rows) + (file == "boeing1.mps" ? 1 : 0));
    CHECK(Index(mps.col_names.size()) == std::stol(cols));
    CHECK(Index(mps.entries.size() + mps.objective_entries) == std::stol(nonzeros));

    std::vector<Index> equality;  // rows of the E block
    std::vector<int> position(mps.row_names.size(), -1);
    for (std::size_t i = 0; i < mps.row_types.size(); ++i)
      if (mps.row_types[i] == 'E') {
        position[i] = int(equality.size());
        equality.push_back(Index(i));
      }
    if (equality.empty()) continue;
    std::vector<Eigen::Triplet<double>> block;
    for (const auto& e : mps.entries)
      if (position[e.row()] >= 0) block.emplace_back(position[e.row()], e.col(), e.value());
    sparse_cols j(Index(equality.size()), Index(mps.col_names.size()));
    j.setFromTriplets(block.begin(), block.end());
    std::vector<std::string> labels;
    for (Index i : equality) labels.push_back(mps.row_names[i]);

    const auto rep = check_licq(j, {}, labels);
    const MatrixXd dense = j;
    const double tau = automatic_tau(j.rows(), j.cols());
    // Reference: LAPACK dgesdd on the unit rows of the E block.
    const VectorXd sigma = lapack_singular_values(normalise_rows(dense));
    const Index reference_rank = Index((sigma.array() > tau).count());
    // Netlib blocks can sit in the undecided band; the reference is clear when no singular
    // value lies in (tau, band * tau] and none below tau comes close.
    const bool clear_gap = ((sigma.array() > tau) && (sigma.array() <= 10 * tau)).count() == 0;
    CAPTURE(rep.message);
    if (clear_gap && rep.result != verdict::undecided) {
      CHECK(rep.rank == reference_rank);
      const auto dense_rep = check_licq(dense, {}, labels);
      CHECK(rep.result == dense_rep.result);
      CHECK(rep.rank == dense_rep.rank);
      CHECK(rep.dependencies.size() == dense_rep.dependencies.size());
    }
    if (rep.method == rank_method::sparse_qr) ++by_sparse_qr;
    if (rep.result == verdict::fails) {
      ++with_dependent_rows;
      check_explanations(rep, j, 1e-8);
    }
    ++models;
  }
  MESSAGE(models << " Netlib equality blocks checked, " << with_dependent_rows
                 << " with dependent rows, " << by_sparse_qr
                 << " decided by sparse_qr (the rest by the dense core)");
  CHECK(models > 30);
  CHECK(with_dependent_rows > 0);
}

TEST_CASE("a close call goes to the dense core: Kahan's matrix") {
  // Kahan, "Numerical linear algebra", Canadian Math. Bulletin 9 (1966); set up as in
  // licq_test.cpp. The triangle is dense, but stored sparse it is a sparse input like any.
  const Index n = 120;
  const double c = 0.285, s = std::sqrt(1 - c * c);
  MatrixXd k = MatrixXd::Zero(n, n);
  for (Index i = 0; i < n; ++i) {
    k(i, i) = std::pow(s, double(i));
    for (Index j = i + 1; j < n; ++j) k(i, j) = -c * std::pow(s, double(i));
  }
  for (Index j = 0; j < n; ++j) k.col(j) *= 1 + double(n - j) * 1e-8;
  const MatrixXd jac = k.transpose();
  const auto rep = check_licq(sparse_cols(jac.sparseView()));
  QUALIFY_CHECK_FAILS(rep);
  CHECK(rep.rank == lapack_rank_of_unit_rows(jac, automatic_tau(n, n)));  // LAPACK dgesdd
  CHECK(rep.method == check_licq(jac).method);
  if (sparse_engine_available) CHECK(has_code(rep, "dense_check"));
}

TEST_CASE("zero rows, duplicates and opposed rows are named as in the dense path") {
  // Hand-checkable by inspection (the matrix of licq_test.cpp plus an opposed row).
  MatrixXd j(7, 4);
  j << 1, 2, 0, 0,  //
      0, 1, 1, 0,   //
      1, 2, 0, 0,   //
      0, 3, 3, 0,   //
      0, 0, 0, 0,   //
      1, 3, 1, 0,   //
      0, -1, -1, 0;
  const std::vector<std::string> labels{"a",       "b",        "a_again", "b_times_3",
                                        "nothing", "a_plus_b", "minus_b"};
  const auto d = check_licq(j, {}, labels);
  const auto s = check_licq(sparse_cols(j.sparseView()), {}, labels);
  QUALIFY_CHECK_FAILS(s);
  CHECK(s.rank == 2);
  CHECK(s.zero_rows == std::vector<Index>{4});
  // Which row of a + b = a_plus_b is called dependent depends on the factorisation's order;
  // the copies (rows 2, 3, 6) are dependent in both paths, and the counts agree.
  CHECK(s.dependent_rows().size() == d.dependent_rows().size());
  for (Index copy : {2, 3, 4, 6}) {
    const auto deps = s.dependent_rows();
    CHECK(std::count(deps.begin(), deps.end(), copy) == 1);
  }
  REQUIRE(s.duplicate_rows.size() == 1);
  CHECK(s.duplicate_rows[0].second == 2);
  REQUIRE(s.parallel_rows.size() == 1);
  CHECK(s.parallel_rows[0].ratio == doctest::Approx(3.0));
  REQUIRE(s.opposed_rows.size() == d.opposed_rows.size());
  for (const char* code :
       {"zero_gradient", "dependent_row", "duplicate_rows", "parallel_rows", "opposed_rows"})
    CHECK(has_code(s, code));
  check_explanations(s, sparse_cols(j.sparseView()), 1e-12);
}

TEST_CASE("bad sparse input is an invalid_input report naming the entry") {
  sparse_cols j(3, 3);
  j.insert(0, 0) = 1;
  j.insert(2, 1) = std::numeric_limits<double>::quiet_NaN();
  j.insert(1, 2) = std::numeric_limits<double>::infinity();
  auto rep = check_licq(j);
  QUALIFY_CHECK_VERDICT(rep, verdict::invalid_input);
  CHECK(rep.message.find("(2, 1) is NaN") != std::string::npos);  // first in column order
  CHECK(check_licq(sparse_rows(j)).message.find("(2, 1) is NaN") != std::string::npos);

  // A host's own CSR arrays through Eigen::Map: an out-of-range column, unsorted columns and
  // decreasing offsets are named; nothing is read out of bounds.
  std::vector<int> outer{0, 2, 3}, inner{0, 5, 1};
  std::vector<double> values{1, 2, 3};
  using map_rows = Eigen::Map<const sparse_rows>;
  rep = check_licq(map_rows(2, 3, 3, outer.data(), inner.data(), values.data()));
  QUALIFY_CHECK_VERDICT(rep, verdict::invalid_input);
  CHECK(rep.findings.at(0).code == "invalid_sparse_structure");
  CHECK(rep.message.find("row 0 has an entry in column 5, out of range [0, 3)") !=
        std::string::npos);
  inner = {1, 0, 1};
  rep = check_licq(map_rows(2, 3, 3, outer.data(), inner.data(), values.data()));
  CHECK(rep.message.find("column index 0 follows 1") != std::string::npos);
  outer = {0, 3, 2};
  inner = {0, 1, 2};
  rep = check_licq(map_rows(2, 3, 3, outer.data(), inner.data(), values.data()));
  CHECK(rep.message.find("offsets decrease at row 1") != std::string::npos);
  outer = {0, 2, 3};
  rep = check_licq(map_rows(2, 3, 3, outer.data(), inner.data(), values.data()));
  CHECK(rep.result == verdict::holds);

  CHECK(check_licq(sparse_cols(2, 0)).findings.at(0).code == "empty_jacobian");
  sparse_cols id(2, 2);
  id.setIdentity();
  CHECK(check_licq(id, {}, {"only one"}).findings.at(0).code == "label_count");
  licq_options bad;
  bad.relative_threshold = 2.0;
  CHECK(check_licq(id, bad).findings.at(0).code == "bad_option");
  CHECK(check_licq(sparse_cols(0, 3)).result == verdict::holds);  // no rows: vacuous
  QUALIFY_CHECK_FAILS(check_licq(sparse_cols(2, 3)));             // only zero rows
}

TEST_CASE("beyond sparse_dense_limit without an engine the verdict is undecided, with a reason") {
  std::mt19937 rng(8);
  const sparse_cols j = random_sparse(40, 60, 0.1, 3, rng);
  licq_options small;
  small.sparse_dense_limit = 100;  // 40 x 60 does not fit
  // float has no sparse engine: it needs the dense core.
  const Eigen::SparseMatrix<float> jf = j.cast<float>();
  const auto rep = check_licq(jf, small);
  QUALIFY_CHECK_VERDICT(rep, verdict::undecided);
  CHECK(has_code(rep, "no_sparse_engine"));
  const auto fits = check_licq(jf);
  CHECK(fits.result != verdict::undecided);
  CHECK(has_code(fits, "dense_fallback"));
  const auto dbl = check_licq(j, small);
  if (sparse_engine_available)
    CHECK(dbl.method == rank_method::sparse_qr);
  else
    CHECK(has_code(dbl, "no_sparse_engine"));
}

TEST_CASE_TEMPLATE("float and long double sparse Jacobians follow the dense verdicts", Scalar,
                   float, long double) {
  std::mt19937 rng(3);
  using M = Eigen::Matrix<Scalar, Eigen::Dynamic, Eigen::Dynamic>;
  M full = qualify_test::gaussian(8, 12, rng).cast<Scalar>();
  full.row(7) = 2 * full.row(1) - full.row(4);
  const Eigen::SparseMatrix<Scalar> sparse = full.sparseView();
  const auto s = check_licq(sparse);
  const auto d = check_licq(full);
  CHECK(s.result == d.result);
  CHECK(s.rank == d.rank);
  CHECK(s.rank == 7);
}
