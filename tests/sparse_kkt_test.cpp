// qualify tests: check_kkt on sparse Jacobians: the same answers as the dense path on the KKT
// test cases (row- and column-major), a banded optimal-control model beyond the dense path
// checked against its construction, the active-block limit, and bad input.
// SPDX-License-Identifier: MIT
#include <doctest/doctest.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <qualify/doctest.hpp>
#include <qualify/json.hpp>
#include <qualify/kkt.hpp>
#include <random>
#include <string>
#include <vector>

#include "kkt_cases.hpp"

using namespace qualify;
using namespace qualify_test;
using Eigen::MatrixXd;
using Eigen::VectorXd;

namespace {

template <int Options>
using sparse_point = basic_model_at_point<Eigen::SparseMatrix<double, Options>>;

/// The same point with its Jacobian stored sparse (exact zeros left out).
template <int Options>
sparse_point<Options> sparse_of(const model_at_point& p) {
  sparse_point<Options> s;
  s.x = p.x;
  s.objective_gradient = p.objective_gradient;
  s.objective_hessian = p.objective_hessian;
  s.values = p.values;
  s.jacobian = p.jacobian.sparseView();
  s.types = p.types;
  s.kinds = p.kinds;
  s.labels = p.labels;
  s.hessians = p.hessians;
  s.convex_model = p.convex_model;
  return s;
}

std::vector<std::string> codes_of(const kkt_report& r) {
  std::vector<std::string> codes;
  for (const auto& f : r.findings) codes.push_back(f.code);
  std::sort(codes.begin(), codes.end());
  return codes;
}

/// |a - b| <= 1e-9 max(|a|, |b|) + floor: the same figure up to rounding.
bool close(double a, double b, double floor) {
  return std::abs(a - b) <= 1e-9 * std::max(std::abs(a), std::abs(b)) + floor;
}

#define QUALIFY_CHECK_CLOSE(a, b, floor) CHECK_MESSAGE(close(a, b, floor), (a), " vs ", (b))

/// Residuals: rounding-level figures (sums of a different order) agree within 1% of the
/// threshold they are compared with.
void same_residual(const kkt_residual& d, const kkt_residual& s) {
  const double floor = 1e-2 * d.threshold;
  CHECK(s.result == d.result);
  QUALIFY_CHECK_CLOSE(s.raw, d.raw, floor);
  QUALIFY_CHECK_CLOSE(s.scaled, d.scaled, floor);
  CHECK(s.threshold == d.threshold);
  if (d.result != verdict::holds) CHECK(s.worst == d.worst);  // else rounding may pick another
  CHECK(s.over == d.over);
}

void same_reduced(const reduced_hessian& d, const reduced_hessian& s, double scale) {
  CHECK(s.computed == d.computed);
  CHECK(s.rows == d.rows);
  CHECK(s.dimension == d.dimension);
  CHECK(s.positive == d.positive);
  CHECK(s.negative == d.negative);
  CHECK(s.zero == d.zero);
  if (d.dimension > 0) {
    QUALIFY_CHECK_CLOSE(s.smallest, d.smallest, scale);
    QUALIFY_CHECK_CLOSE(s.largest, d.largest, scale);
  }
}

/// The sparse report against the dense one on the same data: every verdict, set and figure.
/// LICQ's dependent rows may be named differently by the sparse factorisation (another pivot
/// order), so its rank and verdict are compared, and the multiplier set through its ranges.
void check_agreement(const kkt_report& d, const kkt_report& s) {
  CAPTURE(d.message);
  CAPTURE(s.message);
  CHECK(s.result == d.result);
  CHECK(s.classification == d.classification);
  CHECK(s.source == d.source);
  CHECK(s.variables == d.variables);
  CHECK(s.constraints == d.constraints);
  CHECK(s.active.active == d.active.active);
  CHECK(s.active.near_active == d.active.near_active);
  CHECK(s.active.violated == d.active.violated);
  const double y_scale =
      std::max(1.0, d.multipliers.size() > 0 ? d.multipliers.lpNorm<Eigen::Infinity>() : 0.0);
  REQUIRE(s.multipliers.size() == d.multipliers.size());
  for (Index i = 0; i < d.multipliers.size(); ++i)
    QUALIFY_CHECK_CLOSE(s.multipliers(i), d.multipliers(i), 1e-9 * y_scale);
  CHECK(s.row_violation.isApprox(d.row_violation));
  QUALIFY_CHECK_CLOSE(s.multiplier_scale, d.multiplier_scale, 0.0);
  if (std::isnan(d.stationarity_norm))
    CHECK(std::isnan(s.stationarity_norm));
  else
    QUALIFY_CHECK_CLOSE(s.stationarity_norm, d.stationarity_norm, 1e-2 * d.stationarity.threshold);
  same_residual(d.stationarity, s.stationarity);
  same_residual(d.primal, s.primal);
  same_residual(d.dual, s.dual);
  same_residual(d.complementarity, s.complementarity);
  CHECK(s.licq.result == d.licq.result);
  CHECK(s.licq.rank == d.licq.rank);
  CHECK(s.licq.dependencies.size() == d.licq.dependencies.size());
  CHECK(s.linear_cq.result == d.linear_cq.result);
  CHECK(s.mfcq_result == d.mfcq_result);
  CHECK(s.mfcq_decided_by == d.mfcq_decided_by);
  CHECK(s.mfcq.has_value() == d.mfcq.has_value());
  if (s.mfcq && d.mfcq) CHECK(s.mfcq->result == d.mfcq->result);
  CHECK(s.multipliers_unique == d.multipliers_unique);
  CHECK(s.multipliers_bounded == d.multipliers_bounded);
  std::map<Index, std::pair<double, double>> dense_ranges, sparse_ranges;
  for (const auto& r : d.ranges) dense_ranges[r.row] = {r.lower, r.upper};
  for (const auto& r : s.ranges) sparse_ranges[r.row] = {r.lower, r.upper};
  CHECK(sparse_ranges.size() == dense_ranges.size());
  for (const auto& [row, range] : dense_ranges) {
    CAPTURE(row);
    REQUIRE(sparse_ranges.count(row) == 1);
    for (auto [a, b] : {std::pair{range.first, sparse_ranges[row].first},
                        std::pair{range.second, sparse_ranges[row].second}})
      if (std::isinf(a))
        CHECK(b == a);
      else
        QUALIFY_CHECK_CLOSE(b, a, 1e-6 * y_scale);
  }
  CHECK(s.strongly_active == d.strongly_active);
  CHECK(s.weakly_active == d.weakly_active);
  if (std::isnan(d.complementarity_margin))
    CHECK(std::isnan(s.complementarity_margin));
  else
    QUALIFY_CHECK_CLOSE(s.complementarity_margin, d.complementarity_margin, 1e-6 * y_scale);
  const auto& so = s.second_order;
  const auto& dso = d.second_order;
  CHECK(so.result == dso.result);
  CHECK(so.hessian_source == dso.hessian_source);
  QUALIFY_CHECK_CLOSE(so.hessian_norm, dso.hessian_norm, 0.0);
  same_reduced(dso.sufficient, so.sufficient, std::max(1.0, dso.hessian_norm) * 1e-12);
  same_reduced(dso.necessary, so.necessary, std::max(1.0, dso.hessian_norm) * 1e-12);
  CHECK(s.premises.size() == d.premises.size());
  CHECK(codes_of(s) == codes_of(d));
}

/// Dense, column-major and row-major answers on one point, estimated and with the dense
/// estimate given back.
void check_all_storages(const model_at_point& p, const kkt_options& o = {}) {
  const kkt_report dense = check_kkt(p, o);
  {
    INFO("column-major");
    check_agreement(dense, check_kkt(sparse_of<Eigen::ColMajor>(p), o));
  }
  {
    INFO("row-major");
    check_agreement(dense, check_kkt(sparse_of<Eigen::RowMajor>(p), o));
  }
  if (dense.multipliers.size() != p.values.size()) return;
  const kkt_report given = check_kkt(p, dense.multipliers, o);
  INFO("multipliers given");
  check_agreement(given, check_kkt(sparse_of<Eigen::ColMajor>(p), dense.multipliers, o));
  check_agreement(given, check_kkt(sparse_of<Eigen::RowMajor>(p), dense.multipliers, o));
}

/// The n x n Hessian of an automatic-differentiation function at x by central differences of
/// its exact gradient (the same matrix goes to both paths: agreement, not accuracy, is tested).
MatrixXd differenced_hessian(const ad_function& f, const VectorXd& x) {
  const Index n = x.size();
  MatrixXd h(n, n);
  for (Index j = 0; j < n; ++j) {
    const double step = 1e-5 * std::max(1.0, std::abs(x(j)));
    VectorXd xp = x, xm = x;
    xp(j) += step;
    xm(j) -= step;
    h.col(j) = (gradient_of(f(seeded(xp)), n) - gradient_of(f(seeded(xm)), n)) / (xp(j) - xm(j));
  }
  return 0.5 * (h + h.transpose());
}

/// A Hock-Schittkowski problem evaluated at x, with the Hessians given by hand or differenced.
model_at_point hs_point(const hs_problem& p, const VectorXd& x) {
  const model_evaluation e = evaluate_model(model_of(p), x, {true, true});
  REQUIRE_MESSAGE(e.ok(), e.error);
  model_at_point point = e.point;
  if (!point.objective_hessian) {
    point.objective_hessian = differenced_hessian(p.f, x);
    point.hessians.clear();
    for (const auto& c : p.constraints) point.hessians.push_back(differenced_hessian(c.c, x));
  }
  return point;
}

}  // namespace

