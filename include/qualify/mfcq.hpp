// qualify: the Mangasarian-Fromovitz constraint qualification (MFCQ) by an LP and its certificates.
// SPDX-License-Identifier: MIT
#pragma once

#include <Eigen/Dense>
#include <Eigen/SparseCholesky>
#include <algorithm>
#include <cmath>
#include <limits>
#include <optional>
#include <qualify/licq.hpp>
#include <qualify/lp.hpp>
#include <qualify/report.hpp>
#include <qualify/sparse_licq.hpp>
#include <string>
#include <vector>

namespace qualify {

/// Settings of `check_mfcq`. Rows are normalised to unit gradients first, so every figure
/// below is relative to the gradient norms and a constraint multiplied by a positive constant
/// gives the same verdict.
struct mfcq_options {
  /// Threshold tau on the LP value t* = max { t : a_i . d + t <= 0, E d = 0, |d|_inf <= 1 }
  /// over unit gradients a_i. Automatic (nullopt): 10 * max(lp.gap_tolerance,
  /// lp.dual_tolerance) = 1e-7 by default, ten times the accuracy the LP is solved to
  /// (common practice, no source).
  std::optional<double> relative_threshold;
  /// Holds needs a direction, checked directly, with max_i a_i . d <= -band * tau; fails needs
  /// a positive dependence whose residual proves t* <= tau; undecided in between.
  double undecided_band = 10.0;
  /// Inequality rows with ||row||_2 <= zero_row_norm are zero gradients (absolute): no
  /// direction can decrease them, so MFCQ fails by structure.
  double zero_row_norm = 0.0;
  /// A multiplier lambda_i < support_threshold * max lambda is set to zero before the
  /// certificate is polished and checked (an interior point leaves tiny multipliers on rows
  /// outside the dependence; common practice, no source).
  double support_threshold = 1e-6;
  /// Also check LICQ on [A; E] and tie the verdicts together (LICQ holds => MFCQ holds).
  bool compare_with_licq = true;
  /// The rank check of E (and of [A; E]) by check_licq.
  licq_options licq;
  /// The LP engine's settings.
  lp_options lp;

