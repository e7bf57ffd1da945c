// qualify: the LP engine (interior point, homogeneous self-dual) behind MFCQ and Slater.
// SPDX-License-Identifier: MIT
#pragma once

#include <Eigen/Core>
#include <Eigen/SparseCore>
#include <cmath>
#include <limits>
#include <string>
#include <string_view>

#include "qualify/detail/lp_ipm.hpp"
#include "qualify/detail/lp_presolve.hpp"
#include "qualify/report.hpp"

namespace qualify {

/// How an LP solve ended. Stable strings through to_string.
enum class lp_status {
  not_solved,         ///< a default-constructed result
  optimal,            ///< residuals and gap within the tolerances of lp_options
  infeasible,         ///< no x meets the constraints; `farkas` proves it
  unbounded,          ///< feasible, and `ray` improves the objective without limit
  iteration_limit,    ///< stopped at lp_options::max_iterations
  numerical_trouble,  ///< factorisation failure, stalled steps, or a ray that failed its check
  invalid_input       ///< sizes, NaN/Inf, lower > upper, or bad options; see `message`
};

constexpr std::string_view to_string(lp_status s) noexcept {
  switch (s) {
    case lp_status::optimal:
      return "optimal";
    case lp_status::infeasible:
      return "infeasible";
    case lp_status::unbounded:
      return "unbounded";
    case lp_status::iteration_limit:
      return "iteration_limit";
    case lp_status::numerical_trouble:
      return "numerical_trouble";
    case lp_status::invalid_input:
      return "invalid_input";
    case lp_status::not_solved:
      break;
  }
  return "not_solved";
}

/// Which factorisation solves the normal equations A D A^T.
enum class lp_linear_solver {
  automatic,  ///< dense for a dense A or a sparse A with more than 30% nonzeros, else sparse
  dense,      ///< blocked dense Cholesky that drops dependent pivots (detail::dense_cholesky)
  sparse      ///< Eigen::SimplicialLDLT with AMD ordering; switches to the dense Cholesky
              ///< when A A^T is more than 25% nonzero
};

/// Settings of solve_lp. Residuals are measured on the presolved, scaled problem in the
/// standard form min c^T x, A x = b, 0 <= x <= u, at the iterate (x, y, s, v)/tau.
struct lp_options {
  /// ||A x - b||_inf and ||x_U + w - u||_inf  <=  primal_tolerance * (1 + max(||b||_inf,
  /// ||u||_inf)).
  double primal_tolerance = 1e-8;
  /// ||A^T y - v + s - c||_inf  <=  dual_tolerance * (1 + ||c||_inf).
  double dual_tolerance = 1e-8;
  /// |c^T x - (b^T y - u^T v)|  <=  gap_tolerance * (1 + |c^T x|).
  double gap_tolerance = 1e-8;
  /// A ray of the homogeneous model is taken when kappa > tau and its residual is at most
  /// infeasibility_tolerance times its value (||A^T y - v + s|| <= tol * (b^T y - u^T v),
  /// resp. ||A x|| <= tol * (-c^T x)); it is then checked on the original problem.
  double infeasibility_tolerance = 1e-8;
  /// A certificate is accepted on the original data when its margin exceeds
  /// certificate_tolerance times the size of the terms it sums (see lp_result).
  double certificate_tolerance = 1e-9;
  int max_iterations = 200;
  /// Fraction of the step to the boundary (common practice, no source).
  double step_fraction = 0.995;
  /// Added to the diagonal X^-1 S + W^-1 V and to A D A^T (scaled problem), raised 100-fold
  /// up to five times when a factorisation fails. 1e-12 solved the most Netlib problems
  /// among 1e-8 ... 1e-12 (measured; see the test's list).
  double regularization = 1e-12;
  /// Gondzio centrality correctors per iteration (0: plain Mehrotra); each costs one solve
  /// with the factorisation and is kept only when it lengthens the step by >= 1%.
  int centrality_correctors = 2;
  /// |bound| >= infinity_threshold counts as no bound (the MPS convention of 1e30 and up).
  double infinity_threshold = 1e20;
  /// Rounds of Ruiz equilibration; 0 disables scaling.
  int scaling_passes = 10;
  /// Relative tolerance of presolve's consistency tests: violation <= tol * (1 + |bound|).
  double presolve_tolerance = 1e-9;
  lp_linear_solver linear_solver = lp_linear_solver::automatic;
};

/// The outcome of solve_lp. Duals follow c = A^T row_duals + reduced_costs: a row at its
/// lower bound has a dual >= 0, at its upper bound <= 0; likewise reduced costs.
struct lp_result {
  lp_status status = lp_status::not_solved;
  std::string message = "solve_lp was not called";
  int iterations = 0;
  double objective = std::numeric_limits<double>::quiet_NaN();  ///< c^T x + c0
  Eigen::VectorXd x, row_duals, reduced_costs;
  /// Relative residuals the stopping test saw last (see lp_options).
  double primal_residual = 0, dual_residual = 0, gap = 0;
  /// On the original data: the largest violation of a row or column bound by x, and of
  /// the sign rules by the duals (a dual of the wrong sign for the bounds present).
  double primal_violation = 0, dual_violation = 0;
  /// infeasible: y with z = A^T y such that every x in the column bounds has
  /// y^T A x <= sup z^T x < inf over the row bounds of y^T r, so no x is feasible.
  Eigen::VectorXd farkas;
  /// unbounded: d with c^T d < 0 that keeps every row and column bound (x + t d, t >= 0).
  Eigen::VectorXd ray;
  /// The certificate's checked margin (infeasible: inf_rows(y^T r) - sup(z^T x) over the
  /// bounds; unbounded: -c^T d), relative to the size of its terms.
  double certificate_margin = 0;
  Index presolve_removed_rows = 0, presolve_removed_cols = 0;
  /// The factorisations used, in order, joined by '+': "sparse_ldlt", "sparse_ldlt_dense_columns"
  /// (dense columns by a low-rank update), "dense_cholesky_rows" (m x m normal matrix: dense A,
  /// or a sparse A whose normal matrix is more than 25% full), "dense_cholesky_columns"
  /// (dense A with more rows than columns: n x n). A method that loses accuracy near a
  /// degenerate optimum hands over to the m x m one. "" when no iteration ran.
  std::string linear_solver;
};

namespace detail {

inline const char* lp_check_vector(const Eigen::VectorXd& v, bool allow_pos_inf,
                                   bool allow_neg_inf) {
  for (Index i = 0; i < v.size(); ++i) {
    if (std::isnan(v[i])) return "NaN";
    if (v[i] == std::numeric_limits<double>::infinity() && !allow_pos_inf) return "+inf";
    if (v[i] == -std::numeric_limits<double>::infinity() && !allow_neg_inf) return "-inf";
  }
  return nullptr;
}

inline lp_result lp_invalid(std::string message) {
  lp_result r;
  r.status = lp_status::invalid_input;
  r.message = std::move(message);
  return r;
}

/// Checks sizes, values and options; returns a message naming the entry, or "".
inline std::string lp_validate(const lp_general& p, const lp_options& o) {
  const Index m = p.A.rows(), n = p.A.cols();
  auto sized = [](const char* name, Index got, Index want) {
    return got == want ? std::string()
                       : std::string(name) + " has " + std::to_string(got) + " entries, expected " +
                             std::to_string(want);
  };
  for (auto msg :
       {sized("c", p.c.size(), n), sized("row_lower", p.row_lower.size(), m),
        sized("row_upper", p.row_upper.size(), m), sized("col_lower", p.col_lower.size(), n),
        sized("col_upper", p.col_upper.size(), n)})
    if (!msg.empty()) return msg;
  if (!std::isfinite(p.c0)) return "objective_constant is not finite";
  for (Index j = 0; j < n; ++j)
    for (lp_sparse::InnerIterator it(p.A, j); it; ++it)
      if (!std::isfinite(it.value()))
        return "A(" + std::to_string(it.row()) + ", " + std::to_string(j) + ") is not finite";
  struct named {
    const char* name;
    const Eigen::VectorXd& v;
    bool pos, neg;
  };
  for (const named& e :
       {named{"c", p.c, false, false}, named{"row_lower", p.row_lower, false, true},
        named{"row_upper", p.row_upper, true, false}, named{"col_lower", p.col_lower, false, true},
        named{"col_upper", p.col_upper, true, false}}) {
    if (const char* what = lp_check_vector(e.v, e.pos, e.neg)) {
      Index i = 0;
      while (i < e.v.size() && !(std::isnan(e.v[i]) || std::isinf(e.v[i]))) ++i;
      return std::string(e.name) + " has " + what + " at entry " + std::to_string(i);
    }
  }
  for (Index i = 0; i < m; ++i)
    if (p.row_lower[i] > p.row_upper[i])
      return "row " + std::to_string(i) + ": row_lower > row_upper";
  for (Index j = 0; j < n; ++j)
    if (p.col_lower[j] > p.col_upper[j])
      return "column " + std::to_string(j) + ": col_lower > col_upper";
  auto positive = [](double v) { return std::isfinite(v) && v > 0; };
  if (!positive(o.primal_tolerance)) return "options.primal_tolerance must be finite and > 0";
  if (!positive(o.dual_tolerance)) return "options.dual_tolerance must be finite and > 0";
  if (!positive(o.gap_tolerance)) return "options.gap_tolerance must be finite and > 0";
  if (!positive(o.infeasibility_tolerance))
    return "options.infeasibility_tolerance must be finite and > 0";
  if (!positive(o.certificate_tolerance))
    return "options.certificate_tolerance must be finite and > 0";
  if (!positive(o.infinity_threshold)) return "options.infinity_threshold must be finite and > 0";
  if (!(o.presolve_tolerance >= 0) || !std::isfinite(o.presolve_tolerance))
    return "options.presolve_tolerance must be finite and >= 0";
  if (!(o.regularization >= 0) || !std::isfinite(o.regularization))
    return "options.regularization must be finite and >= 0";
  if (!(o.step_fraction > 0 && o.step_fraction < 1))
    return "options.step_fraction must be in (0, 1)";
  if (o.max_iterations < 0) return "options.max_iterations must be >= 0";
  if (o.scaling_passes < 0) return "options.scaling_passes must be >= 0";
  if (o.centrality_correctors < 0) return "options.centrality_correctors must be >= 0";
  return {};
}

/// sup of z^T x over l <= x <= u (+inf when unbounded), ignoring |z_j| <= drop_j.
inline double lp_support(const Eigen::VectorXd& z, const Eigen::VectorXd& l,
                         const Eigen::VectorXd& u, const Eigen::VectorXd& drop, double& size) {
  double sum = 0;
  for (Index j = 0; j < z.size(); ++j) {
    if (std::abs(z[j]) <= drop[j]) continue;
    double bound = z[j] > 0 ? u[j] : l[j];
    sum += z[j] * bound;
    size += std::abs(z[j] * bound);
  }
  return sum;
}

/// Checks a Farkas vector y on the original problem: with z = A^T y, every feasible x has
/// z^T x = y^T (A x) >= inf over the row bounds, and z^T x <= sup over the column bounds.
/// Entries of z below tol * ||y|| * ||a_j|| count as zero (a relative perturbation of A).
/// Returns the margin inf - sup divided by the size of the terms (> tol proves it).
inline double lp_farkas_margin(const lp_general& p, const Eigen::VectorXd& y, double tol) {
  const double yn = y.lpNorm<Eigen::Infinity>();
  if (!(yn > 0) || !std::isfinite(yn)) return -1;
  Eigen::VectorXd z = p.A.transpose() * y;
  Eigen::VectorXd drop(z.size());
  for (Index j = 0; j < z.size(); ++j) {
    double an = 0;
    for (lp_sparse::InnerIterator it(p.A, j); it; ++it) an = std::max(an, std::abs(it.value()));
    drop[j] = tol * yn * an * std::sqrt(static_cast<double>(p.A.rows()) + 1);
  }
  double size = 0;
  double upper = lp_support(z, p.col_lower, p.col_upper, drop, size);
  // inf over rows of y^T r = -sup of (-y)^T r.
  double lower = -lp_support(-y, p.row_lower, p.row_upper, Eigen::VectorXd::Zero(y.size()), size);
  if (!std::isfinite(upper) || !std::isfinite(lower)) return -1;
  return (lower - upper) / std::max(size, 1e-300);
}

/// Checks an improving ray d: c^T d < 0, and A d, d keep the bounds that are finite.
/// Returns -c^T d / (|c| |d|) when every violation is below tol * scale, else -1.
inline double lp_ray_margin(const lp_general& p, const Eigen::VectorXd& d, double tol) {
  const double dn = d.lpNorm<Eigen::Infinity>();
  if (!(dn > 0) || !std::isfinite(dn)) return -1;
  const double slope = -p.c.dot(d);
  const double cn = p.c.cwiseAbs().dot(d.cwiseAbs());
  if (!(slope > tol * cn)) return -1;
  Eigen::VectorXd Ad = p.A * d;
  Eigen::VectorXd Aabs = p.A.cwiseAbs() * d.cwiseAbs();
  auto bad = [&](double value, double scale, double lo, double up) {
    double limit = tol * std::max(scale, 1e-300);
    return (std::isfinite(lo) && value < -limit) || (std::isfinite(up) && value > limit);
  };
  for (Index i = 0; i < Ad.size(); ++i)
    if (bad(Ad[i], Aabs[i] + dn * tol, p.row_lower[i], p.row_upper[i])) return -1;
  for (Index j = 0; j < d.size(); ++j)
    if (bad(d[j], dn, p.col_lower[j], p.col_upper[j])) return -1;
  return slope / cn;
}

/// Fills the violations on the original problem for x, y, z = c - A^T y.
inline void lp_measure(const lp_general& p, lp_result& r) {
  Eigen::VectorXd Ax = p.A * r.x;
  double pv = 0, dv = 0;
  for (Index i = 0; i < Ax.size(); ++i) {
    pv = std::max({pv, p.row_lower[i] - Ax[i], Ax[i] - p.row_upper[i]});
    const double y = r.row_duals[i];
    if (y > 0 && !std::isfinite(p.row_lower[i])) dv = std::max(dv, y);
    if (y < 0 && !std::isfinite(p.row_upper[i])) dv = std::max(dv, -y);
  }
  for (Index j = 0; j < r.x.size(); ++j) {
    pv = std::max({pv, p.col_lower[j] - r.x[j], r.x[j] - p.col_upper[j]});
    const double z = r.reduced_costs[j];
    if (z > 0 && !std::isfinite(p.col_lower[j])) dv = std::max(dv, z);
    if (z < 0 && !std::isfinite(p.col_upper[j])) dv = std::max(dv, -z);
  }
  r.primal_violation = pv;
  r.dual_violation = dv;
}

/// Maps a standard-form vector (values of the standard columns) to general columns;
/// with `with_shift` false it maps directions (rays).
inline Eigen::VectorXd lp_standard_to_general(const lp_standard& s, const Eigen::VectorXd& xs,
                                              Index n, bool with_shift) {
  Eigen::VectorXd x = Eigen::VectorXd::Zero(n);
  std::vector<bool> shifted(static_cast<std::size_t>(n), false);
  for (std::size_t k = 0; k < s.from.size(); ++k) {
    const auto& o = s.from[k];
    if (o.slack) continue;
    x[o.index] += o.sign * xs[static_cast<Index>(k)];
    if (with_shift && !shifted[static_cast<std::size_t>(o.index)]) {
      x[o.index] += o.shift;
      shifted[static_cast<std::size_t>(o.index)] = true;
    }
  }
  return x;
}

/// A singleton row removed by presolve became a column bound; the multiplier that bound
/// carries belongs to the row. In reverse order of removal (a later singleton may feed
/// an earlier one's column), the column's multiplier z_j is recomputed and, when it leans
/// on the bound that row r gave, moved to the row: y_r += z_j / a_rj.
/// Optimal duals: z = c - A^T y, and z_j > 0 leans on the lower bound (side = +1).
/// Farkas rays: z = -A^T y (so that the same update applies), z_j > 0 leans on the upper
/// bound (side = -1).
inline void lp_transfer_to_singleton_rows(const lp_general& original, const lp_presolve_map& map,
                                          double side, Eigen::VectorXd& y) {
  for (auto op = map.singleton_order.rbegin(); op != map.singleton_order.rend(); ++op) {
    const auto [row, j] = *op;
    auto jj = static_cast<std::size_t>(j);
    double z = side > 0 ? original.c[j] : 0.0;
    double a = 0;
    for (lp_sparse::InnerIterator it(original.A, j); it; ++it) {
      z -= it.value() * y[it.row()];
      if (it.row() == row) a = it.value();
    }
    if (z == 0 || a == 0) continue;
    const auto& src = z * side > 0 ? map.lower_source[jj] : map.upper_source[jj];
    if (src && *src == row) y[row] += z / a;
  }
}

/// Solves a validated general LP (infinite bounds already normalised): presolve, scale,
/// standard form, interior point, then the way back with checked certificates.
inline lp_result lp_solve_general(const lp_general& original, const lp_options& o,
                                  bool dense_input) {
  using Eigen::VectorXd;
  lp_result r;
  const Index m = original.A.rows(), n = original.A.cols();

  // Presolve always runs: the standard form cannot hold fixed columns.
  lp_presolved pre = presolve(original, o.presolve_tolerance);
  r.presolve_removed_rows = m - static_cast<Index>(pre.map.live_rows.size());
  r.presolve_removed_cols = n - static_cast<Index>(pre.map.live_cols.size());
  if (pre.map.infeasible_row) {
    // Presolve's combination of rows, accepted only when it checks on the original data;
    // otherwise the interior point decides.
    Eigen::VectorXd y = Eigen::VectorXd::Zero(m);
    for (const auto& [row, weight] : pre.map.infeasible_weights) y[row] += weight;
    const double margin = lp_farkas_margin(original, y, o.certificate_tolerance);
    if (margin > o.certificate_tolerance) {
      r.status = lp_status::infeasible;
      r.message = "presolve: " + pre.map.infeasible_reason;
      r.farkas = y;
      r.certificate_margin = margin;
      return r;
    }
  }
  lp_general work = pre.reduced;
  // Rows free on both sides constrain nothing; drop them here (dual 0).
  {
    std::vector<Index> keep;
    for (Index i = 0; i < work.A.rows(); ++i)
      if (std::isfinite(work.row_lower[i]) || std::isfinite(work.row_upper[i])) keep.push_back(i);
    if (static_cast<Index>(keep.size()) < work.A.rows()) {
      lp_sparse P(static_cast<Index>(keep.size()), work.A.rows());
      for (std::size_t k = 0; k < keep.size(); ++k) P.insert(static_cast<Index>(k), keep[k]) = 1.0;
      work.A = P * work.A;
      VectorXd lo(keep.size()), up(keep.size());
      std::vector<Index> rows;
      for (std::size_t k = 0; k < keep.size(); ++k) {
        lo[static_cast<Index>(k)] = work.row_lower[keep[k]];
        up[static_cast<Index>(k)] = work.row_upper[keep[k]];
        rows.push_back(pre.map.live_rows[static_cast<std::size_t>(keep[k])]);
      }
      work.row_lower = lo;
      work.row_upper = up;
      pre.map.live_rows = rows;
    }
  }
  const lp_scaling scale = ruiz_scale(work, o.scaling_passes);
  const lp_standard std_form = to_standard(work);

  ipm_settings set;
  set.primal_tolerance = o.primal_tolerance;
  set.dual_tolerance = o.dual_tolerance;
  set.gap_tolerance = o.gap_tolerance;
  set.infeasibility_tolerance = o.infeasibility_tolerance;
  set.max_iterations = o.max_iterations;
  set.step_fraction = o.step_fraction;
  set.regularization = o.regularization;
  set.max_correctors = o.centrality_correctors;
  const double density = static_cast<double>(work.A.nonZeros()) /
                         std::max<double>(1.0, static_cast<double>(work.A.rows()) *
                                                   static_cast<double>(work.A.cols()));
  set.dense = o.linear_solver == lp_linear_solver::dense ||
              (o.linear_solver == lp_linear_solver::automatic && (dense_input || density > 0.3));

  const auto& live_rows = pre.map.live_rows;
  const auto& live_cols = pre.map.live_cols;
  const Index nr = static_cast<Index>(live_cols.size());

  // Row multipliers of the reduced, scaled rows -> original rows.
  auto rows_to_original = [&](const VectorXd& ys) {
    VectorXd y = VectorXd::Zero(m);
    for (std::size_t k = 0; k < live_rows.size(); ++k) {
      auto kk = static_cast<Index>(k);
      y[live_rows[k]] = ys[kk] * scale.row[kk];
    }
    return y;
  };
  auto farkas_of = [&](const ipm_result& ipm) {
    VectorXd y = rows_to_original(ipm.y);
    lp_transfer_to_singleton_rows(original, pre.map, -1.0, y);
    return y;
  };
  auto ray_of = [&](const ipm_result& ipm) {
    VectorXd dr = lp_standard_to_general(std_form, ipm.x, nr, false);
    VectorXd d = VectorXd::Zero(n);
    for (Index k = 0; k < nr; ++k) d[live_cols[static_cast<std::size_t>(k)]] = dr[k] * scale.col[k];
    return d;
  };
  // The certificate checks on the original data, used to accept a ray and to report it.
  auto accept_ray = [&](const ipm_result& ipm) {
    if (ipm.status == ipm_status::primal_infeasible)
      return lp_farkas_margin(original, farkas_of(ipm), o.certificate_tolerance) >
             o.certificate_tolerance;
    return lp_ray_margin(original, ray_of(ipm), o.certificate_tolerance) > 0;
  };

  ipm_result ipm;
  if (std_form.A.cols() == 0) {  // everything presolved away
    ipm.status = ipm_status::optimal;
    ipm.x = VectorXd::Zero(0);
    ipm.y = VectorXd::Zero(std_form.A.rows());
  } else {
    ipm = hsd_solver(std_form, set).solve(accept_ray);
  }
  r.iterations = ipm.iterations;
  r.linear_solver = ipm.linear_solver;
  r.primal_residual = ipm.primal_residual;
  r.dual_residual = ipm.dual_residual;
  r.gap = ipm.gap;

  if (ipm.status == ipm_status::primal_infeasible) {
    VectorXd y = farkas_of(ipm);
    r.status = lp_status::infeasible;
    r.message = "infeasible: the Farkas certificate checks on the original data";
    r.certificate_margin = lp_farkas_margin(original, y, o.certificate_tolerance);
    r.farkas = y / y.lpNorm<Eigen::Infinity>();
    return r;
  }
  if (ipm.status == ipm_status::dual_infeasible) {
    VectorXd d = ray_of(ipm);
    const double margin = lp_ray_margin(original, d, o.certificate_tolerance);
    // Unbounded needs a feasible point: solve the feasibility problem (c = 0).
    lp_general feas = original;
    feas.c.setZero();
    feas.c0 = 0;
    lp_result f = lp_solve_general(feas, o, dense_input);
    r.iterations += f.iterations;
    if (f.status == lp_status::optimal) {
      r.status = lp_status::unbounded;
      r.message =
          "unbounded: a feasible point and an improving ray that checks on the original data";
      r.x = f.x;
      r.ray = d / d.lpNorm<Eigen::Infinity>();
      r.certificate_margin = margin;
      r.objective = -std::numeric_limits<double>::infinity();
    } else {
      r.status = f.status;
      r.message = f.message;
      r.farkas = f.farkas;
      r.certificate_margin = f.certificate_margin;
    }
    return r;
  }

  // A point: optimal, or the last iterate of a failed solve.
  VectorXd xs =
      ipm.x.size() ? lp_standard_to_general(std_form, ipm.x, nr, true) : VectorXd::Zero(nr);
  r.x = pre.map.fixed_value;
  for (Index k = 0; k < nr; ++k) r.x[live_cols[static_cast<std::size_t>(k)]] = xs[k] * scale.col[k];
  r.row_duals = ipm.y.size() ? VectorXd(rows_to_original(ipm.y) * scale.cost) : VectorXd::Zero(m);
  lp_transfer_to_singleton_rows(original, pre.map, 1.0, r.row_duals);
  r.reduced_costs = original.c - original.A.transpose() * r.row_duals;
  r.objective = original.c.dot(r.x) + original.c0;
  lp_measure(original, r);
  switch (ipm.status) {
    case ipm_status::optimal:
      r.status = lp_status::optimal;
      r.message = "optimal";
      break;
    case ipm_status::iteration_limit:
      // The residuals say how far the last iterate was from the stopping test.
      r.status = lp_status::iteration_limit;
      r.message = "the iteration limit (" + std::to_string(o.max_iterations) +
                  ", lp_options::max_iterations) was reached; relative residuals of the last "
                  "iterate: primal " +
                  format_figure(r.primal_residual) + " (tolerance " +
                  format_figure(o.primal_tolerance) + "), dual " + format_figure(r.dual_residual) +
                  " (" + format_figure(o.dual_tolerance) + "), gap " + format_figure(r.gap) + " (" +
                  format_figure(o.gap_tolerance) + ")";
      break;
    default:
      r.status = lp_status::numerical_trouble;
      r.message = ipm.message;
      break;
  }
  return r;
}

inline lp_general lp_make_general(lp_sparse A, const Eigen::VectorXd& c, const Eigen::VectorXd& rl,
                                  const Eigen::VectorXd& ru, const Eigen::VectorXd& cl,
                                  const Eigen::VectorXd& cu, double c0, double infinity) {
  lp_general p;
  p.A = std::move(A);
  p.A.makeCompressed();
  p.c = c;
  p.c0 = c0;
  const double inf = std::numeric_limits<double>::infinity();
  auto normalise = [&](Eigen::VectorXd v) {
    for (Index i = 0; i < v.size(); ++i) {
      if (v[i] >= infinity) v[i] = inf;
      if (v[i] <= -infinity) v[i] = -inf;
    }
    return v;
  };
  p.row_lower = normalise(rl);
  p.row_upper = normalise(ru);
  p.col_lower = normalise(cl);
  p.col_upper = normalise(cu);
  return p;
}

inline lp_result lp_solve_checked(const lp_general& p, const lp_options& o, bool dense_input) {
  std::string problem = lp_validate(p, o);
  if (!problem.empty()) return lp_invalid(problem);
  return lp_solve_general(p, o, dense_input);
}

}  // namespace detail

/// Solves min c^T x + objective_constant s.t. row_lower <= A x <= row_upper,
/// col_lower <= x <= col_upper, with A dense. Bounds may be +-inf (or beyond
/// options.infinity_threshold). Never throws for conditions of the data.
template <class Derived>
lp_result solve_lp(const Eigen::MatrixBase<Derived>& A, const Eigen::VectorXd& c,
                   const Eigen::VectorXd& row_lower, const Eigen::VectorXd& row_upper,
                   const Eigen::VectorXd& col_lower, const Eigen::VectorXd& col_upper,
                   const lp_options& options = {}, double objective_constant = 0.0) {
  for (Index j = 0; j < A.cols(); ++j)
    for (Index i = 0; i < A.rows(); ++i)
      if (!std::isfinite(static_cast<double>(A(i, j))))
        return detail::lp_invalid("A(" + std::to_string(i) + ", " + std::to_string(j) +
                                  ") is not finite");
  detail::lp_sparse S = A.template cast<double>().sparseView(0.0, 0.0);
  return detail::lp_solve_checked(
      detail::lp_make_general(std::move(S), c, row_lower, row_upper, col_lower, col_upper,
                              objective_constant, options.infinity_threshold),
      options, true);
}

/// The same with A sparse.
template <class Derived>
lp_result solve_lp(const Eigen::SparseMatrixBase<Derived>& A, const Eigen::VectorXd& c,
                   const Eigen::VectorXd& row_lower, const Eigen::VectorXd& row_upper,
                   const Eigen::VectorXd& col_lower, const Eigen::VectorXd& col_upper,
                   const lp_options& options = {}, double objective_constant = 0.0) {
  detail::lp_sparse S = A.derived().template cast<double>();
  return detail::lp_solve_checked(
      detail::lp_make_general(std::move(S), c, row_lower, row_upper, col_lower, col_upper,
                              objective_constant, options.infinity_threshold),
      options, false);
}

}  // namespace qualify