TEST_CASE("sparse Jacobians agree with the dense path on the Hock-Schittkowski problems") {
  // The problems of Hock and Schittkowski, Test Examples for Nonlinear Programming Codes,
  // 1981 (kkt_cases.hpp names each): at the published optimum and at the perturbed point.
  for (const auto& p : hock_schittkowski()) {
    INFO("HS" << p.number);
    const model_at_point at = hs_point(p, p.x_star);
    check_all_storages(at, options_for(p));
    // The classification of the dense test (kkt_test.cpp) holds on the sparse path too.
    QUALIFY_CHECK_CLASSIFICATION(check_kkt(sparse_of<Eigen::ColMajor>(at), options_for(p)),
                                 p.expected);
    INFO("perturbed");
    check_all_storages(hs_point(p, p.x_star + p.perturbation), options_for(p));
  }
}

TEST_CASE("sparse Jacobians agree with the dense path on degenerate and counter-example points") {
  SUBCASE("the apex of a square pyramid: LICQ fails, multiplier ranges by the ratio test") {
    const model_at_point p = square_pyramid();
    check_all_storages(p);
    const auto r = check_kkt(sparse_of<Eigen::ColMajor>(p));
    // Hand-derived (square_pyramid): l1 in [0, 2], l2 in [1, 3], l3 in [2, 4], l4 in [0, 2].
    const std::pair<double, double> hand[] = {{0, 2}, {1, 3}, {2, 4}, {0, 2}};
    CHECK(r.multipliers_unique == verdict::fails);
    REQUIRE(r.ranges.size() == 4);
    for (const auto& range : r.ranges) {
      QUALIFY_CHECK_CLOSE(range.lower, hand[range.row].first, 1e-7);
      QUALIFY_CHECK_CLOSE(range.upper, hand[range.row].second, 1e-7);
    }
    QUALIFY_CHECK_CLASSIFICATION(r, kkt_classification::global_min);
  }
  SUBCASE("seven planes through a point of R^4: the ranges by the LP engine") {
    check_all_storages(seven_planes());
  }
  SUBCASE("an equality imported twice: multipliers unbounded, MFCQ fails") {
    check_all_storages(equality_twice());
  }
  SUBCASE("quadratics at the origin: every second-order outcome") {
    for (const auto& [d, floor] : {std::pair{vec({2, -2}), false}, std::pair{vec({2, 0}), false},
                                   std::pair{vec({2, -2}), true}, std::pair{vec({-2, 0}), true},
                                   std::pair{vec({2, 2}), true}}) {
      CAPTURE(d.transpose());
      CAPTURE(floor);
      check_all_storages(quadratic_at_origin(MatrixXd(d.asDiagonal()), floor));
    }
  }
  SUBCASE("min x s.t. x^2 <= 0: a zero gradient, no CQ, no multipliers") {
    const model_at_point p = square_at_zero();
    check_all_storages(p);
    QUALIFY_CHECK_CLASSIFICATION(check_kkt(sparse_of<Eigen::RowMajor>(p)),
                                 kkt_classification::no_cq_holds);
  }
  SUBCASE("Kuhn and Tucker (1951): the cusp, MFCQ decided by its LP") {
    const model_at_point p = hs_point(kuhn_tucker_cusp(), vec({1, 0}));
    check_all_storages(p);
    const auto r = check_kkt(sparse_of<Eigen::ColMajor>(p));
    QUALIFY_CHECK_CLASSIFICATION(r, kkt_classification::no_cq_holds);
    REQUIRE(r.mfcq.has_value());  // the sparse check_mfcq ran
    CHECK(r.mfcq->result == verdict::fails);
  }
}

