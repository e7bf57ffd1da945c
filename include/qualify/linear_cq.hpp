// qualify: the linear constraint qualification (by declared structure) and the numerical check
// that a constraint declared affine really is.
// SPDX-License-Identifier: MIT
#pragma once

#include <qualify/constraints.hpp>
#include <qualify/detail/dense.hpp>
#include <qualify/licq.hpp>
#include <qualify/report.hpp>
#include <qualify/sparse_licq.hpp>

#include <cmath>
#include <limits>
#include <string>
#include <vector>

namespace qualify {

/// The linear CQ: when every active constraint is affine, the KKT conditions are necessary at
/// a local minimiser whatever the rank of the active Jacobian.
struct linear_cq_report {
  verdict result = verdict::not_checked;
  std::string message = "check_linear_cq was not called";
  std::vector<Index> checked_rows;    ///< the active rows looked at
  std::vector<Index> non_affine_rows; ///< active rows not declared affine
  std::vector<constraint_kind> kinds; ///< the declared kinds of all rows
  row_names names;
  std::vector<finding> findings;
};

namespace detail {

inline linear_cq_report invalid_linear_cq(linear_cq_report rep, std::string code,
                                          std::string message) {
  rep.result = verdict::invalid_input;
  rep.message = "invalid input: " + message;
  add_finding(rep.findings, severity::error, std::move(code), std::move(message), {}, rep.names);
  return rep;
}

}  // namespace detail

/// Linear CQ over the rows in `active_rows` (indices into `kinds`).
inline linear_cq_report check_linear_cq(const std::vector<constraint_kind>& kinds,
                                        const std::vector<Index>& active_rows,
                                        std::vector<std::string> labels = {}) {
  linear_cq_report rep;
  rep.kinds = kinds;
  const std::size_t label_count = labels.size();
  rep.names = row_names(std::move(labels));
  if (label_count != 0 && label_count != kinds.size())
    return detail::invalid_linear_cq(rep, "label_count",
                                     std::to_string(label_count) + " labels for " +
                                         std::to_string(kinds.size()) + " kinds");
  for (Index row : active_rows)
    if (row < 0 || std::size_t(row) >= kinds.size())
      return detail::invalid_linear_cq(rep, "row_out_of_range",
                                       "active row " + std::to_string(row) + " is not in 0.." +
                                           std::to_string(Index(kinds.size()) - 1));
  rep.checked_rows = active_rows;
  for (Index row : active_rows)
    if (kinds[row] != constraint_kind::affine) rep.non_affine_rows.push_back(row);
  const std::string counted = std::to_string(active_rows.size()) + " active constraint" +
                              (active_rows.size() == 1 ? "" : "s");
  if (rep.non_affine_rows.empty()) {
    rep.result = verdict::holds;
    rep.message = "linear CQ holds: all " + counted +
                  " declared affine, so KKT conditions are necessary at a local minimiser";
  } else {
    rep.result = verdict::fails;
    rep.message = "linear CQ does not apply: " + std::to_string(rep.non_affine_rows.size()) +
                  " of " + counted + " not declared affine";
    for (Index row : rep.non_affine_rows)
      add_finding(rep.findings, severity::info, "not_declared_affine",
                  rep.names(row) + " is declared " + std::string(to_string(kinds[row])), {row},
                  rep.names);
  }
  return rep;
}

/// Linear CQ with every row active.
inline linear_cq_report check_linear_cq(const std::vector<constraint_kind>& kinds,
                                        std::vector<std::string> labels = {}) {
  std::vector<Index> all(kinds.size());
  for (std::size_t i = 0; i < all.size(); ++i) all[i] = Index(i);
  return check_linear_cq(kinds, all, std::move(labels));
}

/// Constraint values and Jacobian (rows = gradients) at one point.
template <class Scalar = double>
struct point_sample {
  detail::vector<Scalar> x;
  detail::vector<Scalar> values;
  detail::matrix<Scalar> jacobian;
};

struct affine_check_options {
  /// A declared-affine row fails when, between the first sample and any other,
  ///   ||grad_k - grad_0||_2 > tolerance * max(||grad_0||_2, ||grad_k||_2), or
  ///   |g_k - g_0 - grad_0 . (x_k - x_0)| > tolerance * max(|g_0|, |g_k|, ||grad_0|| ||x_k - x_0||).
  /// Exact affine functions in double meet 1e-8 easily; raise it for finite-difference
  /// Jacobians (common practice, no source).
  double tolerance = 1e-8;

