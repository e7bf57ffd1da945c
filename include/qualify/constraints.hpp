// qualify: how constraints are described (type, declared kind) and which are active at a point.
// SPDX-License-Identifier: MIT
#pragma once

#include <qualify/detail/dense.hpp>
#include <qualify/report.hpp>

#include <algorithm>
#include <cmath>
#include <optional>
#include <string>
#include <vector>

namespace qualify {

/// g(x) <= 0 is an inequality, h(x) = 0 an equality.
enum class constraint_type { inequality, equality };

/// What the modeller declares a constraint to be; the linear CQ and Slater's condition
/// rely on it, and `check_declared_affine` tests the `affine` claims.
enum class constraint_kind { affine, convex, nonlinear, unknown };

constexpr std::string_view to_string(constraint_type t) noexcept {
  return t == constraint_type::equality ? "equality" : "inequality";
}

constexpr std::string_view to_string(constraint_kind k) noexcept {
  switch (k) {
    case constraint_kind::affine: return "affine";
    case constraint_kind::convex: return "convex";
    case constraint_kind::nonlinear: return "nonlinear";
    case constraint_kind::unknown: break;
  }
  return "unknown";
}

/// How active rows are picked from constraint values.
struct activity_options {
  /// Inequality i is active when g_i(x) >= -activity_tolerance * s_i, with
  /// s_i = max(1, ||grad g_i||_2) so that the test reads as a distance to the boundary
  /// for rows with large gradients (common practice, no source). Equalities are always active.
  double activity_tolerance = 1e-6;
  /// Inactive inequalities with g_i(x) >= -near_active_factor * activity_tolerance * s_i are
  /// listed as near-active: a small step would make them active.
  double near_active_factor = 100.0;

  /// Empty when valid, else a message naming the field and the rule it breaks.
  std::string validate() const {
    if (!std::isfinite(activity_tolerance) || activity_tolerance < 0)
      return "activity_options.activity_tolerance must be finite and >= 0";
    if (!std::isfinite(near_active_factor) || near_active_factor < 1)
      return "activity_options.near_active_factor must be finite and >= 1";
    return {};
  }
};

/// The rows a constraint-qualification check looks at, chosen from values at a point.
struct active_set {
  double activity_tolerance = 0;  ///< the tolerance used
  std::vector<Index> active;      ///< equalities and active inequalities, ascending
  std::vector<Index> near_active; ///< inactive inequalities close to their bound
  std::vector<Index> violated;    ///< rows with g_i > tol * s_i, or |h_j| > tol * s_j (active too)
};

namespace detail {

/// Chooses the active rows from the gradient norms of the rows; the caller has checked sizes
/// and finiteness.
template <class DerivedV>
active_set select_active_by_norms(const std::vector<double>& gradient_norms,
                                  const Eigen::MatrixBase<DerivedV>& values,
                                  const std::vector<constraint_type>& types,
                                  const activity_options& options) {
  active_set set;
  set.activity_tolerance = options.activity_tolerance;
  for (std::size_t r = 0; r < gradient_norms.size(); ++r) {
    const Index i = Index(r);
    const double scale = std::max(1.0, gradient_norms[r]);
    const double tol = options.activity_tolerance * scale;
    const double value = static_cast<double>(values(i));
    if (types[r] == constraint_type::equality) {
      set.active.push_back(i);
      if (std::abs(value) > tol) set.violated.push_back(i);
    } else if (value >= -tol) {
      set.active.push_back(i);
      if (value > tol) set.violated.push_back(i);
    } else if (value >= -options.near_active_factor * tol) {
      set.near_active.push_back(i);
    }
  }
  return set;
}

/// Chooses the active rows of a dense Jacobian; the caller has checked sizes and finiteness.
template <class Scalar>
active_set select_active(const Eigen::Ref<const matrix<Scalar>>& jacobian,
                         const vector<Scalar>& values, const std::vector<constraint_type>& types,
                         const activity_options& options) {
  std::vector<double> norms(static_cast<std::size_t>(jacobian.rows()));
  for (Index i = 0; i < jacobian.rows(); ++i)
    norms[i] = static_cast<double>(jacobian.row(i).stableNorm());
  return select_active_by_norms(norms, values, types, options);
}

}  // namespace detail
}  // namespace qualify