namespace {

/// A banded optimal-control model at a KKT point made by construction. Stages k = 0..N-1 carry
/// a state s_k (nx entries) and a control u_k (nu entries), variables ordered s_0, u_0, s_1,
/// u_1, ...; the rows: the initial condition s_0 = given (equalities), rate limits coupling
/// stage k and k + 1, s_{k+1,i} - s_{k,i} - b_{k,i} u_{k,0} <= r (inequalities, 3 entries),
/// and control bounds +-u_{k,j} <= 1. A few hundred inequalities are active with multipliers
/// drawn in [0.5, 2], the rest inactive with values in [-1, -0.1]; grad f = -J^T y*, so y* are
/// the multipliers, and they are unique when the active rows are independent.
struct control_point {
  sparse_point<Eigen::ColMajor> point;
  std::vector<Eigen::Triplet<double>> entries;  // of the Jacobian, for the independent sums
  VectorXd multipliers;                         // y* of the construction
  Index spare_variable = -1;                    // a variable no active row touches
};

control_point banded_control_point(Index stages, Index nx, Index nu, Index active_count,
                                   std::mt19937& rng) {
  std::uniform_real_distribution<double> coefficient(-1, 1), weight(0.5, 2), slack(0.1, 1);
  const Index stride = nx + nu, n = stages * stride;
  control_point out;
  auto& p = out.point;
  std::vector<constraint_type> types;
  Index row = 0;
  for (Index i = 0; i < nx; ++i, ++row) {  // s_0 = given
    out.entries.emplace_back(row, i, 1.0);
    types.push_back(constraint_type::equality);
  }
  for (Index k = 0; k + 1 < stages; ++k)  // rate limits
    for (Index i = 0; i < nx; ++i, ++row) {
      out.entries.emplace_back(row, (k + 1) * stride + i, 1.0);
      out.entries.emplace_back(row, k * stride + i, -1.0);
      out.entries.emplace_back(row, k * stride + nx, coefficient(rng));
      types.push_back(constraint_type::inequality);
    }
  for (Index k = 0; k < stages; ++k)  // control bounds
    for (Index j = 0; j < nu; ++j)
      for (double side : {1.0, -1.0}) {
        out.entries.emplace_back(row++, k * stride + nx + j, side);
        types.push_back(constraint_type::inequality);
      }
  const Index m = row;
  p.jacobian.resize(m, n);
  p.jacobian.setFromTriplets(out.entries.begin(), out.entries.end());
  p.types = types;
  p.kinds.assign(std::size_t(m), constraint_kind::affine);
  p.x = VectorXd::Zero(n);
  p.values.resize(m);
  out.multipliers = VectorXd::Zero(m);
  for (Index i = 0; i < m; ++i) p.values(i) = -slack(rng);
  // Active: the initial condition, random rate limits and random control bounds (one side
  // per control). They are independent: each rate limit alone has +1 on its s_{k+1,i}, and
  // the other rows are distinct unit rows on s_0 and the controls.
  std::vector<char> chosen(std::size_t(m), 0);
  for (Index i = 0; i < nx; ++i) {
    chosen[std::size_t(i)] = 1;
    out.multipliers(i) = coefficient(rng);
  }
  std::uniform_int_distribution<Index> pick(nx, m - 1);
  const Index bounds_start = nx + (stages - 1) * nx;
  for (Index count = 0; count < active_count;) {
    const Index i = pick(rng);
    const Index partner = i >= bounds_start ? ((i - bounds_start) % 2 ? i - 1 : i + 1) : i;
    if (chosen[std::size_t(i)] || chosen[std::size_t(partner)]) continue;
    chosen[std::size_t(i)] = 1;
    out.multipliers(i) = weight(rng);
    ++count;
  }
  for (Index i = 0; i < m; ++i)
    if (chosen[std::size_t(i)]) p.values(i) = 0;
  p.objective_gradient = -(p.jacobian.transpose() * out.multipliers);
  std::vector<char> touched(std::size_t(n), 0);
  for (const auto& e : out.entries)
    if (chosen[std::size_t(e.row())]) touched[std::size_t(e.col())] = 1;
  for (Index j = n - 1; j >= 0 && out.spare_variable < 0; --j)
    if (!touched[std::size_t(j)]) out.spare_variable = j;
  return out;
}

/// ||grad f + J^T y||_inf from the triplets, one entry at a time: a computation of the
/// stationarity residual that shares nothing with the library's sparse products.
double stationarity_by_entries(const control_point& c, const VectorXd& y) {
  std::vector<long double> r(std::size_t(c.point.x.size()));
  for (Index j = 0; j < c.point.x.size(); ++j) r[std::size_t(j)] = c.point.objective_gradient(j);
  for (const auto& e : c.entries) r[std::size_t(e.col())] += (long double)e.value() * y(e.row());
  long double worst = 0;
  for (long double v : r) worst = std::max(worst, std::abs(v));
  return double(worst);
}

}  // namespace