  /// Empty when valid, else a message naming the field and the rule it breaks.
  std::string validate() const {
    if (relative_threshold &&
        !(std::isfinite(*relative_threshold) && *relative_threshold > 0 && *relative_threshold < 1))
      return "mfcq_options.relative_threshold must be finite and in (0, 1)";
    if (!(std::isfinite(undecided_band) && undecided_band >= 1))
      return "mfcq_options.undecided_band must be finite and >= 1";
    if (!(std::isfinite(zero_row_norm) && zero_row_norm >= 0))
      return "mfcq_options.zero_row_norm must be finite and >= 0";
    if (!(std::isfinite(support_threshold) && support_threshold >= 0 && support_threshold < 1))
      return "mfcq_options.support_threshold must be finite and in [0, 1)";
    if (auto bad = licq.validate(); !bad.empty()) return "mfcq_options." + bad;
    detail::lp_general empty;
    if (auto bad = detail::lp_validate(empty, lp); !bad.empty())
      return "mfcq_options.lp." + bad.substr(bad.find('.') + 1);
    return {};
  }
};

/// Which fact proves that MFCQ fails.
enum class mfcq_certificate_kind {
  none,
  /// lambda >= 0, sum lambda = 1, A^T lambda + E^T mu = 0 (Motzkin); max |mu_j| = 1 instead
  /// where mu / sum lambda would overflow double (rows whose norms span its range).
  positive_dependence,
  equality_dependence,  ///< lambda = 0, ||mu||_1 = 1, E^T mu = 0: E lacks full row rank
};

constexpr std::string_view to_string(mfcq_certificate_kind k) noexcept {
  switch (k) {
    case mfcq_certificate_kind::positive_dependence:
      return "positive_dependence";
    case mfcq_certificate_kind::equality_dependence:
      return "equality_dependence";
    case mfcq_certificate_kind::none:
      break;
  }
  return "none";
}

/// A dependence among the gradients as given: A^T lambda + E^T mu ~ 0 with lambda >= 0.
struct mfcq_certificate {
  mfcq_certificate_kind kind = mfcq_certificate_kind::none;
  Eigen::VectorXd lambda;  ///< one per inequality row, >= 0, summing to 1 (positive_dependence)
  Eigen::VectorXd mu;      ///< one per equality row
  std::vector<Index> ineq_rows;  ///< rows of A with lambda_i > 0 (0-based in A)
  std::vector<Index> eq_rows;    ///< rows of E with mu_j != 0 (0-based in E)
  /// ||A^T lambda + E^T mu||_2 / (sum lambda_i ||a_i|| + sum |mu_j| ||e_j||), computed on
  /// the data as given.
  double residual = std::numeric_limits<double>::infinity();
  /// ||r||_1 of the same sum on unit gradients with sum lambda = 1: an upper bound on t*,
  /// since every feasible d gives max_i a_i . d >= lambda^T A d = r . d >= -||r||_1.
  double margin_bound = std::numeric_limits<double>::infinity();
};

/// What `check_mfcq` found. Findings number rows 0..m_A-1 for inequalities, then m_A.. for
/// equalities (the order of `labels`); the certificate numbers each block on its own.
struct mfcq_report {
  verdict result = verdict::not_checked;
  std::string message = "check_mfcq was not called";
  Index ineq_rows = 0, eq_rows = 0, cols = 0;
  std::optional<double> relative_threshold_requested;  ///< as given in the options
  double relative_threshold = 0;                       ///< tau, as used
  double undecided_band = 0;
  /// t* of the LP (0 for a zero gradient, 1 when no inequality is active).
  double margin = 0;
  /// The figure the verdict rests on: direction_margin when it holds, certificate.margin_bound
  /// when it fails (a lower, resp. upper, bound on t*).
  double deciding_value = 0;
  /// The direction found (||d||_inf = 1, projected on null(E)), and what it does, checked on
  /// the data: -max_i a_i . d / ||a_i|| (> 0 proves A d < 0), max_i (A d)_i as given, and
  /// max_j |e_j . d| / ||e_j||. Empty (figures 0) when it decreases not every inequality.
  Eigen::VectorXd direction;
  double direction_margin = 0;
  double max_ineq_derivative = 0;
  double equality_residual = 0;
  lp_status lp = lp_status::not_solved;
  int lp_iterations = 0;
  mfcq_certificate certificate;              ///< when MFCQ fails (or undecided: the best one found)
  std::optional<licq_report> equality_licq;  ///< rank of E (E's own row numbers)
  std::optional<licq_report> licq;           ///< LICQ on [A; E] (combined row numbers)
  row_names names;                           ///< labels as given, or "ineq i" / "eq j"
  std::vector<finding> findings;
};

namespace detail {

inline mfcq_report invalid_mfcq(mfcq_report rep, std::string code, std::string message) {
  rep.result = verdict::invalid_input;
  rep.message = "invalid input: " + message;
  add_finding(rep.findings, severity::error, std::move(code), std::move(message), {}, rep.names);
  return rep;
}

/// Polishes lambda (on the support) and mu so that A_S^T lambda + E^T mu is as small as least
/// squares makes it, keeping sum lambda = 1 by moving within that hyperplane (minimum-norm
/// correction, so lambda stays near the LP's). Kept only when lambda stays >= 0.
inline void polish_dependence(const Eigen::MatrixXd& a_support, const Eigen::MatrixXd& e_unit,
                              Eigen::VectorXd& lambda, Eigen::VectorXd& mu) {
  const Index s = a_support.rows(), q = e_unit.rows(), n = a_support.cols();
  Eigen::MatrixXd m(n, s + q);
  m.leftCols(s) = a_support.transpose();
  if (q > 0) m.rightCols(q) = e_unit.transpose();
  Eigen::VectorXd z(s + q);
  z << lambda, mu;
  Eigen::MatrixXd p = Eigen::MatrixXd::Identity(s + q, s + q);
  p.topLeftCorner(s, s).array() -= 1.0 / double(s);
  const Eigen::MatrixXd mp = m * p;
  const Eigen::VectorXd r0 = m * z;
  const Eigen::VectorXd step =
      p * Eigen::CompleteOrthogonalDecomposition<Eigen::MatrixXd>(mp).solve(-r0);
  const Eigen::VectorXd polished = z + step;
  if (!polished.allFinite() || polished.head(s).minCoeff() < 0) return;
  if ((m * polished).norm() >= r0.norm()) return;
  lambda = polished.head(s);
  mu = polished.tail(q);
}

/// Sparse rows in double: the form the MFCQ core works on for sparse input.
using mfcq_sparse = Eigen::SparseMatrix<double, Eigen::RowMajor>;

/// The same polish for sparse gradients, without anything of size n x (s + q): the step keeps
/// sum lambda by writing lambda's step as B w (B = [I; -1^T], so column i of A_S^T B is
/// a_i - a_last), and the least-squares problem in w is solved by a sparse LDL^T of its normal
/// equations with a ridge of 1e-14 x their largest diagonal entry (so that a rank-deficient
/// system still has one solution) and one refinement step. Kept, as in the dense polish, only
/// when lambda stays >= 0 and the residual falls.
inline void polish_dependence(const mfcq_sparse& a_support, const mfcq_sparse& e_unit,
                              Eigen::VectorXd& lambda, Eigen::VectorXd& mu) {
  using Eigen::VectorXd;
  const Index s = a_support.rows(), q = e_unit.rows(), n = a_support.cols(), w_size = s - 1 + q;
  if (w_size == 0) return;
  Eigen::SparseMatrix<double> m(n, s + q), mb(n, w_size);
  {
    std::vector<Eigen::Triplet<double>> full, reduced;
    for (Index i = 0; i < s; ++i)
      for (mfcq_sparse::InnerIterator it(a_support, i); it; ++it) {
        full.emplace_back(it.col(), i, it.value());
        if (i < s - 1) reduced.emplace_back(it.col(), i, it.value());
        if (i == s - 1)
          for (Index c = 0; c < s - 1; ++c) reduced.emplace_back(it.col(), c, -it.value());
      }
    for (Index j = 0; j < q; ++j)
      for (mfcq_sparse::InnerIterator it(e_unit, j); it; ++it) {
        full.emplace_back(it.col(), s + j, it.value());
        reduced.emplace_back(it.col(), s - 1 + j, it.value());
      }
    m.setFromTriplets(full.begin(), full.end());
    mb.setFromTriplets(reduced.begin(), reduced.end());  // repeated positions are summed
  }
  VectorXd z(s + q);
  z << lambda, mu;
  const VectorXd r0 = m * z;
  Eigen::SparseMatrix<double> normal = mb.transpose() * mb;
  double ridge = 0;
  for (Index c = 0; c < w_size; ++c) ridge = std::max(ridge, normal.coeff(c, c));
  ridge = std::max(ridge, 1.0) * 1e-14;
  for (Index c = 0; c < w_size; ++c) normal.coeffRef(c, c) += ridge;
  Eigen::SimplicialLDLT<Eigen::SparseMatrix<double>> ldlt(normal);
  if (ldlt.info() != Eigen::Success) return;
  VectorXd w = ldlt.solve(VectorXd(-(mb.transpose() * r0)));
  const VectorXd correction = -(mb.transpose() * (mb * w + r0)) - ridge * w;
  w += ldlt.solve(correction);
  VectorXd step(s + q);
  step.head(s - 1) = w.head(s - 1);
  step(s - 1) = -w.head(s - 1).sum();
  step.tail(q) = w.tail(q);
  const VectorXd polished = z + step;
  if (!polished.allFinite() || polished.head(s).minCoeff() < 0) return;
  if ((m * polished).norm() >= r0.norm()) return;
  lambda = polished.head(s);
  mu = polished.tail(q);
}

// The few operations of the MFCQ core that differ between dense and sparse gradients.

inline Eigen::VectorXd row_norms(const Eigen::MatrixXd& m) {
  Eigen::VectorXd out(m.rows());
  for (Index i = 0; i < m.rows(); ++i) out(i) = m.row(i).stableNorm();
  return out;
}

inline Eigen::VectorXd row_norms(const mfcq_sparse& m) {
  std::vector<double> norms;
  std::vector<sparse_index> counts;
  sparse_row_norms(m, norms, counts);
  return Eigen::Map<const Eigen::VectorXd>(norms.data(), Index(norms.size()));
}

/// Row i divided by norms(i) > 0: a division, since 1 / norm overflows for subnormal rows.
inline Eigen::MatrixXd divide_rows(Eigen::MatrixXd m, const Eigen::VectorXd& norms) {
  for (Index i = 0; i < m.rows(); ++i) m.row(i) /= norms(i);
  return m;
}

inline mfcq_sparse divide_rows(mfcq_sparse m, const Eigen::VectorXd& norms) {
  for (Index i = 0; i < m.outerSize(); ++i)
    for (mfcq_sparse::InnerIterator it(m, i); it; ++it) it.valueRef() /= norms(i);
  return m;
}

inline Eigen::MatrixXd select_rows(const Eigen::MatrixXd& m, const std::vector<Index>& rows) {
  return m(rows, Eigen::all);
}

inline mfcq_sparse select_rows(const mfcq_sparse& m, const std::vector<Index>& rows) {
  mfcq_sparse out(Index(rows.size()), m.cols());
  Index nnz = 0;
  for (Index i : rows) nnz += m.row(i).nonZeros();
  out.reserve(nnz);
  for (std::size_t k = 0; k < rows.size(); ++k) {
    out.startVec(Index(k));
    for (mfcq_sparse::InnerIterator it(m, rows[k]); it; ++it)
      out.insertBack(Index(k), it.col()) = it.value();
  }
  out.finalize();
  return out;
}

inline Eigen::MatrixXd stack_rows(const Eigen::MatrixXd& top, const Eigen::MatrixXd& bottom) {
  Eigen::MatrixXd out(top.rows() + bottom.rows(), top.cols());
  out << top, bottom;
  return out;
}

inline mfcq_sparse stack_rows(const mfcq_sparse& top, const mfcq_sparse& bottom) {
  mfcq_sparse out(top.rows() + bottom.rows(), top.cols());
  out.reserve(top.nonZeros() + bottom.nonZeros());
  for (Index i = 0; i < out.rows(); ++i) {
    out.startVec(i);
    const bool upper = i < top.rows();
    for (mfcq_sparse::InnerIterator it(upper ? top : bottom, upper ? i : i - top.rows()); it; ++it)
      out.insertBack(i, it.col()) = it.value();
  }
  out.finalize();
  return out;
}

/// The MFCQ LP max t s.t. A d + t 1 <= 0, E d = 0, -1 <= d <= 1, t <= 1 on unit rows; the
/// result's x is (d, t) and its row_duals are those of the A and E rows.
inline lp_result solve_mfcq_lp(const Eigen::MatrixXd& a_unit, const Eigen::MatrixXd& e_unit,
                               const lp_options& options) {
  const Index ma = a_unit.rows(), q = e_unit.rows(), n = a_unit.cols();
  const double inf = std::numeric_limits<double>::infinity();
  Eigen::MatrixXd lp_a = Eigen::MatrixXd::Zero(ma + q, n + 1);
  lp_a.topLeftCorner(ma, n) = a_unit;
  lp_a.topRightCorner(ma, 1).setOnes();
  lp_a.bottomLeftCorner(q, n) = e_unit;
  Eigen::VectorXd row_lower = Eigen::VectorXd::Constant(ma + q, -inf);
  row_lower.tail(q).setZero();
  Eigen::VectorXd c = Eigen::VectorXd::Zero(n + 1),
                  col_lower = Eigen::VectorXd::Constant(n + 1, -1.0);
  c(n) = -1;
  col_lower(n) = -inf;
  return solve_lp(lp_a, c, row_lower, Eigen::VectorXd::Zero(ma + q), col_lower,
                  Eigen::VectorXd::Ones(n + 1), options);
}

/// The same LP for sparse rows, with t written as a chain s_1 = s_2 = ... = s_ma (rows
/// a_i . d + s_i <= 0 and s_i - s_{i+1} = 0): the column of t would otherwise be dense (one
/// entry per inequality), and the LP engine's update for dense columns stalls on these
/// degenerate LPs (numerical_trouble from about 2000 rows of banded equalities). The duals of
/// the A rows keep their meaning: the chain passes the objective's weight on to them.
inline lp_result solve_mfcq_lp(const mfcq_sparse& a_unit, const mfcq_sparse& e_unit,
                               const lp_options& options) {
  const Index ma = a_unit.rows(), q = e_unit.rows(), n = a_unit.cols();
  const Index rows = ma + q + std::max<Index>(ma - 1, 0), cols = n + ma;
  const double inf = std::numeric_limits<double>::infinity();
  std::vector<Eigen::Triplet<double>> entries;
  entries.reserve(std::size_t(a_unit.nonZeros() + e_unit.nonZeros() + 3 * ma));
  for (Index i = 0; i < ma; ++i) {
    for (mfcq_sparse::InnerIterator it(a_unit, i); it; ++it)
      entries.emplace_back(i, it.col(), it.value());
    entries.emplace_back(i, n + i, 1.0);
  }
  for (Index j = 0; j < q; ++j)
    for (mfcq_sparse::InnerIterator it(e_unit, j); it; ++it)
      entries.emplace_back(ma + j, it.col(), it.value());
  for (Index i = 0; i + 1 < ma; ++i) {
    entries.emplace_back(ma + q + i, n + i, 1.0);
    entries.emplace_back(ma + q + i, n + i + 1, -1.0);
  }
  Eigen::SparseMatrix<double> lp_a(rows, cols);
  lp_a.setFromTriplets(entries.begin(), entries.end());
  Eigen::VectorXd row_lower = Eigen::VectorXd::Zero(rows);
  row_lower.head(ma).setConstant(-inf);
  Eigen::VectorXd c = Eigen::VectorXd::Zero(cols),
                  col_lower = Eigen::VectorXd::Constant(cols, -1.0),
                  col_upper = Eigen::VectorXd::Ones(cols);
  c(n) = -1;
  col_lower.tail(ma).setConstant(-inf);
  lp_result lp =
      solve_lp(lp_a, c, row_lower, Eigen::VectorXd::Zero(rows), col_lower, col_upper, options);
  if (lp.x.size() == cols) lp.x.conservativeResize(n + 1);  // (d, s_1 = t)
  if (lp.row_duals.size() == rows) lp.row_duals.conservativeResize(ma + q);
  return lp;
}

/// d minus its component in the row space of E (unit rows, a basis of their span).
inline void project_out(const Eigen::MatrixXd& e_unit, Eigen::VectorXd& d) {
  if (e_unit.rows() == 0) return;
  Eigen::HouseholderQR<Eigen::MatrixXd> qr(e_unit.transpose());
  d -= e_unit.transpose() * Eigen::VectorXd(qr.solve(d));
}

/// The same for sparse E, by a sparse LDL^T of E E^T (ridge 1e-14: E may be near-singular
/// when its rank was undecided) and a second projection of what is left. The result is not
/// trusted: the caller checks |e_j . d| itself.
inline void project_out(const mfcq_sparse& e_unit, Eigen::VectorXd& d) {
  const Index q = e_unit.rows();
  if (q == 0) return;
  Eigen::SparseMatrix<double> gram = e_unit * e_unit.transpose();
  for (Index j = 0; j < q; ++j) gram.coeffRef(j, j) += 1e-14;
  Eigen::SimplicialLDLT<Eigen::SparseMatrix<double>> ldlt(gram);
  if (ldlt.info() != Eigen::Success) return;
  for (int pass = 0; pass < 2; ++pass) {
    const Eigen::VectorXd y = ldlt.solve(Eigen::VectorXd(e_unit * d));
    d -= e_unit.transpose() * y;
  }
}

/// The report both check_mfcq forms start from: sizes, names (labels as given, or "ineq i" /
/// "eq j", returned in `labels`), and the checks of the options, the labels and the sizes.
inline mfcq_report mfcq_start(Index ma, Index a_cols, Index me, Index e_cols,
                              const mfcq_options& options, std::vector<std::string>& labels) {
  mfcq_report rep;
  rep.ineq_rows = ma;
  rep.eq_rows = me;
  rep.cols = ma > 0 || me == 0 ? a_cols : e_cols;
  rep.relative_threshold_requested = options.relative_threshold;
  rep.undecided_band = options.undecided_band;
  const std::size_t label_count = labels.size();
  if (labels.empty()) {
    for (Index i = 0; i < ma; ++i) labels.push_back("ineq " + std::to_string(i));
    for (Index j = 0; j < me; ++j) labels.push_back("eq " + std::to_string(j));
  }
  rep.names = row_names(labels);
  if (auto bad = options.validate(); !bad.empty()) return invalid_mfcq(rep, "bad_option", bad);
  if (label_count != 0 && label_count != std::size_t(ma + me)) {
    rep.names = row_names();
    return invalid_mfcq(rep, "label_count",
                        std::to_string(label_count) + " labels for " + std::to_string(ma) +
                            " inequality and " + std::to_string(me) + " equality rows");
  }
  // A block without rows may come with any column count (an empty MatrixXd).
  const bool a_sized = ma > 0 || a_cols > 0;
  const bool e_sized = me > 0 || e_cols > 0;
  if (a_sized && e_sized && a_cols != e_cols)
    return invalid_mfcq(rep, "dimension_mismatch",
                        "the inequality Jacobian has " + std::to_string(a_cols) +
                            " columns, the equality Jacobian " + std::to_string(e_cols));
  if (ma + me > 0 && rep.cols == 0)
    return invalid_mfcq(rep, "empty_jacobian", "the Jacobians have no columns (variables)");
  return rep;
}

/// MFCQ on validated gradients in double, dense (MatrixXd) or sparse (mfcq_sparse); blocks
/// without rows have rep.cols columns.
template <class Matrix>
mfcq_report mfcq_run(const Matrix& a, const Matrix& e, const mfcq_options& options,
                     const std::vector<std::string>& labels, mfcq_report rep) {
  using Eigen::VectorXd;
  const Index ma = a.rows(), me = e.rows(), n = rep.cols;
  const double tau = options.relative_threshold.value_or(
      10 * std::max(options.lp.gap_tolerance, options.lp.dual_tolerance));
  const double band = options.undecided_band;
  rep.relative_threshold = tau;
  const auto& names = rep.names;
  if (ma + me == 0) {
    rep.result = verdict::holds;
    rep.margin = rep.deciding_value = rep.direction_margin = 1;
    rep.direction = VectorXd::Zero(n);
    rep.message = "MFCQ holds vacuously: no active inequality and no equality constraint";
    return rep;
  }
  const std::vector<std::string> eq_labels(labels.begin() + ma, labels.end());
  const VectorXd a_norm = row_norms(a), e_norm = row_norms(e);
  for (Index i = 0; i < ma + me; ++i)
    if (!std::isfinite(i < ma ? a_norm(i) : e_norm(i - ma))) {
      std::string message = overflowing_row_message(names(i));
      return invalid_mfcq(std::move(rep), "row_norm_overflow", std::move(message));
    }

  // Rank of E, with its dependent rows explained by the LICQ analysis.
  verdict eq_verdict = verdict::holds;
  std::vector<Index> eq_used;  // equality rows the LP keeps: a basis of their span
  if (me > 0) {
    rep.equality_licq = check_licq(e, options.licq, eq_labels);
    const licq_report& el = *rep.equality_licq;
    eq_verdict = el.result;
    if (el.result == verdict::fails) {
      eq_used = el.independent_rows;
    } else {
      for (Index j = 0; j < me; ++j)
        if (e_norm(j) > 0) eq_used.push_back(j);
    }
    for (const auto& f : el.findings) {
      std::vector<Index> rows;
      for (Index r : f.rows) rows.push_back(ma + r);
      add_finding(rep.findings, f.level, f.code, "among the equalities: " + f.message, rows, names);
    }
    if (el.result == verdict::fails)
      add_finding(rep.findings, severity::error, "equality_rank_deficient",
                  "the equality gradients are linearly dependent (rank " + std::to_string(el.rank) +
                      " of " + std::to_string(me) + "): no multiplier set can be bounded",
                  {}, names);
  }
  if (options.compare_with_licq) rep.licq = check_licq(stack_rows(a, e), options.licq, labels);

  std::vector<Index> zero_rows;
  for (Index i = 0; i < ma; ++i)
    if (a_norm(i) <= options.zero_row_norm) zero_rows.push_back(i);
  const Index q = Index(eq_used.size());
  const Matrix e_unit = divide_rows(select_rows(e, eq_used), e_norm(eq_used));

  // The direction part: does some d with E d = 0 decrease every active inequality?
  verdict dir_verdict = verdict::undecided;
  mfcq_certificate& cert = rep.certificate;
  VectorXd lambda_unit, mu_unit;  // on the unit rows (mu on eq_used)
  if (!zero_rows.empty()) {
    dir_verdict = verdict::fails;  // 0 . d + t <= 0 forces t* = 0
    rep.margin = 0;
    lambda_unit = VectorXd::Zero(ma);
    for (Index i : zero_rows) lambda_unit(i) = 1.0 / double(zero_rows.size());
    mu_unit = VectorXd::Zero(q);
    add_finding(rep.findings, severity::error, "zero_gradient",
                "active inequality with a zero gradient: no direction decreases it", zero_rows,
                names);
  } else if (ma == 0) {
    dir_verdict = verdict::holds;  // d = 0 meets E d = 0 and there is nothing to decrease
    rep.margin = rep.direction_margin = 1;
    rep.direction = VectorXd::Zero(n);
    rep.max_ineq_derivative = -std::numeric_limits<double>::infinity();
  } else {
    const Matrix a_unit = divide_rows(a, a_norm);
    const lp_result lp = solve_mfcq_lp(a_unit, e_unit, options.lp);
    rep.lp = lp.status;
    rep.lp_iterations = lp.iterations;
    if (lp.status != lp_status::optimal) {
      add_finding(rep.findings, severity::warning, "lp_not_solved",
                  "the MFCQ LP ended " + std::string(to_string(lp.status)) + ": " + lp.message, {},
                  names);
    }
    if (lp.x.size() == n + 1 && lp.row_duals.size() == ma + q) {
      rep.margin = lp.x(n);
      // The direction, projected on null(E) and scaled to ||d||_inf = 1, checked directly.
      VectorXd d = lp.x.head(n);
      project_out(e_unit, d);
      const double dn = d.template lpNorm<Eigen::Infinity>();
      if (dn > 0 && std::isfinite(dn)) d /= dn;
      rep.direction = d;
      rep.direction_margin = -VectorXd(a_unit * d).maxCoeff();
      rep.max_ineq_derivative = VectorXd(a * d).maxCoeff();
      rep.equality_residual = 0;
      const VectorXd ed = e * d;
      for (Index j = 0; j < me; ++j)
        if (e_norm(j) > 0)
          rep.equality_residual = std::max(rep.equality_residual, std::abs(ed(j)) / e_norm(j));
      if (rep.direction_margin >= band * tau && rep.equality_residual <= tau && dn > 0)
        dir_verdict = verdict::holds;
      if (!(rep.direction_margin > 0)) {  // decreases nothing for sure: not worth showing
        rep.direction.resize(0);
        rep.direction_margin = rep.max_ineq_derivative = rep.equality_residual = 0;
      }
      // Duals: c = A^T y + z; inequality rows sit at their upper bound, so y <= 0 there.
      lambda_unit = (-lp.row_duals.head(ma)).cwiseMax(0.0);
      mu_unit = -lp.row_duals.tail(q);
    }
    if (dir_verdict != verdict::holds && lambda_unit.size() == ma && lambda_unit.sum() > 0) {
      const double total = lambda_unit.sum();
      lambda_unit /= total;
      mu_unit /= total;
      const double cut = options.support_threshold * lambda_unit.maxCoeff();
      std::vector<Index> support;
      for (Index i = 0; i < ma; ++i)
        if (lambda_unit(i) >= cut && lambda_unit(i) > 0) support.push_back(i);
      VectorXd lam_s = lambda_unit(support);
      lam_s /= lam_s.sum();
      polish_dependence(select_rows(a_unit, support), e_unit, lam_s, mu_unit);
      lambda_unit.setZero();
      lambda_unit(support) = lam_s;
      const VectorXd r = a_unit.transpose() * lambda_unit + e_unit.transpose() * mu_unit;
      cert.margin_bound = r.template lpNorm<1>();
      if (cert.margin_bound <= tau) dir_verdict = verdict::fails;
    }
  }

  // The certificate on the gradients as given.
  // A proven failure is shown first: an undecided LP dependence yields to a rank failure of E.
  if (lambda_unit.size() == ma && dir_verdict != verdict::holds && lambda_unit.sum() > 0 &&
      (dir_verdict == verdict::fails || eq_verdict != verdict::fails)) {
    cert.kind = mfcq_certificate_kind::positive_dependence;
    cert.lambda = VectorXd::Zero(ma);
    cert.mu = VectorXd::Zero(me);
    // lambda_unit / ||a_i|| and mu_unit / ||e_j||, normalised to sum lambda = 1, in long
    // double: 1 / ||a_i|| overflows double for subnormal rows, and scaling by one norm
    // underflows the others when the norms span double's range (found by fuzzing).
    using ld = long double;
    Eigen::Matrix<ld, Eigen::Dynamic, 1> lam = Eigen::Matrix<ld, Eigen::Dynamic, 1>::Zero(ma),
                                         mu = Eigen::Matrix<ld, Eigen::Dynamic, 1>::Zero(me);
    for (Index i = 0; i < ma; ++i)
      if (lambda_unit(i) > 0)
        lam(i) = a_norm(i) > 0 ? ld(lambda_unit(i)) / ld(a_norm(i)) : ld(lambda_unit(i));
    for (Index k = 0; k < q; ++k) mu(eq_used[k]) = ld(mu_unit(k)) / ld(e_norm(eq_used[k]));
    // Divided by sum lambda, or by the largest |mu| where mu / sum lambda would overflow.
    ld scale = lam.sum();
    if (me > 0 && mu.cwiseAbs().maxCoeff() > scale * ld(1e300)) scale = mu.cwiseAbs().maxCoeff();
    cert.lambda = (lam / scale).cast<double>();
    cert.mu = (mu / scale).cast<double>();
    if (!zero_rows.empty()) cert.margin_bound = 0;
  } else if (eq_verdict == verdict::fails) {
    // E^T mu = 0 from a dependent equality, e_row = sum coefficient * e_term: the first whose
    // coefficients are all finite, else the first.
    const auto& deps = rep.equality_licq->dependencies;
    const auto finite = std::find_if(deps.begin(), deps.end(), [](const row_dependence& d) {
      return std::all_of(d.terms.begin(), d.terms.end(),
                         [](const row_dependence::term& t) { return std::isfinite(t.coefficient); });
    });
    const auto& dep = finite != deps.end() ? *finite : deps.front();
    cert.kind = mfcq_certificate_kind::equality_dependence;
    cert.lambda = VectorXd::Zero(ma);
    cert.mu = VectorXd::Zero(me);
    // mu = (1, -c) divided by its largest entry: a coefficient beyond double's range (rows
    // whose norms differ by more than the range, found by fuzzing) leaves its limit direction.
    double largest = 1;
    bool infinite = false;
    for (const auto& t : dep.terms)
      if (std::isinf(t.coefficient))
        infinite = true;
      else
        largest = std::max(largest, std::abs(t.coefficient));
    cert.mu(dep.row) = infinite ? 0.0 : 1 / largest;
    for (const auto& t : dep.terms)
      cert.mu(t.row) = std::isinf(t.coefficient) ? (t.coefficient > 0 ? -1.0 : 1.0)
                       : infinite                ? 0.0
                                                 : -t.coefficient / largest;
  }
  if (cert.kind != mfcq_certificate_kind::none) {
    if (cert.kind == mfcq_certificate_kind::equality_dependence) {
      const double total = cert.mu.template lpNorm<1>();
      cert.lambda /= total;
      cert.mu /= total;
    }
    for (Index i = 0; i < ma; ++i)
      if (cert.lambda(i) > 0) cert.ineq_rows.push_back(i);
    for (Index j = 0; j < me; ++j)
      if (cert.mu(j) != 0) cert.eq_rows.push_back(j);
    const VectorXd r = a.transpose() * cert.lambda + e.transpose() * cert.mu;
    const double size = a_norm.dot(cert.lambda) + e_norm.dot(cert.mu.cwiseAbs());
    cert.residual = size > 0 ? r.stableNorm() / size : 0.0;
  }

  // The verdict: either part failing suffices; holding needs both.
  if (eq_verdict == verdict::fails || dir_verdict == verdict::fails)
    rep.result = verdict::fails;
  else if (eq_verdict == verdict::holds && dir_verdict == verdict::holds)
    rep.result = verdict::holds;
  else
    rep.result = verdict::undecided;
  rep.deciding_value = dir_verdict == verdict::holds   ? rep.direction_margin
                       : dir_verdict == verdict::fails ? cert.margin_bound
                                                       : rep.margin;

  // Findings and the message.
  const auto fig = detail::format_figure;
  const std::string figures = " (t* = " + fig(rep.margin) + ", threshold " + fig(tau) + ")";
  if (cert.kind == mfcq_certificate_kind::positive_dependence) {
    std::string text;
    std::vector<Index> rows;
    constexpr std::size_t shown_terms = 8;  // the certificate keeps them all
    for (Index i : cert.ineq_rows) {
      rows.push_back(i);
      if (rows.size() <= shown_terms)
        text += (text.empty() ? "" : " + ") + fig(cert.lambda(i)) + "*" + names(i);
    }
    for (Index j : cert.eq_rows) {
      rows.push_back(ma + j);
      if (rows.size() <= shown_terms)
        text += std::string(cert.mu(j) < 0 ? " - " : " + ") + fig(std::abs(cert.mu(j))) + "*" +
                names(ma + j);
    }
    if (rows.size() > shown_terms)
      text += " + " + std::to_string(rows.size() - shown_terms) + " more terms";
    add_finding(rep.findings, dir_verdict == verdict::fails ? severity::error : severity::warning,
                "positive_dependence",
                "gradients " + text + " = 0 (relative residual " + fig(cert.residual) +
                    ", so t* <= " + fig(cert.margin_bound) +
                    "): no direction decreases these inequalities while keeping the equalities",
                rows, names);
  }
  const bool licq_holds = rep.licq && rep.licq->result == verdict::holds;
  const bool licq_fails = rep.licq && rep.licq->result == verdict::fails;
  if (rep.result == verdict::holds && licq_fails)
    add_finding(rep.findings, severity::info, "mfcq_without_licq",
                "MFCQ holds although LICQ fails: at a local minimiser KKT multipliers exist and "
                "form a bounded set (Gauvin, Math. Programming 12, 1977), but they need not be "
                "unique (unique exactly under the strict MFCQ: Kyparisis, Math. Programming 32, "
                "1985)",
                rep.licq->dependent_rows(), names);
  if (rep.result == verdict::fails && licq_holds)
    add_finding(rep.findings, severity::warning, "inconsistent_with_licq",
                "LICQ holds, which implies MFCQ: the two numerical decisions disagree", {}, names);

  const std::string counted =
      "decreases all " + std::to_string(ma) + " active inequalit" + (ma == 1 ? "y" : "ies") +
      (me > 0 ? " and keeps the " + std::to_string(me) + " equalit" + (me == 1 ? "y" : "ies")
              : std::string());
  switch (rep.result) {
    case verdict::holds:
      if (ma == 0) {
        rep.message = "MFCQ holds: no inequality is active and the " + std::to_string(me) +
                      " equality gradients are linearly independent";
        break;
      }
      rep.message = "MFCQ holds: a direction " + counted + " (verified margin " +
                    fig(rep.direction_margin) + ", t* = " + fig(rep.margin) + ", threshold " +
                    fig(tau) + ")";
      if (licq_holds) rep.message += "; LICQ holds too, so multipliers are unique";
      if (licq_fails) rep.message += "; LICQ fails: multipliers are bounded but need not be unique";
      break;
    case verdict::fails:
      if (dir_verdict == verdict::fails && !zero_rows.empty())
        rep.message = "MFCQ fails: an active inequality has a zero gradient";
      else if (dir_verdict == verdict::fails)
        rep.message = "MFCQ fails: the active gradients are positively dependent on " +
                      std::to_string(cert.ineq_rows.size()) + " inequalit" +
                      (cert.ineq_rows.size() == 1 ? "y" : "ies") + figures;
      else
        rep.message = "MFCQ fails: the equality gradients are linearly dependent (rank " +
                      std::to_string(rep.equality_licq->rank) + " of " + std::to_string(me) + ")";
      if (dir_verdict == verdict::fails && eq_verdict == verdict::fails)
        rep.message += "; the equality gradients are linearly dependent too";
      break;
    default:
      rep.message = "MFCQ undecided: ";
      if (eq_verdict == verdict::undecided)
        rep.message += "the rank of the equality gradients is undecided";
      else if (rep.lp != lp_status::optimal)
        rep.message += "the LP ended " + std::string(to_string(rep.lp));
      else
        rep.message +=
            "the margin lies between the threshold and " + fig(band) + " x the threshold" + figures;
  }
  return rep;
}

/// A sparse block in canonical double storage (entries summed per position when the storage
/// repeats them), with `cols` columns when it has no rows.
template <class Derived>
mfcq_sparse mfcq_sparse_block(const Eigen::SparseMatrixBase<Derived>& m, bool canonical,
                              Index cols) {
  if (m.rows() == 0) return mfcq_sparse(0, cols);
  if (canonical) return m.derived().template cast<double>();
  return summed_copy<double>(m);
}

}  // namespace detail

/// MFCQ at a point from the Jacobian A of the active inequalities g_i(x) <= 0 (rows =
/// gradients) and the Jacobian E of the equalities (may have 0 rows): holds when E has full
/// row rank and some d has E d = 0, A d < 0. Decided on unit gradients by the LP
/// max t s.t. A d + t 1 <= 0, E d = 0, -1 <= d <= 1, t <= 1 (t* > 0 iff such d exists), with
/// the direction checked directly when it holds and a positive dependence from the LP duals
/// (Motzkin's theorem of the alternative) when it fails. `labels`: empty, or one per row of
/// A followed by one per row of E. Decided in double whatever the scalar.
template <class DerivedA, class DerivedE>
mfcq_report check_mfcq(const Eigen::MatrixBase<DerivedA>& ineq_jacobian,
                       const Eigen::MatrixBase<DerivedE>& eq_jacobian,
                       const mfcq_options& options = {}, std::vector<std::string> labels = {}) {
  detail::check_scalar<DerivedA>();
  detail::check_scalar<DerivedE>();
  mfcq_report rep = detail::mfcq_start(ineq_jacobian.rows(), ineq_jacobian.cols(),
                                       eq_jacobian.rows(), eq_jacobian.cols(), options, labels);
  if (rep.result == verdict::invalid_input) return rep;
  if (auto bad = detail::non_finite_message(ineq_jacobian, "inequality Jacobian"))
    return detail::invalid_mfcq(rep, "non_finite_entry", *bad);
  if (auto bad = detail::non_finite_message(eq_jacobian, "equality Jacobian"))
    return detail::invalid_mfcq(rep, "non_finite_entry", *bad);
  const Index n = rep.cols;
  const Eigen::MatrixXd a = ineq_jacobian.rows() > 0
                                ? Eigen::MatrixXd(ineq_jacobian.template cast<double>())
                                : Eigen::MatrixXd(0, n);
  const Eigen::MatrixXd e = eq_jacobian.rows() > 0
                                ? Eigen::MatrixXd(eq_jacobian.template cast<double>())
                                : Eigen::MatrixXd(0, n);
  return detail::mfcq_run(a, e, options, labels, std::move(rep));
}

/// MFCQ with inequalities only (no equality constraint).
template <class DerivedA>
mfcq_report check_mfcq(const Eigen::MatrixBase<DerivedA>& ineq_jacobian,
                       const mfcq_options& options = {}, std::vector<std::string> labels = {}) {
  using Scalar = typename DerivedA::Scalar;
  const Eigen::Matrix<Scalar, Eigen::Dynamic, Eigen::Dynamic> none(0, ineq_jacobian.cols());
  return check_mfcq(ineq_jacobian, none, options, std::move(labels));
}

/// MFCQ on sparse Jacobians (Eigen::SparseMatrix row- or column-major, a Map of a host's
/// arrays, or an expression): the same verdicts, margin, direction and certificate as the
/// dense check, with nothing dense of size rows x columns. The ranks (of E, and of [A; E] for
/// comparison) are decided by the sparse LICQ core (sparse_licq.hpp), the LP by the LP
/// engine's sparse path; the direction's projection on null(E) and the polish of the
/// certificate use sparse LDL^T factorisations, and both are checked on the data afterwards.
template <class DerivedA, class DerivedE>
mfcq_report check_mfcq(const Eigen::SparseMatrixBase<DerivedA>& ineq_jacobian,
                       const Eigen::SparseMatrixBase<DerivedE>& eq_jacobian,
                       const mfcq_options& options = {}, std::vector<std::string> labels = {}) {
  detail::check_scalar<DerivedA>();
  detail::check_scalar<DerivedE>();
  mfcq_report rep = detail::mfcq_start(ineq_jacobian.rows(), ineq_jacobian.cols(),
                                       eq_jacobian.rows(), eq_jacobian.cols(), options, labels);
  if (rep.result == verdict::invalid_input) return rep;
  const auto a_storage = detail::scan_sparse_storage(ineq_jacobian, "the inequality Jacobian");
  if (a_storage.error)
    return detail::invalid_mfcq(rep, "invalid_sparse_structure", *a_storage.error);
  const auto e_storage = detail::scan_sparse_storage(eq_jacobian, "the equality Jacobian");
  if (e_storage.error)
    return detail::invalid_mfcq(rep, "invalid_sparse_structure", *e_storage.error);
  if (auto bad = detail::sparse_non_finite_message(ineq_jacobian, "inequality Jacobian"))
    return detail::invalid_mfcq(rep, "non_finite_entry", *bad);
  if (auto bad = detail::sparse_non_finite_message(eq_jacobian, "equality Jacobian"))
    return detail::invalid_mfcq(rep, "non_finite_entry", *bad);
  const Index n = rep.cols;
  return detail::mfcq_run(detail::mfcq_sparse_block(ineq_jacobian, a_storage.canonical, n),
                          detail::mfcq_sparse_block(eq_jacobian, e_storage.canonical, n), options,
                          labels, std::move(rep));
}

/// Sparse MFCQ with inequalities only (no equality constraint).
template <class DerivedA>
mfcq_report check_mfcq(const Eigen::SparseMatrixBase<DerivedA>& ineq_jacobian,
                       const mfcq_options& options = {}, std::vector<std::string> labels = {}) {
  const Eigen::SparseMatrix<typename DerivedA::Scalar> none(0, ineq_jacobian.cols());
  return check_mfcq(ineq_jacobian, none, options, std::move(labels));
}

}  // namespace qualify
