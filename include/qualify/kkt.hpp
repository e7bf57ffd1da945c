// qualify: KKT certificates at a candidate point: multipliers, residuals, constraint
// qualifications, multiplier ranges, strict complementarity, second order, convex sufficiency.
// SPDX-License-Identifier: MIT
#pragma once

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <functional>
#include <limits>
#include <optional>
#include <qualify/constraints.hpp>
#include <qualify/licq.hpp>
#include <qualify/linear_cq.hpp>
#include <qualify/lp.hpp>
#include <qualify/mfcq.hpp>
#include <qualify/model.hpp>
#include <qualify/report.hpp>
#include <qualify/sparse_licq.hpp>
#include <string>
#include <string_view>
#include <tuple>
#include <type_traits>
#include <utility>
#include <vector>

namespace qualify {

/// What a candidate point is, as far as the KKT conditions and the checks around them tell.
enum class kkt_classification {
  not_checked,             ///< a default-constructed report, or invalid input
  not_kkt,                 ///< a residual fails: not a KKT point (with the multipliers given)
  undecided,               ///< no residual fails, but one lies in the band above its threshold
  kkt,                     ///< a KKT point whose multipliers are not shown to be unique
  kkt_unique_multipliers,  ///< a KKT point with exactly one multiplier vector
  strict_local_min,        ///< a KKT point where the second-order sufficient conditions hold
  global_min,              ///< a KKT point of a model declared convex, every premise checked
  no_cq_holds,             ///< no CQ holds and no multipliers exist: KKT says nothing here
};

/// Stable strings (JSON, logs); never renamed once released.
constexpr std::string_view to_string(kkt_classification c) noexcept {
  switch (c) {
    case kkt_classification::not_kkt:
      return "not_kkt";
    case kkt_classification::undecided:
      return "undecided";
    case kkt_classification::kkt:
      return "kkt";
    case kkt_classification::kkt_unique_multipliers:
      return "kkt_unique_multipliers";
    case kkt_classification::strict_local_min:
      return "strict_local_min";
    case kkt_classification::global_min:
      return "global_min";
    case kkt_classification::no_cq_holds:
      return "no_cq_holds";
    case kkt_classification::not_checked:
      break;
  }
  return "not_checked";
}

/// The outcome of the second-order tests (DESIGN.md, section 2).
enum class second_order_result {
  not_checked,     ///< not a KKT point, no Hessian, or above kkt_options::second_order_limit
  sufficient,      ///< positive definite on null([J_E; J_A+]): a strict local minimiser
  necessary_only,  ///< positive semidefinite, singular, on null([J_E; J_A]) = null([J_E; J_A+])
  fails,           ///< negative curvature on null([J_E; J_A]) with unique multipliers
  undecided,       ///< weakly active rows, eigenvalues in the band, or multipliers not unique
};

constexpr std::string_view to_string(second_order_result r) noexcept {
  switch (r) {
    case second_order_result::sufficient:
      return "sufficient";
    case second_order_result::necessary_only:
      return "necessary_only";
    case second_order_result::fails:
      return "fails";
    case second_order_result::undecided:
      return "undecided";
    case second_order_result::not_checked:
      break;
  }
  return "not_checked";
}

/// Where the multipliers of a report come from.
enum class multiplier_source { none, given, estimated };

constexpr std::string_view to_string(multiplier_source s) noexcept {
  switch (s) {
    case multiplier_source::given:
      return "given";
    case multiplier_source::estimated:
      return "estimated";
    case multiplier_source::none:
      break;
  }
  return "none";
}

/// Settings of `check_kkt`. The Lagrangian is L = f + sum_i y_i c_i over the rows c_i (g_i or
/// h_j), so stationarity reads grad f + J^T y = 0 and inequality multipliers are >= 0. With
/// s_d = max(s_max, (||lambda||_1 + ||mu||_1) / m) / s_max (m constraints; 1 when m = 0), the
/// scaling of DESIGN.md that divides out large multipliers (common practice in interior-point
/// codes, no single source), each residual is decided as below. A residual holds at or below
/// its threshold, fails above undecided_band times it, and is undecided in between.
struct kkt_options {
  /// Active rows and the primal test: inequality i is active when g_i >= -tol * s_i with
  /// s_i = max(1, ||grad c_i||_2), and a row is violated when g_i > tol * s_i, resp.
  /// |h_j| > tol * s_j; the primal residual is max_i violation_i / s_i, compared with tol.
  activity_options activity;
  /// Stationarity: ||grad f + J^T y||_inf / s_d <= tol * max(1, ||grad f||_inf) (relative to
  /// the objective's gradient, absolute below 1).
  double stationarity_tolerance = 1e-6;
  /// Dual feasibility: max_i max(0, -lambda_i) / max(1, ||y||_inf) <= tol over the
  /// inequalities (relative to the largest multiplier, absolute below 1).
  double dual_tolerance = 1e-6;
  /// Complementarity: max_i |lambda_i g_i| / s_d <= tol * max(1, ||grad f||_inf) over the
  /// inequalities (scaled like stationarity).
  double complementarity_tolerance = 1e-6;
  /// Holds at or below a threshold, fails above band times it, undecided in between (also for
  /// uniqueness and eigenvalues; common practice, no source).
  double undecided_band = 10.0;
  /// s_max of the scaling s_d (100 in DESIGN.md; common practice in interior-point codes, no
  /// single source).
  double multiplier_scale_cap = 100.0;
  /// An active inequality is weakly active when the largest value its multiplier takes over
  /// the multiplier set is <= tol * max(1, ||y||_inf) (relative; common practice, no source).
  double weak_activity_tolerance = 1e-6;
  /// The multipliers are unique when every range over the multiplier set has width
  /// <= tol * max(1, ||y||_inf); not unique above band times that (relative to the LP engine's
  /// 1e-8 accuracy; common practice, no source).
  double uniqueness_tolerance = 1e-6;
  /// An eigenvalue e of a reduced Hessian is zero when |e| <= theta, theta = tol * ||H||_F +
  /// the error estimate of H (finite differences; 0 for a Hessian given), H the Hessian of the
  /// Lagrangian; positive definite needs e > band * theta, negative curvature e < -band * theta.
  /// Default 1e-8, about sqrt(eps) (common practice, no source). Also the test of convexity
  /// at x: a Hessian given for f or an inequality must have no eigenvalue < -band * tol * ||H||_F.
  double eigenvalue_tolerance = 1e-8;
  /// Second order is not checked when a reduced Hessian would be larger than this (k x k; its
  /// eigenvalues cost about 9 k^3 flops, a finite-difference Hessian 2n model evaluations).
  Index second_order_limit = 2000;
  /// Relative step of the central differences of gradients that give the Hessian of the
  /// Lagrangian when a callback model has none: h_j = step * max(1, |x_j|). Automatic:
  /// eps^(1/3) ~ 6e-6, which balances truncation (~h^2) and rounding (~eps / h) (Nocedal and
  /// Wright, Numerical Optimization, 2nd ed., 2006, sec. 8.1; from memory).
  std::optional<double> difference_step;
  /// Multiplier ranges (two LPs per multiplier that a dependence involves) are computed when
  /// at most this many multipliers are involved; beyond, uniqueness is left undecided.
  Index range_limit = 500;
  /// Sparse Jacobians (sparse_model_at_point): the multiplier estimate and the null spaces of
  /// second order work on a dense copy of the q active rows (q x n; never of the whole
  /// Jacobian), made only when q * n <= this (16M entries, 128 MiB of doubles, as
  /// licq_options::sparse_dense_limit). Above it the multipliers are not estimated (give them,
  /// or the verdict is undecided) and second order is not checked; a finding names the limit.
  std::size_t active_dense_limit = std::size_t(1) << 24;
  /// Rank decisions: LICQ and the null-space bases (`licq.activity` is replaced by `activity`).
  licq_options licq;
  /// MFCQ, checked when LICQ does not hold (`mfcq.licq` is replaced by `licq`).
  mfcq_options mfcq;
  /// The LPs of the multiplier ranges.
  lp_options lp;