TEST_CASE("a banded optimal-control model with 1e4 variables, beyond the dense path") {
  // 2000 stages of 3 states and 2 controls: 10000 variables, 13997 rows (a dense Jacobian
  // would be 1.1 GB), 303 active rows. The multipliers of the construction are the reference.
  // Blocks, not SUBCASEs: doctest would run the common part again for each.
  std::mt19937 rng(20261205);
  const control_point c = banded_control_point(2000, 3, 2, 300, rng);
  const auto& p = c.point;
  REQUIRE(p.x.size() == 10000);
  REQUIRE(p.values.size() == 3 + 1999 * 3 + 2000 * 4);
  const kkt_report r = check_kkt(p);
  CAPTURE(r.message);
  QUALIFY_CHECK_VERDICT(r, verdict::holds);
  QUALIFY_CHECK_CLASSIFICATION(r, kkt_classification::kkt_unique_multipliers);
  CHECK(r.active.active.size() == 303);
  CHECK(r.licq.result == verdict::holds);
  CHECK(r.licq.rank == 303);
  CHECK(r.mfcq_result == verdict::holds);
  CHECK(r.multipliers_unique == verdict::holds);
  CHECK(r.source == multiplier_source::estimated);
  const double y_scale = c.multipliers.lpNorm<Eigen::Infinity>();
  CHECK((r.multipliers - c.multipliers).lpNorm<Eigen::Infinity>() <= 1e-10 * y_scale);
  // The residuals against sums over the entries.
  QUALIFY_CHECK_CLOSE(r.stationarity.raw, stationarity_by_entries(c, r.multipliers),
                      1e-14 * y_scale);
  CHECK(r.stationarity.raw <= 1e-12 * y_scale);
  CHECK(r.primal.raw == 0);  // every value <= 0, equalities at 0
  CHECK(r.dual.raw == 0);    // the estimate keeps lambda >= 0 exactly
  double products = 0;
  for (Index i = 0; i < p.values.size(); ++i)
    if (p.types[std::size_t(i)] == constraint_type::inequality)
      products = std::max(products, std::abs(r.multipliers(i) * p.values(i)));
  CHECK(r.complementarity.raw == products);
  // No Hessian is given (n x n dense at this size): second order says why.
  CHECK(r.second_order.result == second_order_result::not_checked);
  CHECK(contains(r.second_order.reason, "no Hessian of the objective"));
  // Row-major storage: the same answer.
  basic_model_at_point<Eigen::SparseMatrix<double, Eigen::RowMajor>> by_rows;
  by_rows.x = p.x;
  by_rows.objective_gradient = p.objective_gradient;
  by_rows.values = p.values;
  by_rows.jacobian = p.jacobian;
  by_rows.types = p.types;
  by_rows.kinds = p.kinds;
  check_agreement(r, check_kkt(by_rows));

  {  // a wrong gradient entry is named, with its size
    auto q = p;
    q.objective_gradient(c.spare_variable) += 1e-3;
    const kkt_report off = check_kkt(q);
    QUALIFY_CHECK_CLASSIFICATION(off, kkt_classification::not_kkt);
    CHECK(off.stationarity.worst == c.spare_variable);
    CHECK(off.stationarity.raw == doctest::Approx(1e-3).epsilon(1e-9));
    CHECK(off.stationarity.over == std::vector<Index>{c.spare_variable});
  }
  {  // a violated row is named
    auto q = p;
    const Index row = q.values.size() - 1;  // a control bound
    q.values(row) = 0.5;
    const kkt_report off = check_kkt(q);
    QUALIFY_CHECK_CLASSIFICATION(off, kkt_classification::not_kkt);
    CHECK(off.primal.over == std::vector<Index>{row});
    CHECK(off.primal.raw == 0.5);
  }
  {  // a redundant active row: LICQ fails, the multiplier set is a segment
    // Append 2 a - 0.5 b for two active rate limits a and b (both with y* > 0): the new row is
    // active with multiplier 0 in y*, so y* + w (N) stays a multiplier for w in an interval.
    const kkt_report base = r;
    std::vector<Index> rate_rows;
    for (Index i : base.active.active)
      if (i >= 3 && i < 3 + 1999 * 3) rate_rows.push_back(i);
    REQUIRE(rate_rows.size() >= 2);
    const Index a = rate_rows[0], b = rate_rows[1];
    auto q = p;
    const Index m = q.values.size(), added = m;
    std::vector<Eigen::Triplet<double>> entries = c.entries;
    for (const auto& e : c.entries) {
      if (e.row() == a) entries.emplace_back(added, e.col(), 2 * e.value());
      if (e.row() == b) entries.emplace_back(added, e.col(), -0.5 * e.value());
    }
    q.jacobian.resize(m + 1, q.x.size());
    q.jacobian.setFromTriplets(entries.begin(), entries.end());
    q.values.conservativeResize(m + 1);
    q.values(added) = 0;
    q.types.push_back(constraint_type::inequality);
    q.kinds.push_back(constraint_kind::affine);
    const kkt_report d = check_kkt(q);
    CAPTURE(d.message);
    QUALIFY_CHECK_VERDICT(d, verdict::holds);
    CHECK(d.licq.result == verdict::fails);
    CHECK(d.licq.rank == 303);
    CHECK(d.multipliers_unique == verdict::fails);
    CHECK(d.multipliers_bounded == verdict::holds);
    // y(added) = w, y(a) = y*_a - 2 w >= 0, y(b) = y*_b + 0.5 w: w in [0, y*_a / 2]
    // (hand-derived from the construction), whichever row the factorisation names dependent.
    std::map<Index, std::pair<double, double>> ranges;
    for (const auto& range : d.ranges) ranges[range.row] = {range.lower, range.upper};
    REQUIRE(ranges.size() == 3);
    const double ya = c.multipliers(a), yb = c.multipliers(b);
    QUALIFY_CHECK_CLOSE(ranges[added].first, 0.0, 1e-9 * y_scale);
    QUALIFY_CHECK_CLOSE(ranges[added].second, ya / 2, 1e-9 * y_scale);
    QUALIFY_CHECK_CLOSE(ranges[a].first, 0.0, 1e-9 * y_scale);
    QUALIFY_CHECK_CLOSE(ranges[a].second, ya, 1e-9 * y_scale);
    QUALIFY_CHECK_CLOSE(ranges[b].first, yb, 1e-9 * y_scale);
    QUALIFY_CHECK_CLOSE(ranges[b].second, yb + ya / 4, 1e-9 * y_scale);
  }
  {  // above active_dense_limit: no estimate, the limit named; given multipliers still
    kkt_options o;
    o.active_dense_limit = 1000000;  // 303 x 10000 is above it
    const kkt_report none = check_kkt(p, o);
    QUALIFY_CHECK_VERDICT(none, verdict::undecided);
    QUALIFY_CHECK_CLASSIFICATION(none, kkt_classification::undecided);
    CHECK(none.source == multiplier_source::none);
    CHECK(none.multipliers.size() == 0);
    CHECK(has_code(none, "multipliers_not_estimated"));
    CHECK(contains(none.message, "active_dense_limit (1000000 entries)"));
    CHECK(none.primal.result == verdict::holds);
    CHECK(none.stationarity.result == verdict::not_checked);
    CHECK(none.licq.result == verdict::holds);
    // The text and JSON forms of a report without multipliers.
    CHECK(contains(fmt::format("{:f}", none), "multipliers_not_estimated"));
    CHECK(contains(to_json(none), "\"multiplier_source\":\"none\",\"multipliers\":{}"));
    const kkt_report given = check_kkt(p, c.multipliers, o);
    QUALIFY_CHECK_CLASSIFICATION(given, kkt_classification::kkt_unique_multipliers);
    QUALIFY_CHECK_CLOSE(given.stationarity.raw, stationarity_by_entries(c, c.multipliers),
                        1e-14 * y_scale);
    auto infeasible = p;
    infeasible.values(infeasible.values.size() - 1) = 0.5;
    const kkt_report off = check_kkt(infeasible, o);
    QUALIFY_CHECK_CLASSIFICATION(off, kkt_classification::not_kkt);
    CHECK(off.primal.over == std::vector<Index>{infeasible.values.size() - 1});
  }
}