  std::string validate() const {
    if (!(std::isfinite(tolerance) && tolerance >= 0))
      return "affine_check_options.tolerance must be finite and >= 0";
    return {};
  }
};

/// Which declared-affine rows behave affinely across the samples.
struct affine_check_report {
  verdict result = verdict::not_checked;
  std::string message = "check_declared_affine was not called";
  double tolerance = 0;             ///< as used
  Index samples = 0;
  std::vector<Index> checked_rows;  ///< rows declared affine
  std::vector<double> deviation;    ///< worst relative deviation of each checked row
  std::vector<Index> not_affine_rows;
  row_names names;
  std::vector<finding> findings;
};

/// Tests each row declared affine in `kinds` against two or more point samples: its gradient
/// must not change and its value must follow its gradient. Passing is evidence at the sampled
/// points, not a proof; failing is a proof.
template <class Scalar>
affine_check_report check_declared_affine(const std::vector<constraint_kind>& kinds,
                                          const std::vector<point_sample<Scalar>>& samples,
                                          const affine_check_options& options = {},
                                          std::vector<std::string> labels = {}) {
  static_assert(std::is_floating_point_v<Scalar>, "samples hold float, double or long double");
  affine_check_report rep;
  rep.tolerance = options.tolerance;
  rep.samples = Index(samples.size());
  const std::size_t label_count = labels.size();
  rep.names = row_names(std::move(labels));
  const auto invalid = [&](std::string code, std::string message) {
    rep.result = verdict::invalid_input;
    rep.message = "invalid input: " + message;
    add_finding(rep.findings, severity::error, std::move(code), std::move(message), {}, rep.names);
    return rep;
  };
  if (auto bad = options.validate(); !bad.empty()) return invalid("bad_option", bad);
  const Index m = Index(kinds.size());
  if (label_count != 0 && label_count != kinds.size())
    return invalid("label_count", std::to_string(label_count) + " labels for " +
                                      std::to_string(m) + " kinds");
  if (samples.size() < 2) return invalid("too_few_samples", "needs at least two point samples");
  const Index n = samples[0].x.size();
  for (std::size_t s = 0; s < samples.size(); ++s) {
    const auto& p = samples[s];
    const std::string where = "sample " + std::to_string(s);
    if (p.x.size() != n || p.values.size() != m || p.jacobian.rows() != m || p.jacobian.cols() != n)
      return invalid("dimension_mismatch",
                     where + ": expected x of " + std::to_string(n) + ", " + std::to_string(m) +
                         " values and a " + std::to_string(m) + "x" + std::to_string(n) +
                         " Jacobian");
    for (auto [matrix_bad, what] :
         {std::pair{detail::non_finite_message(p.x, "x"), "x"},
          std::pair{detail::non_finite_message(p.values, "value"), "values"},
          std::pair{detail::non_finite_message(p.jacobian, "Jacobian"), "jacobian"}})
      if (matrix_bad) return invalid("non_finite_entry", where + ": " + *matrix_bad);
  }

  const auto& base = samples[0];
  const double tiny = double(std::numeric_limits<Scalar>::min());
  for (Index i = 0; i < m; ++i) {
    if (kinds[i] != constraint_kind::affine) continue;
    double worst = 0;
    const Scalar g0_norm = base.jacobian.row(i).stableNorm();
    for (std::size_t s = 1; s < samples.size(); ++s) {
      const auto& p = samples[s];
      const Scalar gk_norm = p.jacobian.row(i).stableNorm();
      const double grad_change = double((p.jacobian.row(i) - base.jacobian.row(i)).stableNorm());
      const double grad_scale = std::max(double(std::max(g0_norm, gk_norm)), tiny);
      const detail::vector<Scalar> step = p.x - base.x;
      const double predicted = double(base.values(i) + base.jacobian.row(i).dot(step));
      const double value_scale =
          std::max({double(std::abs(base.values(i))), double(std::abs(p.values(i))),
                    double(g0_norm * step.stableNorm()), tiny});
      worst = std::max({worst, grad_change == 0 ? 0.0 : grad_change / grad_scale,
                        std::abs(double(p.values(i)) - predicted) / value_scale});
    }
    rep.checked_rows.push_back(i);
    rep.deviation.push_back(worst);
    if (worst > options.tolerance) {
      rep.not_affine_rows.push_back(i);
      add_finding(rep.findings, severity::error, "declared_affine_not_affine",
                  rep.names(i) + " is declared affine but deviates by " +
                      detail::format_figure(worst) + " (relative) between samples",
                  {i}, rep.names);
    }
  }
  const std::string tol = " (tolerance " + detail::format_figure(options.tolerance) + ", " +
                          std::to_string(samples.size()) + " samples)";
  if (rep.not_affine_rows.empty()) {
    rep.result = verdict::holds;
    rep.message = "declared-affine rows behave affinely: " + std::to_string(rep.checked_rows.size()) +
                  " checked" + tol;
  } else {
    rep.result = verdict::fails;
    rep.message = std::to_string(rep.not_affine_rows.size()) + " of " +
                  std::to_string(rep.checked_rows.size()) +
                  " rows declared affine are not affine" + tol;
  }
  return rep;
}

/// LICQ and linear CQ side by side at a point, the two answers a solver wants together.
struct qualification_report {
  licq_report licq;
  linear_cq_report linear_cq;
};

namespace detail {

/// The linear CQ beside a LICQ report that picked its active rows from values.
inline qualification_report qualifications_from(licq_report licq, Index rows,
                                                const std::vector<constraint_kind>& kinds,
                                                const std::vector<std::string>& labels) {
  qualification_report rep;
  rep.licq = std::move(licq);
  if (kinds.size() != std::size_t(rows)) {
    rep.linear_cq.names = row_names(labels);
    rep.linear_cq = detail::invalid_linear_cq(
        rep.linear_cq, "kind_count",
        std::to_string(kinds.size()) + " kinds for " + std::to_string(rows) + " rows");
  } else if (rep.licq.result == verdict::invalid_input) {
    rep.linear_cq.names = row_names(labels);
    rep.linear_cq = detail::invalid_linear_cq(rep.linear_cq, "invalid_jacobian",
                                              "the LICQ input was invalid: " + rep.licq.message);
  } else {
    rep.linear_cq = check_linear_cq(kinds, rep.licq.active->active, labels);
  }
  return rep;
}

}  // namespace detail

/// Picks the active rows from `values` and `types`, then checks LICQ on them and the linear CQ
/// from their declared `kinds`.
template <class DerivedJ, class DerivedV>
qualification_report check_qualifications(const Eigen::MatrixBase<DerivedJ>& jacobian,
                                          const Eigen::MatrixBase<DerivedV>& values,
                                          const std::vector<constraint_type>& types,
                                          const std::vector<constraint_kind>& kinds,
                                          const licq_options& options = {},
                                          const std::vector<std::string>& labels = {}) {
  return detail::qualifications_from(check_licq(jacobian, values, types, options, labels),
                                     jacobian.rows(), kinds, labels);
}

/// The same on a sparse Jacobian (sparse_licq.hpp decides LICQ).
template <class DerivedJ, class DerivedV>
qualification_report check_qualifications(const Eigen::SparseMatrixBase<DerivedJ>& jacobian,
                                          const Eigen::MatrixBase<DerivedV>& values,
                                          const std::vector<constraint_type>& types,
                                          const std::vector<constraint_kind>& kinds,
                                          const licq_options& options = {},
                                          const std::vector<std::string>& labels = {}) {
  return detail::qualifications_from(check_licq(jacobian, values, types, options, labels),
                                     jacobian.rows(), kinds, labels);
}

}  // namespace qualify
