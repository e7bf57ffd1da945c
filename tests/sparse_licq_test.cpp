// qualify tests: LICQ on sparse Jacobians against the dense path, LAPACK's SVD and Netlib models.
// SPDX-License-Identifier: MIT
#include <doctest/doctest.h>

#include <algorithm>
#include <map>
#include <qualify/doctest.hpp>
#include <qualify/linear_cq.hpp>
#include <qualify/mps.hpp>
#include <qualify/sparse_licq.hpp>
#include <random>
#include <set>

#include "netlib_index.hpp"
#include "reference.hpp"
#include "sparse_cases.hpp"

using namespace qualify;
using Eigen::MatrixXd;
using Eigen::VectorXd;
using qualify_test::lapack_rank_of_unit_rows;
using qualify_test::lapack_singular_values;
using qualify_test::normalise_rows;
using qualify_test::random_sparse;
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

std::set<std::pair<Index, Index>> pair_set(const std::vector<row_pair>& v) {
  std::set<std::pair<Index, Index>> out;
  for (const auto& p : v) out.insert({p.first, p.second});
  return out;
}

/// Reference for which rows are named dependent: row i is dependent exactly when it is a
/// combination of the rows before it, i.e. when LAPACK's SVD (dgesdd) finds no more rank on
/// unit rows 0..i than on rows 0..i-1 (the greedy basis the reports name).
std::vector<Index> lapack_greedy_dependent_rows(const MatrixXd& dense) {
  const double tau = automatic_tau(dense.rows(), dense.cols());
  std::vector<Index> out;
  Index previous = 0;
  for (Index i = 0; i < dense.rows(); ++i) {
    const Index rank = lapack_rank_of_unit_rows(dense.topRows(i + 1), tau);
    if (rank == previous) out.push_back(i);
    previous = rank;
  }
  return out;
}

/// The sparse report (column- and row-major input) against the dense one on the same matrix
/// and LAPACK's SVD: verdict, rank, the rows named dependent (the latest of each dependent set,
/// whatever order the factorisation pivoted in), each explanation rechecked, and the
/// duplicated, parallel and opposed pairs.
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
  CHECK(s.dependent_rows() == d.dependent_rows());
  CHECK(s.independent_rows == d.independent_rows);
  CHECK(s.zero_rows == d.zero_rows);
  CHECK(pair_set(s.duplicate_rows) == pair_set(d.duplicate_rows));
  CHECK(pair_set(s.parallel_rows) == pair_set(d.parallel_rows));
  CHECK(pair_set(s.opposed_rows) == pair_set(d.opposed_rows));
  check_explanations(s, j, 1e-10);
  check_explanations(r, j, 1e-10);
  CHECK(s.threshold == d.threshold);
  CHECK(s.dependent_rows() == r.dependent_rows());
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
                                        {200, 260, 0.02, 25},
                                        {400, 300, 0.02, 0}}) {
    const sparse_cols j = random_sparse(m, n, density, planted, rng);
    check_agreement(
        j, std::to_string(m) + "x" + std::to_string(n) + " planted " + std::to_string(planted));
  }
}

TEST_CASE("the rows named dependent are the latest of each dependent set, as LAPACK finds them") {
  // Many dependencies (more than a quarter of the rows), so that the dense path pivots and the
  // sparse path orders columns for fill: both must still name the rows that are combinations
  // of earlier ones.
  std::mt19937 rng(404);
  for (int trial = 0; trial < 4; ++trial) {
    MatrixXd j = sparse_cols(random_sparse(40, 60, 0.1, 0, rng));
    std::uniform_int_distribution<Index> pick(0, 39);
    for (int p = 0; p < 14; ++p) {  // a later row replaced by a combination of earlier ones
      const Index target = pick(rng);
      if (target < 2) continue;
      const Index x = pick(rng) % target, y = pick(rng) % target;
      j.row(target) = (p % 3 == 0 ? -2.0 : 1.5) * j.row(x) + (p % 2) * j.row(y);
    }
    const auto reference = lapack_greedy_dependent_rows(j);  // LAPACK dgesdd
    CAPTURE(trial);
    REQUIRE(reference.size() > 6);
    const auto d = check_licq(j);
    const auto s = check_licq(sparse_cols(j.sparseView()));
    CHECK(d.dependent_rows() == reference);
    CHECK(s.dependent_rows() == reference);
    check_explanations(d, sparse_cols(j.sparseView()), 1e-10);
    check_explanations(s, sparse_cols(j.sparseView()), 1e-10);
  }
}