TEST_CASE("second order above active_dense_limit is not checked, and says which limit") {
  // HS problem with given Hessians: within the limit the sparse path decides as the dense one;
  // a limit below the active block's size leaves second order unchecked, with the reason.
  const auto problems = hock_schittkowski();
  const auto p = *std::find_if(problems.begin(), problems.end(),
                               [](const hs_problem& h) { return h.objective_hessian.size() > 0; });
  INFO("HS" << p.number);
  const model_at_point at = hs_point(p, p.x_star);
  const kkt_report dense = check_kkt(at, options_for(p));
  REQUIRE(dense.second_order.result != second_order_result::not_checked);
  REQUIRE(!dense.active.active.empty());
  kkt_options o = options_for(p);
  o.active_dense_limit = dense.active.active.size() * std::size_t(at.x.size()) - 1;
  // The estimate needs the same block: none, and the report names the limit.
  const kkt_report limited = check_kkt(sparse_of<Eigen::ColMajor>(at), o);
  QUALIFY_CHECK_CLASSIFICATION(limited, kkt_classification::undecided);
  CHECK(limited.source == multiplier_source::none);
  CHECK(has_code(limited, "multipliers_not_estimated"));
  CHECK(limited.second_order.result == second_order_result::not_checked);
  // With the multipliers given, the residuals are decided and only second order is left out.
  const kkt_report given = check_kkt(sparse_of<Eigen::ColMajor>(at), dense.multipliers, o);
  QUALIFY_CHECK_VERDICT(given, verdict::holds);
  CHECK(given.second_order.result == second_order_result::not_checked);
  CHECK(contains(given.second_order.reason, "active_dense_limit"));
  CHECK(has_code(given, "second_order_not_checked"));
  o.active_dense_limit += 1;  // exactly the block: decided as in the dense path
  check_agreement(check_kkt(at, dense.multipliers, o),
                  check_kkt(sparse_of<Eigen::ColMajor>(at), dense.multipliers, o));
}