  /// Empty when valid, else a message naming the field and the rule it breaks.
  std::string validate() const {
    const auto non_negative = [](double v) { return std::isfinite(v) && v >= 0; };
    if (!non_negative(stationarity_tolerance))
      return "kkt_options.stationarity_tolerance must be finite and >= 0";
    if (!non_negative(dual_tolerance)) return "kkt_options.dual_tolerance must be finite and >= 0";
    if (!non_negative(complementarity_tolerance))
      return "kkt_options.complementarity_tolerance must be finite and >= 0";
    if (!(std::isfinite(undecided_band) && undecided_band >= 1))
      return "kkt_options.undecided_band must be finite and >= 1";
    if (!(std::isfinite(multiplier_scale_cap) && multiplier_scale_cap > 0))
      return "kkt_options.multiplier_scale_cap must be finite and > 0";
    if (!non_negative(weak_activity_tolerance))
      return "kkt_options.weak_activity_tolerance must be finite and >= 0";
    if (!non_negative(uniqueness_tolerance))
      return "kkt_options.uniqueness_tolerance must be finite and >= 0";
    if (!non_negative(eigenvalue_tolerance))
      return "kkt_options.eigenvalue_tolerance must be finite and >= 0";
    if (second_order_limit < 0) return "kkt_options.second_order_limit must be >= 0";
    if (difference_step &&
        !(std::isfinite(*difference_step) && *difference_step > 0 && *difference_step < 1))
      return "kkt_options.difference_step must be finite and in (0, 1)";
    if (range_limit < 0) return "kkt_options.range_limit must be >= 0";
    if (auto bad = activity.validate(); !bad.empty()) return "kkt_options." + bad;
    if (auto bad = licq.validate(); !bad.empty()) return "kkt_options." + bad;
    if (auto bad = mfcq.validate(); !bad.empty()) return "kkt_options." + bad;
    detail::lp_general empty;
    if (auto bad = detail::lp_validate(empty, lp); !bad.empty())
      return "kkt_options.lp." + bad.substr(bad.find('.') + 1);
    return {};
  }
};

/// One KKT residual: as computed, as scaled, and the decision on it (see kkt_options).
struct kkt_residual {
  verdict result = verdict::not_checked;
  double raw = 0;        ///< in the model's units
  double scaled = 0;     ///< the figure compared with the threshold
  double threshold = 0;  ///< holds when scaled <= threshold, fails above band * threshold
  double margin = 0;     ///< scaled / threshold
  Index worst = -1;      ///< the variable (stationarity) or row (the others) of the largest entry
  std::vector<Index> over;  ///< variables (stationarity) or rows above the threshold
};

/// The values one multiplier takes over the multiplier set (+-inf when unbounded).
struct multiplier_range {
  Index row = 0;
  double lower = 0, upper = 0;
};

/// The Hessian of the Lagrangian restricted to the null space of some active gradients.
struct reduced_hessian {
  bool computed = false;
  std::vector<Index> rows;    ///< the constraint rows whose gradients define the subspace
  Index constraint_rank = 0;  ///< their rank (relative threshold of licq_options)
  Index dimension = 0;        ///< of the subspace: variables - constraint_rank
  Index positive = 0, negative = 0, zero = 0;                  ///< inertia (zero: |e| <= theta)
  double smallest = std::numeric_limits<double>::quiet_NaN();  ///< NaN when dimension is 0
  double largest = std::numeric_limits<double>::quiet_NaN();
};

/// The second-order tests: sufficient on null([J_E; J_A+]) (A+ the strongly active
/// inequalities), necessary on null([J_E; J_A]).
struct second_order_report {
  second_order_result result = second_order_result::not_checked;
  std::string reason = "check_kkt was not called";  ///< how it was decided, or why not
  std::string hessian_source;         ///< "model", "finite_differences", or empty when none
  double hessian_norm = 0;            ///< ||H||_F of the Hessian of the Lagrangian
  double hessian_error_estimate = 0;  ///< of a finite-difference Hessian (||.||_F)
  double eigenvalue_threshold = 0;    ///< theta (kkt_options::eigenvalue_tolerance)
  reduced_hessian sufficient;
  reduced_hessian necessary;
};

/// What `check_kkt` found. Rows are numbered as in the model (its Jacobian's rows).
struct kkt_report {
  verdict result = verdict::not_checked;  ///< holds: a KKT point, certified within tolerance
  kkt_classification classification = kkt_classification::not_checked;
  std::string message = "check_kkt was not called";
  Index variables = 0, constraints = 0;
  active_set active;              ///< active, near-active and violated rows, the tolerance used
  Eigen::VectorXd row_violation;  ///< max(0, g_i) or |h_j| per row (primal infeasibility)
  multiplier_source source = multiplier_source::none;
  Eigen::VectorXd multipliers;   ///< one per row: given, or estimated (0 on inactive rows)
  int estimate_iterations = 0;   ///< of the bounded least-squares estimate
  double multiplier_scale = 1;   ///< s_d
  double stationarity_norm = 0;  ///< ||grad f + J^T y||_2 (with estimated y: the least value)
  kkt_residual stationarity, primal, dual, complementarity;
  licq_report licq;            ///< on the active rows (licq.active holds the active set)
  linear_cq_report linear_cq;  ///< on the active rows
  std::optional<mfcq_report>
      mfcq;  ///< run when LICQ does not hold (rows: active inequalities, then equalities)
  verdict mfcq_result = verdict::not_checked;
  /// "licq" (LICQ implies MFCQ), "multiplier_ranges" (at a KKT point MFCQ holds exactly when
  /// the multiplier set is bounded: Gauvin, Math. Programming 12, 1977; the ranges say whether
  /// it is, with no LP of n + 1 columns), or "check_mfcq" (its LP, in `mfcq`).
  std::string mfcq_decided_by;
  verdict multipliers_unique = verdict::not_checked;   ///< LICQ, or ranges of width 0 (strict MFCQ)
  verdict multipliers_bounded = verdict::not_checked;  ///< LICQ, finite ranges, or MFCQ (Gauvin)
  std::vector<multiplier_range> ranges;  ///< multipliers a dependence involves (others are fixed)
  std::vector<Index> strongly_active, weakly_active;  ///< active inequalities by multiplier
  double complementarity_margin =
      std::numeric_limits<double>::quiet_NaN();  ///< min over active inequalities of the largest
                                                 ///< multiplier; NaN when none
  second_order_report second_order;
  std::vector<std::string> premises;  ///< of a global_min: every premise, as checked
  row_names names;
  std::vector<finding> findings;
};

namespace detail {

/// The Hessian of the Lagrangian at the point for multipliers y, or why there is none.
struct lagrangian_hessian {
  Eigen::MatrixXd matrix;     ///< n x n, symmetrised; empty when unavailable
  std::string source;         ///< "model" or "finite_differences"
  double error_estimate = 0;  ///< of ||matrix - exact||_F (finite differences)
  std::string unavailable;    ///< why there is none (empty when there is one)
  std::string failure_code;   ///< a finding code when an evaluation failed
};
using hessian_function = std::function<lagrangian_hessian(const Eigen::VectorXd& y)>;

inline kkt_report invalid_kkt(kkt_report rep, std::string code, std::string message) {
  rep.result = verdict::invalid_input;
  rep.classification = kkt_classification::not_checked;
  rep.message = "invalid input: " + message;
  rep.second_order.reason = "not checked: invalid input";
  add_finding(rep.findings, severity::error, std::move(code), std::move(message), {}, rep.names);
  return rep;
}

// The few operations on the Jacobian that differ between dense and sparse points.

template <class Jacobian>
inline constexpr bool is_sparse_jacobian = !std::is_same_v<Jacobian, Eigen::MatrixXd>;

/// 2-norms of the rows, column by column (a row of a column-major matrix is strided); a row
/// whose squares overflow is measured again with the scaled norm.
inline Eigen::VectorXd jacobian_row_norms(const Eigen::MatrixXd& j) {
  Eigen::VectorXd norms = j.rowwise().squaredNorm().cwiseSqrt();
  for (Index i = 0; i < j.rows(); ++i)
    if (!std::isfinite(norms(i))) norms(i) = j.row(i).stableNorm();
  return norms;
}

template <int Options>
Eigen::VectorXd jacobian_row_norms(const Eigen::SparseMatrix<double, Options>& j) {
  std::vector<double> norms;
  std::vector<sparse_index> counts;
  sparse_row_norms(j, norms, counts);
  return Eigen::Map<const Eigen::VectorXd>(norms.data(), Index(norms.size()));
}

/// The rows `rows` of the Jacobian in that order: dense for a dense Jacobian, sparse
/// (row-major) for a sparse one (MFCQ's input).
inline Eigen::MatrixXd jacobian_rows(const Eigen::MatrixXd& j, const std::vector<Index>& rows) {
  return j(rows, Eigen::all);
}

/// Position of each row of an m-row Jacobian in `rows` (-1: not there).
inline std::vector<Index> positions_of(Index m, const std::vector<Index>& rows) {
  std::vector<Index> at(std::size_t(m), -1);
  for (std::size_t k = 0; k < rows.size(); ++k) at[std::size_t(rows[k])] = Index(k);
  return at;
}

template <int Options>
Eigen::SparseMatrix<double, Eigen::RowMajor> jacobian_rows(
    const Eigen::SparseMatrix<double, Options>& j, const std::vector<Index>& rows) {
  const std::vector<Index> at = positions_of(j.rows(), rows);
  std::vector<Eigen::Triplet<double>> entries;
  for (Index c = 0; c < j.outerSize(); ++c)
    for (typename Eigen::SparseMatrix<double, Options>::InnerIterator it(j, c); it; ++it)
      if (const Index k = at[std::size_t(it.row())]; k >= 0)
        entries.emplace_back(k, it.col(), it.value());
  Eigen::SparseMatrix<double, Eigen::RowMajor> out(Index(rows.size()), j.cols());
  out.setFromTriplets(entries.begin(), entries.end());
  return out;
}

/// The rows `rows` as a dense |rows| x n block (for a sparse Jacobian the caller has checked
/// kkt_options::active_dense_limit).
inline Eigen::MatrixXd dense_rows(const Eigen::MatrixXd& j, const std::vector<Index>& rows) {
  return jacobian_rows(j, rows);
}

template <int Options>
Eigen::MatrixXd dense_rows(const Eigen::SparseMatrix<double, Options>& j,
                           const std::vector<Index>& rows) {
  const std::vector<Index> at = positions_of(j.rows(), rows);
  Eigen::MatrixXd out = Eigen::MatrixXd::Zero(Index(rows.size()), j.cols());
  for (Index c = 0; c < j.outerSize(); ++c)
    for (typename Eigen::SparseMatrix<double, Options>::InnerIterator it(j, c); it; ++it)
      if (const Index k = at[std::size_t(it.row())]; k >= 0) out(k, it.col()) += it.value();
  return out;
}

/// Whether q rows of a Jacobian with n columns may be copied dense: always for a dense
/// Jacobian (they are dense already), within kkt_options::active_dense_limit for a sparse one.
template <class Jacobian>
bool active_block_fits(Index q, Index n, const kkt_options& o) {
  if constexpr (!is_sparse_jacobian<Jacobian>) return true;
  return q == 0 || std::size_t(n) <= o.active_dense_limit / std::size_t(q);
}

/// "the active block q x n exceeds kkt_options::active_dense_limit (L entries)"
inline std::string active_block_too_large(Index q, Index n, const kkt_options& o) {
  return "the dense copy of the " + std::to_string(q) + " x " + std::to_string(n) +
         " active rows of the sparse Jacobian would exceed active_dense_limit (" +
         std::to_string(o.active_dense_limit) + " entries)";
}

/// The least-squares solution on the passive columns of r (minimum norm when they are
/// dependent), zero elsewhere: argmin ||r_P s_P + c||_2.
inline Eigen::VectorXd passive_solve(const Eigen::MatrixXd& r, const Eigen::VectorXd& c,
                                     const std::vector<char>& passive) {
  std::vector<Index> cols;
  for (Index j = 0; j < Index(passive.size()); ++j)
    if (passive[std::size_t(j)]) cols.push_back(j);
  Eigen::VectorXd s = Eigen::VectorXd::Zero(r.cols());
  if (cols.empty()) return s;
  const Eigen::MatrixXd rp = r(Eigen::all, cols);
  const Eigen::VectorXd sp = Eigen::CompleteOrthogonalDecomposition<Eigen::MatrixXd>(rp).solve(-c);
  s(cols) = sp;
  return s;
}

struct bounded_least_squares_result {
  Eigen::VectorXd z;
  int iterations = 0;
  bool converged = true;
};

/// min ||r z + c||_2 subject to z_j >= 0 where `bounded[j]`, other z_j free: the active-set
/// method NNLS of Lawson and Hanson (Solving Least Squares Problems, 1974, ch. 23), with the
/// free variables kept in the passive set from the start (the usual extension to unrestricted
/// variables) and a warm start: the passive set of the unconstrained solution's positive
/// entries, taken when its least-squares solution is feasible (the common case at a KKT point
/// with strict complementarity: one solve, no iteration).
inline bounded_least_squares_result bounded_least_squares(const Eigen::MatrixXd& r,
                                                          const Eigen::VectorXd& c,
                                                          const std::vector<char>& bounded) {
  const Index q = r.cols();
  const double eps = std::numeric_limits<double>::epsilon();
  const auto at = [](auto& v, Index j) -> decltype(auto) { return v[std::size_t(j)]; };
  bounded_least_squares_result out;
  std::vector<char> passive(std::size_t(q), 1);
  Eigen::VectorXd s = passive_solve(r, c, passive);
  for (Index j = 0; j < q; ++j)
    if (at(bounded, j) && !(s(j) > 0)) at(passive, j) = 0;
  s = passive_solve(r, c, passive);
  out.iterations = 2;
  bool feasible = true;
  for (Index j = 0; j < q; ++j)
    if (at(bounded, j) && at(passive, j) && !(s(j) > 0)) feasible = false;
  Eigen::VectorXd z = s;
  if (!feasible) {  // cold start: only the free variables passive
    for (Index j = 0; j < q; ++j) at(passive, j) = !at(bounded, j);
    z = passive_solve(r, c, passive);
    ++out.iterations;
  }
  const int max_iterations = 3 * int(q) + 10;
  std::vector<char> skipped(std::size_t(q), 0);
  while (true) {
    const Eigen::VectorXd w = -(r.transpose() * (r * z + c));  // minus the gradient
    const double tol = 10 * eps * double(q) * (c.norm() + r.norm() * z.norm());
    Index t = -1;
    for (Index j = 0; j < q; ++j)
      if (at(bounded, j) && !at(passive, j) && !at(skipped, j) && w(j) > tol &&
          (t < 0 || w(j) > w(t)))
        t = j;
    if (t < 0) break;
    if (out.iterations >= max_iterations) {
      out.converged = false;
      break;
    }
    at(passive, t) = 1;
    bool entering = true;
    while (true) {
      ++out.iterations;
      s = passive_solve(r, c, passive);
      if (entering && !(s(t) > 0)) {  // rounding: the column does not help after all
        at(passive, t) = 0;
        at(skipped, t) = 1;
        break;
      }
      entering = false;
      double alpha = 1;
      bool blocked = false;
      for (Index j = 0; j < q; ++j)
        if (at(bounded, j) && at(passive, j) && !(s(j) > 0)) {
          alpha = std::min(alpha, z(j) / (z(j) - s(j)));
          blocked = true;
        }
      if (!blocked) {
        z = s;
        std::fill(skipped.begin(), skipped.end(), 0);
        break;
      }
      z += alpha * (s - z);
      const double tiny = eps * z.cwiseAbs().maxCoeff();
      for (Index j = 0; j < q; ++j)
        if (at(bounded, j) && at(passive, j) && z(j) <= tiny) {
          at(passive, j) = 0;
          z(j) = 0;
        }
      if (out.iterations >= max_iterations) {
        out.converged = false;
        break;
      }
    }
    if (!out.converged) break;
  }
  for (Index j = 0; j < q; ++j)
    if (at(bounded, j)) z(j) = std::max(z(j), 0.0);
  out.z = std::move(z);
  return out;
}

/// Multipliers y that minimise ||grad f + J^T y||_2 with y_i >= 0 on the active inequalities,
/// y_i free on the equalities and y_i = 0 elsewhere (and on zero gradients). Solved on unit
/// gradients (a positive column scaling keeps the signs and helps the conditioning), reduced
/// to a square problem by one Householder QR: ||g + A z|| = ||Q1^T g + R z|| plus a constant.
template <class Jacobian>
bounded_least_squares_result estimate_multipliers(const basic_model_at_point<Jacobian>& p,
                                                  const std::vector<Index>& active,
                                                  const Eigen::VectorXd& row_norms,
                                                  Eigen::VectorXd& y) {
  const Index n = p.x.size();
  y = Eigen::VectorXd::Zero(p.values.size());
  std::vector<Index> cols;
  for (Index i : active)
    if (row_norms(i) > 0) cols.push_back(i);
  const Index q = Index(cols.size());
  if (q == 0) return {};
  Eigen::MatrixXd a = dense_rows(p.jacobian, cols).transpose();
  std::vector<char> bounded(static_cast<std::size_t>(q));
  for (Index k = 0; k < q; ++k) {
    a.col(k) /= row_norms(cols[std::size_t(k)]);
    bounded[std::size_t(k)] =
        p.types[std::size_t(cols[std::size_t(k)])] == constraint_type::inequality;
  }
  const Eigen::HouseholderQR<Eigen::MatrixXd> qr(a);
  const Index k = std::min(n, q);
  const Eigen::MatrixXd r = qr.matrixQR().topRows(k).triangularView<Eigen::Upper>();
  Eigen::VectorXd c = p.objective_gradient;
  c.applyOnTheLeft(qr.householderQ().adjoint());
  auto result = bounded_least_squares(r, c.head(k), bounded);
  for (Index j = 0; j < q; ++j)
    y(cols[std::size_t(j)]) = result.z(j) / row_norms(cols[std::size_t(j)]);
  return result;
}

inline void decide_residual(kkt_residual& r, double band) {
  r.margin = r.threshold > 0 ? r.scaled / r.threshold
                             : (r.scaled > 0 ? std::numeric_limits<double>::infinity() : 0.0);
  r.result = r.scaled <= r.threshold         ? verdict::holds
             : r.scaled > band * r.threshold ? verdict::fails
                                             : verdict::undecided;
}

/// The four residuals of rep.multipliers (see kkt_options for each rule).
template <class Jacobian>
void compute_residuals(const basic_model_at_point<Jacobian>& p, const Eigen::VectorXd& row_norms,
                       const kkt_options& o, kkt_report& rep) {
  const Index n = p.x.size(), m = p.values.size();
  const Eigen::VectorXd& y = rep.multipliers;
  const double grad_ref = std::max(1.0, p.objective_gradient.template lpNorm<Eigen::Infinity>());
  const double y_ref = std::max(1.0, m > 0 ? y.lpNorm<Eigen::Infinity>() : 0.0);
  rep.multiplier_scale =
      m > 0 ? std::max(o.multiplier_scale_cap, y.lpNorm<1>() / double(m)) / o.multiplier_scale_cap
            : 1.0;
  const double sd = rep.multiplier_scale;
  Eigen::VectorXd r = p.objective_gradient;
  if (m > 0) r.noalias() += p.jacobian.transpose() * y;
  rep.stationarity_norm = r.stableNorm();

  auto& st = rep.stationarity;
  st.threshold = o.stationarity_tolerance * grad_ref;
  for (Index j = 0; j < n; ++j) {
    const double v = std::abs(r(j));
    if (st.worst < 0 || v > st.raw) {
      st.raw = v;
      st.worst = j;
    }
    if (v / sd > st.threshold) st.over.push_back(j);
  }
  st.scaled = st.raw / sd;

  auto& pr = rep.primal;
  auto& du = rep.dual;
  auto& co = rep.complementarity;
  pr.threshold = o.activity.activity_tolerance;
  du.threshold = o.dual_tolerance;
  co.threshold = o.complementarity_tolerance * grad_ref;
  rep.row_violation = Eigen::VectorXd::Zero(m);
  for (Index i = 0; i < m; ++i) {
    const bool ineq = p.types[std::size_t(i)] == constraint_type::inequality;
    const double violation = ineq ? std::max(0.0, p.values(i)) : std::abs(p.values(i));
    rep.row_violation(i) = violation;
    const double relative = violation / std::max(1.0, row_norms(i));
    pr.raw = std::max(pr.raw, violation);
    if (relative > pr.scaled || (pr.worst < 0 && relative > 0)) {
      pr.scaled = relative;
      pr.worst = i;
    }
    if (relative > pr.threshold) pr.over.push_back(i);
    if (!ineq) continue;
    const double negative = std::max(0.0, -y(i));
    if (negative > du.raw) {
      du.raw = negative;
      du.worst = i;
    }
    if (negative / y_ref > du.threshold) du.over.push_back(i);
    const double product = std::abs(y(i) * p.values(i));
    if (product > co.raw) {
      co.raw = product;
      co.worst = i;
    }
    if (product / sd > co.threshold) co.over.push_back(i);
  }
  du.scaled = du.raw / y_ref;
  co.scaled = co.raw / sd;
  for (auto* r_ : {&st, &pr, &du, &co}) decide_residual(*r_, o.undecided_band);
}

/// The range of every multiplier that a dependence among the active gradients involves, over
/// the multipliers y + N w that keep the inequality multipliers >= 0 (N: one column per
/// dependent row r, from LICQ's explanation grad c_r ~ sum_t a_t grad c_t: N = e_r - sum_t
/// a_t e_t, so J^T N ~ 0 and the stationarity residual does not change). The set splits into
/// independent groups of dependences that share no row. A group of one dependence is an
/// interval of its weight w, found by a ratio test (each row gives y_i + N_i w >= 0); a larger
/// group needs the LP engine: the minimum and maximum of each of its multipliers.
template <class Jacobian>
void multiplier_ranges(const basic_model_at_point<Jacobian>& p, const Eigen::VectorXd& row_norms,
                       const kkt_options& o, kkt_report& rep, bool& solved) {
  const Index m = p.values.size();
  const auto& deps = rep.licq.dependencies;
  const Index d = Index(deps.size());
  const double inf = std::numeric_limits<double>::infinity();
  const auto inequality = [&](Index i) {
    return p.types[std::size_t(i)] == constraint_type::inequality;
  };
  // Terms that add less than sqrt(eps) of the dependent gradient's norm are rounding noise of
  // the factorisation; kept, they would tie unrelated rows into the LPs with coefficients
  // near 1e-15 (common practice, no source).
  const double noise = std::sqrt(std::numeric_limits<double>::epsilon());
  const auto kept = [&](const row_dependence& dep, const row_dependence::term& t) {
    return std::abs(t.coefficient) * row_norms(t.row) > noise * row_norms(dep.row);
  };
  // The rows a dependence involves (ascending), and N on them only: its other rows are 0.
  std::vector<char> involved(std::size_t(m), 0);
  for (const auto& dep : deps) {
    involved[std::size_t(dep.row)] = 1;
    for (const auto& t : dep.terms)
      if (kept(dep, t)) involved[std::size_t(t.row)] = 1;
  }
  std::vector<Index> support;
  for (Index i = 0; i < m; ++i)
    if (involved[std::size_t(i)]) support.push_back(i);
  const std::vector<Index> at = positions_of(m, support);
  const auto local = [&](Index row) { return at[std::size_t(row)]; };
  Eigen::MatrixXd basis = Eigen::MatrixXd::Zero(Index(support.size()), d);
  for (Index k = 0; k < d; ++k) {
    const auto& dep = deps[std::size_t(k)];
    basis(local(dep.row), k) = 1;
    for (const auto& t : dep.terms)
      if (kept(dep, t)) basis(local(t.row), k) = -t.coefficient;
  }
  // Groups: dependences linked through a shared row (union-find on the dependences).
  std::vector<Index> parent(static_cast<std::size_t>(d));
  for (Index k = 0; k < d; ++k) parent[std::size_t(k)] = k;
  const auto root = [&](Index k) {
    while (parent[std::size_t(k)] != k)
      k = parent[std::size_t(k)] = parent[std::size_t(parent[std::size_t(k)])];
    return k;
  };
  for (Index j = 0; j < Index(support.size()); ++j) {
    Index first = -1;
    for (Index k = 0; k < d; ++k) {
      if (basis(j, k) == 0) continue;
      if (first < 0)
        first = k;
      else
        parent[std::size_t(root(k))] = root(first);
    }
  }
  solved = true;
  if (Index(support.size()) > o.range_limit) {
    solved = false;
    add_finding(rep.findings, severity::info, "ranges_not_computed",
                std::to_string(support.size()) +
                    " multipliers take part in dependences, more "
                    "than range_limit (" +
                    std::to_string(o.range_limit) + "): their ranges were not computed",
                {}, rep.names);
    return;
  }
  Eigen::VectorXd base = rep.multipliers;
  for (Index i : support)
    if (inequality(i)) base(i) = std::max(0.0, base(i));
  std::vector<multiplier_range> ranges;
  for (Index i : support) ranges.push_back({i, base(i), base(i)});
  for (Index g = 0; g < d; ++g) {
    if (root(g) != g) continue;
    // The group's dependences, its rows (positions in support), its inequality rows (rows
    // of the Jacobian and positions in support).
    std::vector<Index> cols, rows, ineq_rows, ineq_local;
    for (Index k = 0; k < d; ++k)
      if (root(k) == g) cols.push_back(k);
    for (std::size_t j = 0; j < support.size(); ++j)
      if (basis.row(Index(j))(cols).cwiseAbs().maxCoeff() > 0) {
        rows.push_back(Index(j));
        if (inequality(support[j])) {
          ineq_rows.push_back(support[j]);
          ineq_local.push_back(Index(j));
        }
      }
    if (cols.size() == 1) {  // an interval [lo, hi] of w by the ratio test
      const Index k = cols[0];
      double lo = -inf, hi = inf;
      for (Index i : ineq_rows) {
        const double a = basis(local(i), k), bound = -base(i) / a;
        if (a > 0)
          lo = std::max(lo, bound);
        else
          hi = std::min(hi, bound);
      }
      for (Index j : rows) {
        auto& r = ranges[std::size_t(j)];
        const double a = basis(j, k);
        const double at_lo = std::isinf(lo) ? -a * inf : base(r.row) + a * lo;
        const double at_hi = std::isinf(hi) ? a * inf : base(r.row) + a * hi;
        r.lower = std::min(at_lo, at_hi);
        r.upper = std::max(at_lo, at_hi);
      }
      continue;
    }
    const Eigen::MatrixXd a = basis(ineq_local, cols);
    const Eigen::VectorXd row_lower = -base(ineq_rows);
    const Eigen::VectorXd row_upper = Eigen::VectorXd::Constant(Index(ineq_rows.size()), inf);
    const Eigen::VectorXd col_lower = Eigen::VectorXd::Constant(Index(cols.size()), -inf);
    const Eigen::VectorXd col_upper = Eigen::VectorXd::Constant(Index(cols.size()), inf);
    for (Index j : rows) {
      auto& r = ranges[std::size_t(j)];
      for (double side : {1.0, -1.0}) {  // minimise side * N_k w
        const Eigen::VectorXd c = side * basis.row(j)(cols).transpose();
        double value = -inf;  // no inequality limits w: the multiplier is unbounded
        if (!ineq_rows.empty()) {
          const lp_result lp = solve_lp(a, c, row_lower, row_upper, col_lower, col_upper, o.lp);
          if (lp.status == lp_status::optimal) {
            value = lp.objective;
          } else if (lp.status != lp_status::unbounded) {
            value = std::numeric_limits<double>::quiet_NaN();
            if (solved)
              add_finding(rep.findings, severity::warning, "lp_not_solved",
                          "a multiplier-range LP for " + rep.names(r.row) + " ended " +
                              std::string(to_string(lp.status)) + ": " + lp.message,
                          {r.row}, rep.names);
            solved = false;
          }
        }
        (side > 0 ? r.lower : r.upper) = base(r.row) + side * value;
      }
    }
  }
  rep.ranges = std::move(ranges);
}

/// An orthonormal basis of the null space of the rows `rows` of the Jacobian, as the trailing
/// columns of Q in a column-pivoted Householder QR of their unit gradients (as columns): Q's
/// first `rank` columns span the gradients, the rest their orthogonal complement.
struct null_space_basis {
  Index rank = 0, dimension = 0;
  std::optional<Eigen::ColPivHouseholderQR<Eigen::MatrixXd>> qr;  ///< none when there is no row
};

template <class Jacobian>
null_space_basis null_space_of(const basic_model_at_point<Jacobian>& p,
                               const std::vector<Index>& rows, const Eigen::VectorXd& row_norms,
                               const licq_options& lo) {
  null_space_basis b;
  const Index n = p.x.size(), q = Index(rows.size());
  b.dimension = n;
  if (q == 0) return b;
  Eigen::MatrixXd a = dense_rows(p.jacobian, rows).transpose();
  for (Index k = 0; k < q; ++k)
    if (row_norms(rows[std::size_t(k)]) > 0) a.col(k) /= row_norms(rows[std::size_t(k)]);
  b.qr.emplace(n, q);
  b.qr->setThreshold(lo.relative_threshold.value_or(double(std::max(n, q)) *
                                                    std::numeric_limits<double>::epsilon()));
  b.qr->compute(a);
  b.rank = b.qr->rank();
  b.dimension = n - b.rank;
  return b;
}

/// Z^T H Z for the basis Z of `b`, its inertia and extreme eigenvalues (theta: the zero band).
inline reduced_hessian reduce_hessian(const null_space_basis& b, const Eigen::MatrixXd& h,
                                      double theta, std::vector<Index> rows) {
  reduced_hessian out;
  out.rows = std::move(rows);
  out.constraint_rank = b.rank;
  out.dimension = b.dimension;
  const Index k = b.dimension;
  if (k == 0) {
    out.computed = true;
    return out;
  }
  Eigen::MatrixXd t;
  if (b.qr) {
    t = b.qr->householderQ().adjoint() * h;
    t = t * b.qr->householderQ();
    t = t.bottomRightCorner(k, k).eval();
  } else {
    t = h;
  }
  const Eigen::MatrixXd symmetric = 0.5 * (t + t.transpose());
  const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> eigen(symmetric, Eigen::EigenvaluesOnly);
  if (eigen.info() != Eigen::Success) return out;
  const Eigen::VectorXd& e = eigen.eigenvalues();  // ascending
  out.computed = true;
  out.smallest = e(0);
  out.largest = e(k - 1);
  for (Index i = 0; i < k; ++i) {
    if (e(i) > theta)
      ++out.positive;
    else if (e(i) < -theta)
      ++out.negative;
    else
      ++out.zero;
  }
  return out;
}

inline std::string join_names(const std::vector<Index>& rows, const row_names& names,
                              std::size_t shown = 8) {
  std::string text;
  for (std::size_t i = 0; i < rows.size() && i < shown; ++i)
    text += (i ? ", " : "") + names(rows[i]);
  if (rows.size() > shown) text += " and " + std::to_string(rows.size() - shown) + " more";
  return text;
}

/// Why the Hessians a point carries do not give the Hessian of the Lagrangian for y (empty
/// when they do): rows declared affine may leave theirs out (zero), rows with a zero
/// multiplier do not enter.
template <class Jacobian>
std::string missing_hessians(const basic_model_at_point<Jacobian>& p, const Eigen::VectorXd& y,
                             const row_names& names) {
  if (!p.objective_hessian) return "no Hessian of the objective was given";
  std::vector<Index> missing;
  for (Index i = 0; i < p.values.size(); ++i)
    if (y(i) != 0 && (p.hessians.empty() || !p.hessians[std::size_t(i)]) &&
        p.kinds[std::size_t(i)] != constraint_kind::affine)
      missing.push_back(i);
  if (missing.empty()) return {};
  return "no Hessian was given for " + join_names(missing, names) +
         " (non-zero multiplier, not declared affine)";
}

/// The Hessian of the Lagrangian from the Hessians a point carries (see missing_hessians).
template <class Jacobian>
lagrangian_hessian stored_hessian(const basic_model_at_point<Jacobian>& p, const Eigen::VectorXd& y,
                                  const row_names& names) {
  lagrangian_hessian out;
  out.unavailable = missing_hessians(p, y, names);
  if (!out.unavailable.empty()) return out;
  Eigen::MatrixXd h = *p.objective_hessian;
  for (Index i = 0; i < p.values.size(); ++i)
    if (y(i) != 0 && !p.hessians.empty() && p.hessians[std::size_t(i)])
      h.noalias() += y(i) * *p.hessians[std::size_t(i)];
  out.matrix = 0.5 * (h + h.transpose());
  out.source = "model";
  return out;
}

/// The Hessian of the Lagrangian by central differences of its gradient grad f + J^T y, one
/// variable at a time (2n evaluations), symmetrised. Error estimate: the asymmetry of the
/// difference quotients ||(H - H^T) / 2||_F (the exact Hessian is symmetric, so this shows
/// the truncation error; common practice, no source) plus the rounding bound n eps G / h_min,
/// G the largest gradient entry met.
inline lagrangian_hessian difference_hessian(const callback_model& model, const Eigen::VectorXd& x,
                                             const Eigen::VectorXd& y, double step) {
  lagrangian_hessian out;
  const Index n = model.variables, m = model.constraints();
  Eigen::MatrixXd h(n, n);
  double largest = 0, smallest_step = std::numeric_limits<double>::infinity();
  for (Index j = 0; j < n; ++j) {
    Eigen::VectorXd xp = x, xm = x;
    const double hj = step * std::max(1.0, std::abs(x(j)));
    xp(j) += hj;
    xm(j) -= hj;
    Eigen::VectorXd gp, gm;
    for (auto [point, gradient, sign] : {std::tuple{&xp, &gp, '+'}, std::tuple{&xm, &gm, '-'}}) {
      const model_evaluation e = evaluate_model(model, *point, {true, false});
      if (!e.ok()) {
        out.unavailable = std::string("the gradient of the Lagrangian at x ") + sign + " h e_" +
                          std::to_string(j) +
                          " (for the finite-difference Hessian) "
                          "could not be evaluated: " +
                          e.error;
        out.failure_code = e.code;
        return out;
      }
      *gradient = e.point.objective_gradient;
      if (m > 0) gradient->noalias() += e.point.jacobian.transpose() * y;
      largest = std::max(largest, gradient->lpNorm<Eigen::Infinity>());
    }
    const double width = xp(j) - xm(j);  // the step as represented
    h.col(j) = (gp - gm) / width;
    smallest_step = std::min(smallest_step, width / 2);
  }
  const double asymmetry = 0.5 * (h - h.transpose()).norm();
  out.matrix = 0.5 * (h + h.transpose());
  out.error_estimate =
      asymmetry + double(n) * std::numeric_limits<double>::epsilon() * largest / smallest_step;
  out.source = "finite_differences";
  return out;
}

/// The second-order tests of DESIGN.md, section 2, once the KKT residuals do not fail.
template <class Jacobian>
void check_second_order(const basic_model_at_point<Jacobian>& p, const Eigen::VectorXd& row_norms,
                        const kkt_options& o, const hessian_function& differences,
                        kkt_report& rep) {
  auto& so = rep.second_order;
  const auto not_checked = [&](std::string reason, severity level, std::string code) {
    so.result = second_order_result::not_checked;
    so.reason = "not checked: " + reason;
    if (!code.empty()) add_finding(rep.findings, level, std::move(code), so.reason, {}, rep.names);
  };
  if (rep.result == verdict::fails) return not_checked("not a KKT point", severity::info, "");
  if (!differences)  // the point's own Hessians: known at once whether they suffice
    if (auto missing = missing_hessians(p, rep.multipliers, rep.names); !missing.empty())
      return not_checked(missing, severity::info, "hessian_unavailable");
  const Index n = p.x.size();
  std::vector<char> weak(std::size_t(p.values.size()), 0);
  for (Index i : rep.weakly_active) weak[std::size_t(i)] = 1;
  std::vector<Index> all_rows = rep.active.active, strong_rows;
  for (Index i : all_rows)
    if (!weak[std::size_t(i)]) strong_rows.push_back(i);
  const auto too_large = [&](Index k) {
    return "the reduced Hessian would be at least " + std::to_string(k) + " x " +
           std::to_string(k) + ", above second_order_limit (" +
           std::to_string(o.second_order_limit) + ")";
  };
  if (n - Index(strong_rows.size()) > o.second_order_limit)
    return not_checked(too_large(n - Index(strong_rows.size())), severity::info,
                       "second_order_not_checked");
  if (!active_block_fits<Jacobian>(Index(all_rows.size()), n, o))
    return not_checked(active_block_too_large(Index(all_rows.size()), n, o), severity::info,
                       "second_order_not_checked");
  const null_space_basis sufficient_basis = null_space_of(p, strong_rows, row_norms, o.licq);
  if (sufficient_basis.dimension > o.second_order_limit)
    return not_checked(too_large(sufficient_basis.dimension), severity::info,
                       "second_order_not_checked");
  const bool same = rep.weakly_active.empty();  // then A+ = A
  const null_space_basis necessary_basis =
      same ? null_space_basis{} : null_space_of(p, all_rows, row_norms, o.licq);

  const lagrangian_hessian h =
      differences ? differences(rep.multipliers) : stored_hessian(p, rep.multipliers, rep.names);
  if (!h.unavailable.empty())
    return not_checked(
        h.unavailable, h.failure_code.empty() ? severity::info : severity::warning,
        h.failure_code.empty() ? "hessian_unavailable" : "difference_evaluation_failed");
  so.hessian_source = h.source;
  so.hessian_norm = h.matrix.norm();
  so.hessian_error_estimate = h.error_estimate;
  const double theta = o.eigenvalue_tolerance * so.hessian_norm + h.error_estimate;
  const double band = o.undecided_band;
  so.eigenvalue_threshold = theta;
  so.sufficient = reduce_hessian(sufficient_basis, h.matrix, theta, strong_rows);
  so.necessary = same ? so.sufficient : reduce_hessian(necessary_basis, h.matrix, theta, all_rows);
  if (!so.sufficient.computed || !so.necessary.computed)
    return not_checked("the eigenvalue solver did not converge", severity::warning,
                       "second_order_not_checked");

  const auto fig = format_figure;
  const auto sized = [](const reduced_hessian& r) {
    return std::to_string(r.dimension) + " x " + std::to_string(r.dimension);
  };
  const auto inertia = [](const reduced_hessian& r) {
    return "inertia (" + std::to_string(r.positive) + ", " + std::to_string(r.negative) + ", " +
           std::to_string(r.zero) + ")";
  };
  const bool unique = rep.multipliers_unique == verdict::holds;
  const auto& suf = so.sufficient;
  const auto& nec = so.necessary;
  const std::string on_theta = ", theta " + fig(theta) + ", Hessian from " + h.source;
  if (suf.dimension == 0 || suf.smallest > band * theta) {
    so.result = second_order_result::sufficient;
    so.reason =
        suf.dimension == 0
            ? "the active gradients " + std::string(same ? "" : "of the strongly active rows ") +
                  "span every direction: null([J_E; J_A+]) = {0}, so the sufficient "
                  "conditions hold trivially"
            : "positive definite on null([J_E; J_A+]) (" + sized(suf) + ", smallest eigenvalue " +
                  fig(suf.smallest) + " > " + fig(band) + " x theta" + on_theta + ")";
  } else if (nec.dimension > 0 && nec.smallest < -band * theta) {
    const std::string curvature = "negative curvature " + fig(nec.smallest) +
                                  " on null([J_E; J_A]) (" + sized(nec) + ", " + inertia(nec) +
                                  on_theta + ")";
    if (unique) {
      so.result = second_order_result::fails;
      so.reason = curvature +
                  ": the second-order necessary condition fails, x is not a local "
                  "minimiser";
      add_finding(rep.findings, severity::error, "negative_curvature", so.reason, {}, rep.names);
    } else {
      so.result = second_order_result::undecided;
      so.reason = curvature +
                  ", but the multipliers are not shown unique: the necessary test "
                  "holds only under LICQ or the strict MFCQ";
    }
  } else if (same && (nec.dimension == 0 || nec.smallest >= -theta)) {
    so.result = second_order_result::necessary_only;
    so.reason = "positive semidefinite but singular on null([J_E; J_A]) (" + sized(nec) +
                ", smallest eigenvalue " + fig(nec.smallest) + ", " + inertia(nec) + on_theta +
                "): the necessary conditions hold, the sufficient ones do not decide";
  } else if (same) {
    so.result = second_order_result::undecided;
    so.reason = "the smallest eigenvalue " + fig(nec.smallest) + " on null([J_E; J_A]) (" +
                sized(nec) + ") lies within the band around zero" + on_theta;
  } else {
    so.result = second_order_result::undecided;
    so.reason = "weakly active rows (" + join_names(rep.weakly_active, rep.names) +
                ") make the critical cone a cone, not a subspace, and neither subspace test "
                "decides: smallest eigenvalue " +
                fig(suf.smallest) + " on null([J_E; J_A+]) (" + sized(suf) + "), " +
                fig(nec.smallest) + " on null([J_E; J_A]) (" + sized(nec) + ")" + on_theta;
  }
  if (so.result == second_order_result::undecided)
    add_finding(rep.findings, severity::info, "second_order_undecided", so.reason, {}, rep.names);
}

/// The premises of the global certificate, checked and listed; true when they all hold.
template <class Jacobian>
bool check_convexity(const basic_model_at_point<Jacobian>& p, const kkt_options& o,
                     kkt_report& rep) {
  bool ok = true;
  const Index n = p.x.size();
  rep.premises.push_back(
      "the model is declared convex (convex_model): f and every inequality convex, every "
      "equality affine");
  std::vector<Index> inconsistent;
  for (Index i = 0; i < p.values.size(); ++i) {
    const auto kind = p.kinds[std::size_t(i)];
    const bool equality = p.types[std::size_t(i)] == constraint_type::equality;
    if (equality ? kind != constraint_kind::affine
                 : kind != constraint_kind::affine && kind != constraint_kind::convex)
      inconsistent.push_back(i);
  }
  if (inconsistent.empty()) {
    rep.premises.push_back(
        "the declared kinds agree: every equality affine, every inequality affine or convex");
  } else {
    ok = false;
    add_finding(rep.findings, severity::warning, "convexity_claim_inconsistent",
                "the model is declared convex, but these rows are declared otherwise (an "
                "equality must be affine, an inequality affine or convex): " +
                    join_names(inconsistent, rep.names),
                inconsistent, rep.names);
  }
  // A convex function has a positive semidefinite Hessian everywhere: a Hessian given at x
  // with a clearly negative eigenvalue disproves the claim (at x only; passing proves nothing).
  std::vector<std::string> checked, failed;
  std::vector<Index> failed_rows;
  const auto semidefinite = [&](const Eigen::MatrixXd& h) {
    const Eigen::MatrixXd s = 0.5 * (h + h.transpose());
    const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> e(s, Eigen::EigenvaluesOnly);
    return e.info() != Eigen::Success ||
           e.eigenvalues()(0) >= -o.undecided_band * o.eigenvalue_tolerance * s.norm();
  };
  if (n <= o.second_order_limit) {
    if (p.objective_hessian) {
      checked.push_back("the objective");
      if (!semidefinite(*p.objective_hessian)) failed.push_back("the objective");
    }
    for (std::size_t i = 0; i < p.hessians.size(); ++i)
      if (p.hessians[i] && p.types[i] == constraint_type::inequality) {
        checked.push_back(rep.names(Index(i)));
        if (!semidefinite(*p.hessians[i])) {
          failed.push_back(rep.names(Index(i)));
          failed_rows.push_back(Index(i));
        }
      }
  }
  std::string list;
  for (const auto& s : checked) list += (list.empty() ? "" : ", ") + s;
  if (!failed.empty()) {
    ok = false;
    std::string bad;
    for (const auto& s : failed) bad += (bad.empty() ? "" : ", ") + s;
    add_finding(rep.findings, severity::error, "not_convex_at_point",
                "declared convex, but the Hessian at x has a negative eigenvalue: " + bad,
                failed_rows, rep.names);
  } else if (!checked.empty()) {
    rep.premises.push_back("the Hessians given at x are positive semidefinite (" + list +
                           "): a necessary condition of convexity, checked at x only");
  } else {
    rep.premises.push_back(n > o.second_order_limit
                               ? "no Hessian was examined (n above second_order_limit): "
                                 "convexity rests on the declaration"
                               : "no Hessian was given: convexity rests on the declaration");
  }
  if (rep.second_order.result == second_order_result::fails) {
    ok = false;
    add_finding(rep.findings, severity::error, "not_convex_at_point",
                "declared convex, but the Hessian of the Lagrangian has negative curvature on "
                "the tangent subspace",
                {}, rep.names);
  }
  const auto fig = format_figure;
  rep.premises.push_back("the KKT residuals are within tolerance: stationarity " +
                         fig(rep.stationarity.scaled) + " <= " + fig(rep.stationarity.threshold) +
                         ", primal " + fig(rep.primal.scaled) + " <= " + fig(rep.primal.threshold) +
                         ", dual " + fig(rep.dual.scaled) + " <= " + fig(rep.dual.threshold) +
                         ", complementarity " + fig(rep.complementarity.scaled) +
                         " <= " + fig(rep.complementarity.threshold));
  rep.premises.push_back(
      "under convexity every KKT point is a global minimiser, with no constraint "
      "qualification needed for this direction");
  if (!ok) rep.premises.clear();
  return ok;
}

inline const char* residual_name(const kkt_report& rep, const kkt_residual& r) {
  return &r == &rep.stationarity ? "stationarity"
         : &r == &rep.primal     ? "primal"
         : &r == &rep.dual       ? "dual"
                                 : "complementarity";
}

/// Classification, findings and the one-sentence message, once every figure is in.
template <class Jacobian>
void describe_kkt(const basic_model_at_point<Jacobian>& p, const kkt_options& o, bool convex_ok,
                  kkt_report& rep) {
  const auto fig = format_figure;
  const auto& names = rep.names;
  const double band = o.undecided_band;
  const kkt_residual* residuals[] = {&rep.primal, &rep.stationarity, &rep.dual,
                                     &rep.complementarity};
  std::string failing, in_band;
  for (const kkt_residual* r : residuals) {
    if (r->result == verdict::holds) continue;
    const bool fails = r->result == verdict::fails;
    const std::string figures = fig(r->scaled) + (fails ? " > " + fig(band) + " x " : " > ") +
                                "its threshold " + fig(r->threshold);
    std::string text = std::string(residual_name(rep, *r)) + " " + figures;
    std::string detail;
    std::vector<Index> rows;
    const char* code = "";
    if (r == &rep.stationarity) {
      code = "not_stationary";
      detail = "|grad f + J^T y| is largest at variable " + std::to_string(r->worst) + " (" +
               fig(r->raw) + ", " + std::to_string(r->over.size()) + " variable" +
               (r->over.size() == 1 ? "" : "s") + " above the threshold)";
      text += " at variable " + std::to_string(r->worst);
    } else {
      rows = r->over;
      code = r == &rep.primal ? "primal_infeasible"
             : r == &rep.dual ? "dual_infeasible"
                              : "complementarity_violated";
      detail = (r == &rep.primal ? "constraint violated beyond the activity tolerance: "
                : r == &rep.dual ? "negative multiplier on an inequality: "
                                 : "multiplier times value not zero: ") +
               join_names(rows, names) + " (largest raw " + fig(r->raw) + " at " + names(r->worst) +
               ")";
      text += " (" + join_names(rows, names, 3) + ")";
    }
    add_finding(rep.findings, fails ? severity::error : severity::warning, code,
                std::string(residual_name(rep, *r)) + " residual " + figures + ": " + detail, rows,
                names);
    (fails ? failing : in_band) += ((fails ? failing : in_band).empty() ? "" : "; ") + text;
  }
  if (!rep.active.near_active.empty())
    add_finding(rep.findings, severity::info, "near_active",
                "inactive, but within near_active_factor of the activity tolerance",
                rep.active.near_active, names);

  const bool licq = rep.licq.result == verdict::holds;
  const bool mfcq = rep.mfcq_result == verdict::holds;
  const bool linear = rep.linear_cq.result == verdict::holds;
  const bool no_cq = rep.licq.result == verdict::fails && rep.mfcq_result == verdict::fails &&
                     rep.linear_cq.result == verdict::fails;
  const std::string which_cq = licq ? "LICQ" : mfcq ? "MFCQ" : "the linear CQ";
  if (no_cq)
    add_finding(rep.findings, severity::warning, "no_constraint_qualification",
                "LICQ, MFCQ and the linear CQ all fail at x: the KKT conditions need not hold at "
                "a minimiser here",
                rep.active.active, names);

  const std::string held = "stationarity " + fig(rep.stationarity.scaled) + ", primal " +
                           fig(rep.primal.scaled) + ", dual " + fig(rep.dual.scaled) +
                           ", complementarity " + fig(rep.complementarity.scaled);
  const std::string given =
      rep.source == multiplier_source::given ? " with the given multipliers" : "";
  if (rep.result == verdict::fails) {
    if (rep.source == multiplier_source::estimated && rep.primal.result == verdict::holds &&
        no_cq) {
      rep.classification = kkt_classification::no_cq_holds;
      rep.message =
          "no constraint qualification holds and no KKT multipliers exist (the best "
          "multipliers leave " +
          failing +
          "): the KKT conditions say nothing here, and x may "
          "still be a minimiser";
      add_finding(rep.findings, severity::error, "no_multipliers",
                  "the bounded least-squares multipliers leave ||grad f + J^T y||_2 = " +
                      fig(rep.stationarity_norm) +
                      ", the least value any multipliers can give: none exist; with no CQ this "
                      "does not rule out a minimiser (Kuhn and Tucker, 1951)",
                  rep.active.active, names);
    } else {
      rep.classification = kkt_classification::not_kkt;
      rep.message = "not a KKT point" + given + ": " + failing;
      if (rep.primal.result == verdict::fails)
        rep.message += "; x is infeasible";
      else if (licq || mfcq || linear)
        rep.message += "; " + which_cq + " holds, so x is not a local minimiser";
      else
        rep.message +=
            "; no constraint qualification was shown to hold, so x may still be a "
            "minimiser";
    }
    return;
  }
  if (rep.result == verdict::undecided) {
    rep.classification = kkt_classification::undecided;
    rep.message =
        "KKT undecided" + given + ": " + in_band + " (within " + fig(band) + " x the threshold)";
    return;
  }

  // A KKT point: what more can be said.
  if (rep.licq.result == verdict::fails)
    add_finding(rep.findings, severity::info, "degenerate_point",
                "LICQ fails at this KKT point: " + std::to_string(rep.licq.rows) +
                    " active gradients of rank " + std::to_string(rep.licq.rank) +
                    "; dependent: " + join_names(rep.licq.dependent_rows(), names),
                rep.licq.dependent_rows(), names);
  std::vector<Index> range_rows;
  std::string range_text;
  const double y_ref =
      std::max(1.0, rep.multipliers.size() > 0 ? rep.multipliers.lpNorm<Eigen::Infinity>() : 0.0);
  for (const auto& r : rep.ranges) {
    if (!(r.upper - r.lower > o.uniqueness_tolerance * y_ref)) continue;
    range_rows.push_back(r.row);
    if (range_rows.size() <= 8)
      range_text += (range_text.empty() ? "" : ", ") + names(r.row) + " in [" + fig(r.lower) +
                    ", " + fig(r.upper) + "]";
  }
  if (range_rows.size() > 8)
    range_text += " and " + std::to_string(range_rows.size() - 8) + " more";
  if (rep.multipliers_unique == verdict::fails)
    add_finding(rep.findings, severity::info, "multipliers_not_unique",
                "the multipliers form a set, not a point: " + range_text, range_rows, names);
  if (rep.multipliers_bounded == verdict::fails)
    add_finding(rep.findings, severity::warning, "multipliers_unbounded",
                "the multiplier set is unbounded (MFCQ fails; Gauvin, Math. Programming 12, "
                "1977): a solver's multipliers here can be arbitrarily large",
                range_rows, names);
  if (!rep.weakly_active.empty())
    add_finding(rep.findings, severity::info, "weakly_active",
                "active with a zero multiplier (strict complementarity fails): " +
                    join_names(rep.weakly_active, names),
                rep.weakly_active, names);

  const std::string uniqueness =
      rep.multipliers_unique == verdict::holds
          ? std::string(licq ? "unique multipliers (LICQ)"
                             : "unique multipliers (the multiplier set is a point: strict MFCQ, "
                               "Kyparisis 1985)")
      : rep.multipliers_unique == verdict::fails
          ? std::string("multipliers not unique (LICQ fails") +
                (rep.multipliers_bounded == verdict::holds ? "; bounded)" : "; unbounded)")
          : std::string("uniqueness of the multipliers undecided");
  const std::string second = "second order " + std::string(to_string(rep.second_order.result));
  const std::string figures = " (residuals " + held + ")";
  if (p.convex_model && convex_ok) {
    rep.classification = kkt_classification::global_min;
    rep.message = "global minimiser: a KKT point of a model declared convex" +
                  (given.empty() ? "" : "," + given) + figures + "; " + uniqueness + "; " +
                  std::to_string(rep.premises.size()) + " premises checked";
  } else if (rep.second_order.result == second_order_result::sufficient) {
    rep.classification = kkt_classification::strict_local_min;
    rep.message =
        "strict local minimiser: a KKT point where the second-order sufficient "
        "conditions hold" +
        (given.empty() ? "" : "," + given) + figures + "; " + uniqueness;
  } else {
    rep.classification = rep.multipliers_unique == verdict::holds
                             ? kkt_classification::kkt_unique_multipliers
                             : kkt_classification::kkt;
    rep.message = "KKT point" + given + figures + "; " + uniqueness + "; " + second;
    if (rep.second_order.result == second_order_result::fails)
      rep.message += ": not a local minimiser";
  }
}

/// check_kkt on a point, dense or sparse Jacobian alike; the Hessian of the Lagrangian from the
/// point's Hessians, or from `differences` when that is set.
template <class Jacobian>
kkt_report kkt_run(const basic_model_at_point<Jacobian>& p, const Eigen::VectorXd* given,
                   const kkt_options& o, const hessian_function& differences = {}) {
  kkt_report rep;
  rep.variables = p.x.size();
  rep.constraints = p.jacobian.rows();
  if (p.labels.empty() || Index(p.labels.size()) == rep.constraints)
    rep.names = row_names(p.labels);
  if (auto bad = o.validate(); !bad.empty()) return invalid_kkt(rep, "bad_option", bad);
  if (auto bad = validate_point(p); !bad.ok()) return invalid_kkt(rep, bad.code, bad.message);
  if constexpr (is_sparse_jacobian<Jacobian>) {
    // Repeated or unordered entries (a host's own arrays) are summed per position once, so
    // that row norms and row copies read canonical storage.
    if (!scan_sparse_storage(p.jacobian, "jacobian").canonical) {
      basic_model_at_point<Jacobian> summed = p;
      summed.jacobian = summed_copy<double>(p.jacobian);
      return kkt_run(summed, given, o, differences);
    }
  }
  const Index m = rep.constraints;
  if (given) {
    if (given->size() != m)
      return invalid_kkt(rep, "multiplier_count",
                         "multipliers has " + std::to_string(given->size()) +
                             " entries, expected " + std::to_string(m) + " (one per constraint)");
    if (auto bad = non_finite_entry(*given, "multipliers"); !bad.empty())
      return invalid_kkt(rep, "non_finite_entry", bad);
  }
  const Eigen::VectorXd row_norms = jacobian_row_norms(p.jacobian);

  // Constraint qualifications at x; LICQ also picks the active rows.
  licq_options lo = o.licq;
  lo.activity = o.activity;
  rep.licq = check_licq(p.jacobian, p.values, p.types, lo, rep.names.labels());
  if (rep.licq.result == verdict::invalid_input || !rep.licq.active)
    return invalid_kkt(rep, "invalid_jacobian", rep.licq.message);
  rep.active = *rep.licq.active;
  rep.linear_cq = check_linear_cq(p.kinds, rep.active.active, rep.names.labels());
  std::vector<Index> ineq_rows, eq_rows;
  for (Index i : rep.active.active)
    (p.types[std::size_t(i)] == constraint_type::equality ? eq_rows : ineq_rows).push_back(i);
  if (rep.licq.result == verdict::holds) {
    rep.mfcq_result = verdict::holds;  // LICQ implies MFCQ
    rep.mfcq_decided_by = "licq";
  }
  const auto run_mfcq = [&] {  // MFCQ's LP, when neither LICQ nor the multiplier set decides
    mfcq_options mo = o.mfcq;
    mo.licq = lo;
    mo.compare_with_licq = false;  // LICQ is in the report already
    std::vector<Index> order = ineq_rows;
    order.insert(order.end(), eq_rows.begin(), eq_rows.end());
    rep.mfcq = check_mfcq(jacobian_rows(p.jacobian, ineq_rows), jacobian_rows(p.jacobian, eq_rows),
                          mo, rep.names(order));
    rep.mfcq_result = rep.mfcq->result;
    rep.mfcq_decided_by = "check_mfcq";
  };

  // Multipliers and residuals.
  if (given) {
    rep.source = multiplier_source::given;
    rep.multipliers = *given;
  } else if (const Index q = Index(rep.active.active.size());
             !active_block_fits<Jacobian>(q, rep.variables, o)) {
    // No estimate without the dense active block: only the primal residual is decided.
    rep.multipliers = Eigen::VectorXd::Zero(m);
    compute_residuals(p, row_norms, o, rep);
    rep.multipliers.resize(0);
    rep.stationarity = rep.dual = rep.complementarity = kkt_residual{};
    rep.stationarity_norm = std::numeric_limits<double>::quiet_NaN();
    if (rep.licq.result != verdict::holds) run_mfcq();
    const std::string why = active_block_too_large(q, rep.variables, o) +
                            ": the multipliers were not estimated; give them, or raise the limit";
    add_finding(rep.findings, severity::warning, "multipliers_not_estimated", why, {}, rep.names);
    rep.second_order.reason = "not checked: no multipliers";
    if (rep.primal.result == verdict::fails) {
      rep.result = verdict::fails;
      rep.classification = kkt_classification::not_kkt;
      rep.message = "not a KKT point: primal " + format_figure(rep.primal.scaled) +
                    " above its threshold " + format_figure(rep.primal.threshold) + " (" +
                    join_names(rep.primal.over, rep.names, 3) + "); x is infeasible";
      add_finding(rep.findings, severity::error, "primal_infeasible",
                  "constraint violated beyond the activity tolerance: " +
                      join_names(rep.primal.over, rep.names),
                  rep.primal.over, rep.names);
    } else {
      rep.result = verdict::undecided;
      rep.classification = kkt_classification::undecided;
      rep.message = "KKT undecided: " + why;
    }
    return rep;
  } else {
    rep.source = multiplier_source::estimated;
    const auto estimate = estimate_multipliers(p, rep.active.active, row_norms, rep.multipliers);
    rep.estimate_iterations = estimate.iterations;
    if (!estimate.converged)
      add_finding(rep.findings, severity::warning, "estimate_not_converged",
                  "the bounded least-squares estimate of the multipliers stopped at its "
                  "iteration limit; the residuals are those of its last iterate",
                  {}, rep.names);
  }
  compute_residuals(p, row_norms, o, rep);
  const kkt_residual* all[] = {&rep.stationarity, &rep.primal, &rep.dual, &rep.complementarity};
  rep.result = verdict::holds;
  for (const auto* r : all)
    if (r->result == verdict::fails)
      rep.result = verdict::fails;
    else if (r->result == verdict::undecided && rep.result == verdict::holds)
      rep.result = verdict::undecided;

  bool convex_ok = false;
  if (rep.result != verdict::fails) {
    // Uniqueness and boundedness of the multipliers; the multiplier set when it is not a point.
    const double y_ref = std::max(1.0, m > 0 ? rep.multipliers.lpNorm<Eigen::Infinity>() : 0.0);
    if (rep.licq.result == verdict::holds) {
      rep.multipliers_unique = rep.multipliers_bounded = verdict::holds;
    } else {
      bool solved = false;
      if (rep.licq.result == verdict::fails) multiplier_ranges(p, row_norms, o, rep, solved);
      if (solved) {
        double width = 0;
        bool finite = true;
        for (const auto& r : rep.ranges) {
          width = std::max(width, r.upper - r.lower);
          finite = finite && std::isfinite(r.lower) && std::isfinite(r.upper);
        }
        const double threshold = o.uniqueness_tolerance * y_ref;
        rep.multipliers_unique = width <= threshold                     ? verdict::holds
                                 : width > o.undecided_band * threshold ? verdict::fails
                                                                        : verdict::undecided;
        rep.multipliers_bounded = finite ? verdict::holds : verdict::fails;
        rep.mfcq_result = rep.multipliers_bounded;  // Gauvin: MFCQ iff bounded at a KKT point
        rep.mfcq_decided_by = "multiplier_ranges";
      } else {
        rep.multipliers_unique = verdict::undecided;
        run_mfcq();
        rep.multipliers_bounded = rep.mfcq_result;
      }
    }
    // Strict complementarity: an inequality is strongly active when its multiplier is positive
    // somewhere on the multiplier set.
    const double weak = o.weak_activity_tolerance * y_ref;
    for (Index i : ineq_rows) {
      double largest = rep.multipliers(i);
      for (const auto& r : rep.ranges)
        if (r.row == i && !std::isnan(r.upper)) largest = r.upper;
      (largest > weak ? rep.strongly_active : rep.weakly_active).push_back(i);
      rep.complementarity_margin = std::isnan(rep.complementarity_margin)
                                       ? largest
                                       : std::min(rep.complementarity_margin, largest);
    }
    check_second_order(p, row_norms, o, differences, rep);
    if (p.convex_model && rep.result == verdict::holds) convex_ok = check_convexity(p, o, rep);
  } else {
    if (rep.licq.result != verdict::holds) run_mfcq();
    rep.second_order.result = second_order_result::not_checked;
    rep.second_order.reason = "not checked: not a KKT point";
  }
  describe_kkt(p, o, convex_ok, rep);
  return rep;
}

/// check_kkt on a callback model: validated, evaluated at x (with Hessians when the model has
/// every one the Lagrangian needs, else by finite differences of gradients).
inline kkt_report kkt_callback(const callback_model& model, const Eigen::VectorXd& x,
                               const Eigen::VectorXd* given, const kkt_options& o) {
  kkt_report rep;
  rep.variables = model.variables;
  rep.constraints = model.constraints();
  if (model.labels.size() == model.types.size()) rep.names = row_names(model.labels);
  if (auto bad = o.validate(); !bad.empty()) return invalid_kkt(rep, "bad_option", bad);
  if (auto bad = validate_model(model); !bad.empty()) return invalid_kkt(rep, "invalid_model", bad);
  if (x.size() != model.variables)
    return invalid_kkt(rep, "dimension_mismatch",
                       "x has " + std::to_string(x.size()) + " entries, expected " +
                           std::to_string(model.variables) + " (callback_model.variables)");
  if (auto bad = non_finite_entry(x, "x"); !bad.empty())
    return invalid_kkt(rep, "non_finite_entry", bad);
  const bool analytic =
      bool(model.objective_hessian) && (model.constraints() == 0 || bool(model.constraint_hessian));
  const model_evaluation e = evaluate_model(model, x, {true, analytic});
  if (!e.ok()) return invalid_kkt(rep, e.code, e.error);
  if (analytic) return kkt_run(e.point, given, o);
  const double step = o.difference_step.value_or(std::cbrt(std::numeric_limits<double>::epsilon()));
  // A throw or NaN at x +- h e_j leaves second order unchecked (a domain edge); a size that
  // differs from the one at x means a broken model, as at x itself.
  std::string size_error;
  kkt_report out = kkt_run(e.point, given, o, [&](const Eigen::VectorXd& y) {
    lagrangian_hessian h = difference_hessian(model, x, y, step);
    if (h.failure_code == "callback_size") size_error = h.unavailable;
    return h;
  });
  if (!size_error.empty()) return invalid_kkt(rep, "callback_size", size_error);
  return out;
}

}  // namespace detail

/// KKT certificate at a model evaluated at one point, the multipliers estimated by bounded
/// least squares. Second order uses the Hessians the point carries (rows declared affine may
/// leave theirs out); without them it is "not_checked", with the reason. The Jacobian is dense
/// (model_at_point) or sparse (sparse_model_at_point, row- or column-major): the same steps,
/// report and thresholds; with a sparse one LICQ and MFCQ run their sparse checks, residuals
/// use sparse products, and only the active rows are ever copied dense, within
/// kkt_options::active_dense_limit (above it: no estimate, no second order, a finding says so).
template <class Jacobian>
kkt_report check_kkt(const basic_model_at_point<Jacobian>& point, const kkt_options& options = {}) {
  return detail::kkt_run(point, nullptr, options);
}

/// The same with the multipliers given (one per constraint, L = f + sum y_i c_i): the pair
/// (x, multipliers) is checked.
template <class Jacobian>
kkt_report check_kkt(const basic_model_at_point<Jacobian>& point,
                     const Eigen::VectorXd& multipliers, const kkt_options& options = {}) {
  return detail::kkt_run(point, &multipliers, options);
}

/// KKT certificate of a callback model at x, the multipliers estimated. The model is
/// evaluated through evaluate_model (a callback that throws, returns the wrong size or NaN
/// gives an invalid_input report naming it); the Hessian of the Lagrangian comes from the
/// model's Hessian callbacks when it has them, else from central differences of gradients.
inline kkt_report check_kkt(const callback_model& model, const Eigen::VectorXd& x,
                            const kkt_options& options = {}) {
  return detail::kkt_callback(model, x, nullptr, options);
}

/// The same with the multipliers given.
inline kkt_report check_kkt(const callback_model& model, const Eigen::VectorXd& x,
                            const Eigen::VectorXd& multipliers, const kkt_options& options = {}) {
  return detail::kkt_callback(model, x, &multipliers, options);
}

}  // namespace qualify