TEST_CASE("full-rank sparse Jacobians hold with a lower bound on sigma_min") {
  std::mt19937 rng(41);
  for (Index m : {10, 60, 200}) {
    sparse_cols j = random_sparse(m, m + m / 2, 0.08, 0, rng);
    for (Index i = 0; i < m; ++i) j.coeffRef(i, i) += 1;  // structurally of full rank
    const MatrixXd dense = j;
    const auto rep = check_licq(j);
    CAPTURE(m);
    REQUIRE(lapack_rank_of_unit_rows(dense, automatic_tau(j.rows(), j.cols())) == m);
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
  for (Index stages : {40, 20000}) {
    auto oc = qualify_test::banded_control(stages, 4, 2, rng);
    qualify_test::plant_redundant_row(oc, rng);
    const sparse_cols j = oc.matrix();
    CAPTURE(stages);
    CAPTURE(oc.planted_stage);
    const auto rep = check_licq(j);
    if (stages > 40 && !sparse_engine_available) {  // 80005 x 120004: too large for the dense core
      QUALIFY_CHECK_VERDICT(rep, verdict::undecided);
      CHECK(has_code(rep, "no_sparse_engine"));
      continue;
    }
    QUALIFY_CHECK_FAILS(rep);
    CHECK(rep.rank == oc.rows - 1);
    REQUIRE(rep.dependencies.size() == 1);
    // The planted row is the latest of the three: it is named, explained by the other two
    // with the coefficients it was built with.
    const std::set<Index> trio{oc.source_a, oc.source_b, oc.planted};
    const auto& dep = rep.dependencies[0];
    CHECK(dep.row == oc.planted);
    REQUIRE(dep.terms.size() == 2);
    for (const auto& t : dep.terms) CHECK(trio.count(t.row) == 1);
    std::map<Index, double> c{{dep.row, -1.0}};  // 0 = -g_dep + sum coefficient * g_term
    for (const auto& t : dep.terms) c[t.row] = t.coefficient;
    const double scale = -c[oc.planted];  // the planted row's own weight
    CHECK(c[oc.source_a] / scale == doctest::Approx(2.0));
    CHECK(c[oc.source_b] / scale == doctest::Approx(-0.5));
    check_explanations(rep, j, 1e-12);
    CHECK(has_code(rep, "dependent_row"));
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
  const auto entries = qualify_test::read_netlib_index(data + "/netlib");
  REQUIRE(!entries.empty());
  int blocks = 0, with_dependent_rows = 0, by_sparse_qr = 0, compared = 0;
  for (const auto& entry : entries) {
    CAPTURE(entry.file);
    const mps_model model = read_mps_file(data + "/netlib/" + entry.file);
    REQUIRE_MESSAGE(model.ok(), model.error);
    // The equality block: rows whose lower and upper bounds coincide.
    const auto [j, labels] = qualify_test::equality_rows(model);
    if (j.rows() == 0) continue;
    const auto rep = check_licq(j, {}, labels);
    const MatrixXd dense = j;
    const double tau = automatic_tau(j.rows(), j.cols());
    // Reference: LAPACK dgesdd on the unit rows of the block (Netlib lp/data models).
    const VectorXd sigma = lapack_singular_values(normalise_rows(dense));
    Index reference_rank = Index((sigma.array() > tau).count());
    for (Index i = 0; i < dense.rows(); ++i)  // a zero row is dependent whatever the SVD says
      if (dense.row(i).norm() == 0 && reference_rank == dense.rows()) --reference_rank;
    // A block can sit in the undecided band; the reference is clear when no singular value
    // lies in (tau, band * tau].
    const bool clear_gap = ((sigma.array() > tau) && (sigma.array() <= 10 * tau)).count() == 0;
    CAPTURE(rep.message);
    if (clear_gap && rep.result != verdict::undecided) {
      ++compared;
      CHECK(rep.rank == reference_rank);
      const auto dense_rep = check_licq(dense, {}, labels);
      CHECK(rep.result == dense_rep.result);
      CHECK(rep.rank == dense_rep.rank);
      CHECK(rep.dependencies.size() == dense_rep.dependencies.size());
      CHECK(rep.dependent_rows() == dense_rep.dependent_rows());
    }
    if (rep.method == rank_method::sparse_qr) ++by_sparse_qr;
    if (rep.result == verdict::fails) {
      ++with_dependent_rows;
      check_explanations(rep, j, 1e-8);
    }
    ++blocks;
  }
  MESSAGE(blocks << " Netlib equality blocks checked, " << compared << " against LAPACK, "
                 << with_dependent_rows << " with dependent rows, " << by_sparse_qr
                 << " decided by sparse_qr");
  CHECK(blocks > 30);
  CHECK(compared > 30);
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
  // The later row of each dependent set is named: the copies, the zero row and a_plus_b.
  CHECK(s.dependent_rows() == std::vector<Index>{2, 3, 4, 5, 6});
  CHECK(d.dependent_rows() == s.dependent_rows());
  REQUIRE(s.duplicate_rows.size() == 1);
  CHECK(s.duplicate_rows[0].second == 2);
  REQUIRE(s.parallel_rows.size() == 1);
  CHECK(s.parallel_rows[0].ratio == doctest::Approx(3.0));
  REQUIRE(s.opposed_rows.size() == d.opposed_rows.size());
  for (const char* code :
       {"zero_gradient", "dependent_row", "duplicate_rows", "parallel_rows", "opposed_rows"})
    CHECK(has_code(s, code));
  // The same findings, apart from the note of which path decided (built without SPQR).
  const auto path_notes = std::count_if(s.findings.begin(), s.findings.end(), [](const finding& f) {
    return f.code == "dense_fallback" || f.code == "dense_check";
  });
  CHECK(s.findings.size() - std::size_t(path_notes) == d.findings.size());
  CHECK(path_notes == (sparse_engine_available ? 0 : 1));
  check_explanations(s, sparse_cols(j.sparseView()), 1e-12);
}

TEST_CASE("host arrays through Eigen::Map: repeated and unordered entries are summed") {
  // CSR of [[1, 2, 0], [0, 0, 3]] written with row 0 as (1, 2) then (0, 0.5) and (0, 0.5):
  // summed per position, as Matrix Market does (NISTIR 5935), it is the matrix above.
  std::vector<int> outer{0, 3, 4}, inner{1, 0, 0, 2};
  std::vector<double> values{2, 0.5, 0.5, 3};
  using map_rows = Eigen::Map<const sparse_rows>;
  const auto rep = check_licq(map_rows(2, 3, 4, outer.data(), inner.data(), values.data()));
  MatrixXd same(2, 3);
  same << 1, 2, 0, 0, 0, 3;
  const auto d = check_licq(same);
  QUALIFY_CHECK_HOLDS(rep);
  CHECK(rep.deciding_value == doctest::Approx(d.deciding_value).epsilon(1e-6));
  // A row whose repeated entries cancel is a zero gradient: row 0 is 1 - 1 + 0 in column 2.
  inner = {2, 2, 2, 2};
  values = {1, -1, 0, 3};
  const auto zero = check_licq(map_rows(2, 3, 4, outer.data(), inner.data(), values.data()));
  QUALIFY_CHECK_FAILS(zero);
  CHECK(zero.zero_rows == std::vector<Index>{0});
  // An expression is evaluated as it stands.
  const sparse_cols j = sparse_cols(same.sparseView());
  QUALIFY_CHECK_HOLDS(check_licq(2.0 * j));
  QUALIFY_CHECK_FAILS(check_licq(j.transpose()));  // 3 rows in 2 variables
}

TEST_CASE("bad sparse input is an invalid_input report naming the entry") {
  sparse_cols j(3, 3);
  j.insert(0, 0) = 1;
  j.insert(2, 1) = std::numeric_limits<double>::quiet_NaN();
  j.insert(1, 2) = std::numeric_limits<double>::infinity();
  auto rep = check_licq(j);
  QUALIFY_CHECK_VERDICT(rep, verdict::invalid_input);
  CHECK(rep.findings.at(0).code == "non_finite_entry");
  CHECK(rep.message.find("Jacobian entry (2, 1) is NaN") != std::string::npos);  // column order
  CHECK(check_licq(sparse_rows(j)).message.find("(2, 1) is NaN") != std::string::npos);

  // A host's own CSR arrays through Eigen::Map: an out-of-range column, a negative one and
  // decreasing offsets are named; nothing is read out of bounds.
  std::vector<int> outer{0, 2, 3}, inner{0, 5, 1};
  std::vector<double> values{1, 2, 3};
  using map_rows = Eigen::Map<const sparse_rows>;
  rep = check_licq(map_rows(2, 3, 3, outer.data(), inner.data(), values.data()));
  QUALIFY_CHECK_VERDICT(rep, verdict::invalid_input);
  CHECK(rep.findings.at(0).code == "invalid_sparse_structure");
  CHECK(rep.message.find("row 0 has an entry in column 5, out of range [0, 3)") !=
        std::string::npos);
  inner = {0, -1, 1};
  rep = check_licq(map_rows(2, 3, 3, outer.data(), inner.data(), values.data()));
  CHECK(rep.message.find("row 0 has an entry in column -1") != std::string::npos);
  outer = {0, 3, 2};
  inner = {0, 1, 2};
  rep = check_licq(map_rows(2, 3, 3, outer.data(), inner.data(), values.data()));
  CHECK(rep.message.find("offsets decrease at row 1") != std::string::npos);
  outer = {0, 2, 3};
  rep = check_licq(map_rows(2, 3, 3, outer.data(), inner.data(), values.data()));
  CHECK(rep.result == verdict::holds);
  // CSC of a host: an out-of-range row.
  using map_cols = Eigen::Map<const sparse_cols>;
  std::vector<int> col_outer{0, 1, 2}, col_inner{0, 7};
  rep = check_licq(map_cols(3, 2, 2, col_outer.data(), col_inner.data(), values.data()));
  CHECK(rep.message.find("column 1 has an entry in row 7, out of range [0, 3)") !=
        std::string::npos);

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

TEST_CASE("at a point: active rows from values and types agree with the dense overload") {
  std::mt19937 rng(77);
  std::uniform_real_distribution<double> value(-1, 1);
  for (int trial = 0; trial < 6; ++trial) {
    const sparse_cols j = random_sparse(120, 100, 0.05, 6, rng);
    VectorXd g(j.rows());
    std::vector<constraint_type> types(std::size_t(j.rows()));
    for (Index i = 0; i < j.rows(); ++i) {
      types[i] = i % 5 == 0 ? constraint_type::equality : constraint_type::inequality;
      const double v = value(rng);  // about a third active, some near-active, some violated
      g(i) = v < -0.3 ? v : (v < 0.3 ? 0.0 : (v < 0.4 ? -5e-5 : 1e-3));
    }
    const MatrixXd dense = j;
    const auto d = check_licq(dense, g, types);
    const auto s = check_licq(j, g, types);
    const auto r = check_licq(sparse_rows(j), g, types);
    CAPTURE(trial);
    REQUIRE(s.active);
    CHECK(s.active->active == d.active->active);
    CHECK(s.active->near_active == d.active->near_active);
    CHECK(s.active->violated == d.active->violated);
    CHECK(s.rows == d.rows);
    CHECK(s.result == d.result);
    CHECK(r.result == d.result);
    CHECK(s.rank == d.rank);
    CHECK(s.dependencies.size() == d.dependencies.size());
    CHECK(s.dependent_rows() == d.dependent_rows());
    CHECK(pair_set(s.duplicate_rows) == pair_set(d.duplicate_rows));
    CHECK(s.dependent_rows() == r.dependent_rows());
    for (Index row : s.dependent_rows())  // rows keep the numbering of the whole Jacobian
      CHECK(std::binary_search(s.active->active.begin(), s.active->active.end(), row));
    check_explanations(s, j, 1e-10);
    CHECK(has_code(s, "violated_constraint") == has_code(d, "violated_constraint"));
    CHECK(has_code(s, "near_active") == has_code(d, "near_active"));
  }
  // No active row: LICQ holds vacuously.
  const sparse_cols j = random_sparse(5, 4, 0.5, 0, rng);
  const auto none = check_licq(j, VectorXd::Constant(5, -1.0),
                               std::vector<constraint_type>(5, constraint_type::inequality));
  QUALIFY_CHECK_HOLDS(none);
  CHECK(none.rows == 0);
}

TEST_CASE("at a point: bad values and types are named") {
  sparse_cols j(3, 2);
  j.insert(0, 0) = 1;
  const std::vector<constraint_type> types(3, constraint_type::inequality);
  CHECK(check_licq(j, VectorXd::Zero(2), types).findings.at(0).code == "value_count");
  CHECK(check_licq(j, VectorXd::Zero(3), {constraint_type::equality}).findings.at(0).code ==
        "type_count");
  VectorXd g = VectorXd::Zero(3);
  g(1) = std::numeric_limits<double>::quiet_NaN();
  const auto rep = check_licq(j, g, types);
  CHECK(rep.findings.at(0).code == "non_finite_entry");
  CHECK(rep.message.find("value entry (1, 0) is NaN") != std::string::npos);
  j.coeffRef(2, 1) = -std::numeric_limits<double>::infinity();
  CHECK(check_licq(j, VectorXd::Zero(3), types).message.find("(2, 1) is -Inf") !=
        std::string::npos);
}

TEST_CASE("LICQ and the linear CQ side by side on a sparse Jacobian") {
  // A duplicated affine row and a nonlinear one: LICQ fails, and the linear CQ does not apply
  // because the active nonlinear row is not declared affine (hand-checkable).
  MatrixXd dense(4, 3);
  dense << 1, 0, 0, 0, 1, 0, 1, 0, 0, 0, 0, 1;
  const VectorXd g = (VectorXd(4) << 0, 0, 0, -1).finished();
  const std::vector<constraint_type> types(4, constraint_type::inequality);
  std::vector<constraint_kind> kinds(4, constraint_kind::affine);
  kinds[1] = constraint_kind::nonlinear;
  const std::vector<std::string> labels{"a", "curve", "a_again", "far"};
  const auto d = check_qualifications(dense, g, types, kinds, {}, labels);
  const auto s = check_qualifications(sparse_cols(dense.sparseView()), g, types, kinds, {}, labels);
  QUALIFY_CHECK_FAILS(s.licq);
  CHECK(s.licq.active->active == std::vector<Index>{0, 1, 2});
  CHECK(s.licq.dependent_rows() == d.licq.dependent_rows());
  CHECK(s.linear_cq.result == d.linear_cq.result);
  CHECK(s.linear_cq.non_affine_rows == std::vector<Index>{1});
  kinds[1] = constraint_kind::affine;
  QUALIFY_CHECK_HOLDS(
      check_qualifications(sparse_rows(dense.sparseView()), g, types, kinds, {}, labels).linear_cq);
  // Bad input: a kind missing, or an invalid Jacobian.
  const auto short_kinds =
      check_qualifications(sparse_cols(dense.sparseView()), g, types, {kinds[0]}, {}, labels);
  CHECK(short_kinds.linear_cq.findings.at(0).code == "kind_count");
  sparse_cols bad = dense.sparseView();
  bad.coeffRef(3, 2) = std::numeric_limits<double>::quiet_NaN();
  const auto invalid = check_qualifications(bad, g, types, kinds, {}, labels);
  QUALIFY_CHECK_VERDICT(invalid.licq, verdict::invalid_input);
  CHECK(invalid.linear_cq.findings.at(0).code == "invalid_jacobian");
}

TEST_CASE("beyond sparse_dense_limit without an engine the verdict is undecided, with a reason") {
  std::mt19937 rng(8);
  const sparse_cols j = random_sparse(40, 60, 0.1, 3, rng);
  licq_options small;
  small.sparse_dense_limit = 100;  // 40 x 60 does not fit
  // long double has no sparse engine: it needs the dense core.
  const Eigen::SparseMatrix<long double> jl = j.cast<long double>();
  const auto rep = check_licq(jl, small);
  QUALIFY_CHECK_VERDICT(rep, verdict::undecided);
  CHECK(has_code(rep, "no_sparse_engine"));
  CHECK(rep.message.find("sparse_dense_limit = 100") != std::string::npos);
  const auto fits = check_licq(jl);
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
  CHECK(s.threshold == doctest::Approx(d.threshold));
  if (sparse_engine_available && std::is_same_v<Scalar, float>)
    CHECK(s.method == rank_method::sparse_qr);
}