TEST_CASE("sparse storage: repeated entries are summed, malformed storage is invalid input") {
  const model_at_point tank = tank_point();  // two inequalities in two variables
  const auto sparse = sparse_of<Eigen::ColMajor>(tank);
  REQUIRE(check_kkt(sparse).result == verdict::holds);

  SUBCASE("repeated and unordered entries are summed per position") {
    // Column 0 holds rows (0) only; column 1 rows (0, 1). Store column 1 as (1, 0, 0) with
    // values (1, -0.25, -0.75): unordered, row 0 twice, summing to the same matrix.
    Eigen::SparseMatrix<double> j(2, 2);
    j.reserve(4);
    j.insert(0, 0) = -1;
    j.insert(0, 1) = 0;
    j.insert(1, 1) = 0;
    j.insert(1, 0) = 0;  // a fourth slot, rewritten below as a repeat in column 1
    j.makeCompressed();
    // Column 0: rows 0, 1 with -1, 0 -> keep -1 at row 0 and move the other slot to column 1.
    auto* outer = j.outerIndexPtr();
    auto* inner = j.innerIndexPtr();
    auto* value = j.valuePtr();
    outer[1] = 1;
    inner[0] = 0, value[0] = -1;
    inner[1] = 1, value[1] = 1;
    inner[2] = 0, value[2] = -0.25;
    inner[3] = 0, value[3] = -0.75;
    auto odd = sparse;
    odd.jacobian = j;  // copies the storage as it is
    REQUIRE(odd.jacobian.nonZeros() == 4);
    check_agreement(check_kkt(tank), check_kkt(odd));
  }
  SUBCASE("an index out of range") {
    auto bad = sparse;
    bad.jacobian.innerIndexPtr()[0] = 7;
    expect_invalid(check_kkt(bad), "invalid_sparse_structure",
                   "jacobian column 0 has an entry in row 7");
  }
  SUBCASE("non-finite entries, named as in the dense path") {
    auto bad = sparse;
    bad.jacobian.coeffRef(1, 1) = std::numeric_limits<double>::quiet_NaN();
    expect_invalid(check_kkt(bad), "non_finite_entry", "jacobian entry (1, 1) is NaN");
    auto dense = tank;
    dense.jacobian(1, 1) = std::numeric_limits<double>::quiet_NaN();
    CHECK(check_kkt(dense).message == check_kkt(bad).message);
    auto rows = sparse_of<Eigen::RowMajor>(tank);
    rows.jacobian.coeffRef(0, 1) = -std::numeric_limits<double>::infinity();
    expect_invalid(check_kkt(rows), "non_finite_entry", "jacobian entry (0, 1) is -Inf");
  }
  SUBCASE("wrong sizes") {
    auto wide = sparse;
    wide.jacobian.resize(2, 3);
    expect_invalid(check_kkt(wide), "dimension_mismatch", "jacobian has 3 columns, expected 2");
    auto values = sparse;
    values.values = vec({0});
    expect_invalid(check_kkt(values), "value_count", "values has 1 entries, expected 2");
    auto types = sparse;
    types.types.pop_back();
    expect_invalid(check_kkt(types), "type_count", "types has 1 entries");
    expect_invalid(check_kkt(sparse, vec({1, 2, 3})), "multiplier_count",
                   "multipliers has 3 entries, expected 2");
    expect_invalid(check_kkt(sparse, vec({std::numeric_limits<double>::quiet_NaN(), 0})),
                   "non_finite_entry", "multipliers entry 0 is NaN");
  }
}
