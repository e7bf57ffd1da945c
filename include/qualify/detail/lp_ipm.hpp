// qualify: the LP engine's homogeneous self-dual interior-point method (Mehrotra steps).
// SPDX-License-Identifier: MIT
#pragma once

#include <Eigen/Cholesky>
#include <Eigen/Core>
#include <Eigen/SparseCholesky>
#include <Eigen/SparseCore>
#include <algorithm>
#include <cmath>
#include <functional>
#include <limits>
#include <string>
#include <vector>

#include "qualify/detail/lp_presolve.hpp"

namespace qualify::detail {

/// The standard form the interior-point method solves:
/// minimise c^T x s.t. A x = b, 0 <= x, x_j <= u_j where u_j is finite.
/// Columns [0, n_struct) come from the general form's columns (a free column gives two),
/// the rest are slacks of inequality rows (one -1 entry each).
struct lp_standard {
  lp_sparse A;
  Eigen::VectorXd b, c, u;  // u_j = +inf: no upper bound
  double c0 = 0.0;
  Eigen::Index n_struct = 0;
  struct origin {
    bool slack = false;      // slack of a row, else a general column
    Eigen::Index index = 0;  // that row or column
    double sign = 1.0;       // general value = shift + sign * x_k
    double shift = 0.0;
  };
  std::vector<origin> from;
};

/// Builds the standard form of a general LP whose fixed columns and free rows are gone.
inline lp_standard to_standard(const lp_general& p) {
  using Eigen::Index;
  const double inf = std::numeric_limits<double>::infinity();
  const Index m = p.A.rows(), n = p.A.cols();
  lp_standard s;
  s.c0 = p.c0;
  s.b = Eigen::VectorXd::Zero(m);
  std::vector<double> c, u;
  std::vector<Eigen::Triplet<double, Index>> t;
  auto add_column = [&](lp_standard::origin o, double cost, double upper) {
    s.from.push_back(o);
    c.push_back(cost);
    u.push_back(upper);
    return static_cast<Index>(s.from.size()) - 1;
  };
  for (Index j = 0; j < n; ++j) {
    const double lo = p.col_lower[j], up = p.col_upper[j];
    auto entries = [&](Index k, double sign) {
      for (lp_sparse::InnerIterator it(p.A, j); it; ++it)
        t.emplace_back(it.row(), k, sign * it.value());
    };
    auto shift_rows = [&](double shift) {
      for (lp_sparse::InnerIterator it(p.A, j); it; ++it) s.b[it.row()] -= it.value() * shift;
      s.c0 += p.c[j] * shift;
    };
    if (std::isfinite(lo)) {
      Index k = add_column({false, j, 1.0, lo}, p.c[j], std::isfinite(up) ? up - lo : inf);
      entries(k, 1.0);
      shift_rows(lo);
    } else if (std::isfinite(up)) {
      Index k = add_column({false, j, -1.0, up}, -p.c[j], inf);
      entries(k, -1.0);
      shift_rows(up);
    } else {  // free: x = x+ - x-
      entries(add_column({false, j, 1.0, 0.0}, p.c[j], inf), 1.0);
      entries(add_column({false, j, -1.0, 0.0}, -p.c[j], inf), -1.0);
    }
  }
  s.n_struct = static_cast<Index>(s.from.size());
  for (Index i = 0; i < m; ++i) {
    const double lo = p.row_lower[i], up = p.row_upper[i];
    if (lo == up) {
      s.b[i] += lo;
      continue;
    }
    // Row activity r = a_i x = shift + sign * slack, so a_i x - sign * slack = shift.
    Index k;
    if (std::isfinite(lo)) {
      k = add_column({true, i, 1.0, lo}, 0.0, std::isfinite(up) ? up - lo : inf);
      t.emplace_back(i, k, -1.0);
      s.b[i] += lo;
    } else if (std::isfinite(up)) {
      k = add_column({true, i, -1.0, up}, 0.0, inf);
      t.emplace_back(i, k, 1.0);
      s.b[i] += up;
    }
    // A row free on both sides never reaches here: presolve or the caller drops it.
  }
  const auto N = static_cast<Index>(s.from.size());
  s.A.resize(m, N);
  s.A.setFromTriplets(t.begin(), t.end());
  s.A.makeCompressed();
  s.c = Eigen::Map<Eigen::VectorXd>(c.data(), N);
  s.u = Eigen::Map<Eigen::VectorXd>(u.data(), N);
  return s;
}

/// Settings of the interior-point method (filled from lp_options).
struct ipm_settings {
  double primal_tolerance = 1e-8;
  double dual_tolerance = 1e-8;
  double gap_tolerance = 1e-8;
  double infeasibility_tolerance = 1e-8;
  int max_iterations = 200;
  double step_fraction = 0.995;
  double regularization = 1e-12;
  int max_correctors = 2;
  bool dense = false;
};

enum class ipm_status {
  optimal,
  primal_infeasible,
  dual_infeasible,
  iteration_limit,
  numerical_trouble
};

struct ipm_result {
  ipm_status status = ipm_status::numerical_trouble;
  Eigen::VectorXd x, y, s, v;  // solution (divided by tau) or ray (not divided)
  int iterations = 0;
  double primal_residual = 0, dual_residual = 0, gap = 0;  // relative, as tested
  double tau = 1, kappa = 1;
  std::string message;
  std::string linear_solver;  // normal_equations::methods()
};

/// Blocked left-looking Cholesky of a symmetric positive semidefinite matrix (lower
/// triangle used) that survives rank deficiency: a pivot that has lost all but
/// `pivot_tolerance` of its original diagonal to cancellation belongs to a dependent row
/// and is replaced by 1e64, which drops that direction from the solve (the usual remedy
/// in interior-point codes, e.g. Wright, "Modified Cholesky factorizations in
/// interior-point algorithms for linear programming", SIAM J. Optim. 9, 1999).
class dense_cholesky {
 public:
  static constexpr double pivot_tolerance = 1e-14;
  static constexpr double huge_pivot = 1e64;

  /// With `pivot_floor`, pivots are instead raised to at least pivot_floor[j]: for
  /// G = F + B with F diagonal and B positive semidefinite every exact pivot is >= F_jj,
  /// so nothing is dropped and rounding cannot make a pivot vanish.
  void compute(Eigen::MatrixXd&& M, const Eigen::VectorXd* pivot_floor = nullptr) {
    L_ = std::move(M);
    const Eigen::Index m = L_.rows(), nb = 64;
    Eigen::VectorXd diag = L_.diagonal();
    dropped_ = 0;
    for (Eigen::Index k = 0; k < m; k += nb) {
      const Eigen::Index b = std::min(nb, m - k);
      if (k > 0)
        L_.block(k, k, m - k, b).noalias() -=
            L_.block(k, 0, m - k, k) * L_.block(k, 0, b, k).transpose();
      for (Eigen::Index j = k; j < k + b; ++j) {
        if (j > k)
          L_.col(j).segment(j, m - j).noalias() -=
              L_.block(j, k, m - j, j - k) * L_.row(j).segment(k, j - k).transpose();
        double d = L_(j, j);
        if (pivot_floor) {
          d = std::max(d, (*pivot_floor)[j]);
        } else if (!(d > pivot_tolerance * std::max(diag[j], 0.0)) || !(d > 0)) {
          d = huge_pivot;
          ++dropped_;
        }
        const double root = std::sqrt(d);
        L_(j, j) = root;
        L_.col(j).segment(j + 1, m - j - 1) /= root;
      }
    }
    ok_ = L_.allFinite();
  }
  bool ok() const { return ok_; }
  Eigen::Index dropped() const { return dropped_; }
  Eigen::VectorXd solve(const Eigen::VectorXd& r) const {
    Eigen::VectorXd x = L_.triangularView<Eigen::Lower>().solve(r);
    L_.triangularView<Eigen::Lower>().transpose().solveInPlace(x);
    return x;
  }

 private:
  Eigen::MatrixXd L_;
  Eigen::Index dropped_ = 0;
  bool ok_ = false;
};

/// Factors M = A diag(d) A^T + delta I, densely or sparsely, and solves with it.
class normal_equations {
 public:
  normal_equations(const lp_sparse& A, Eigen::Index n_struct, bool dense)
      : A_(A), n_struct_(n_struct), dense_(dense) {
    if (dense_) {
      Ad_ = Eigen::MatrixXd(A.leftCols(n_struct));
      for (Eigen::Index k = n_struct; k < A.cols(); ++k)
        for (lp_sparse::InnerIterator it(A, k); it; ++it)
          slack_rows_.push_back({it.row(), it.value()});
      // More rows than columns: factor in the column space instead (see factor_columns).
      const Eigen::Index m = A.rows();
      const auto n_slack = static_cast<Eigen::Index>(slack_rows_.size());
      columns_ = n_struct > 0 && n_struct + (m - n_slack) < m;
      if (columns_) {
        std::vector<bool> has_slack(static_cast<std::size_t>(m), false);
        for (auto [row, a] : slack_rows_) has_slack[static_cast<std::size_t>(row)] = true;
        for (Eigen::Index i = 0; i < m; ++i)
          if (!has_slack[static_cast<std::size_t>(i)]) equality_rows_.push_back(i);
        AI_.resize(n_struct, n_slack);  // A_I^T, one column per slack's row
        for (Eigen::Index k = 0; k < n_slack; ++k)
          AI_.col(k) = Ad_.row(slack_rows_[static_cast<std::size_t>(k)].first).transpose();
        AE_.resize(static_cast<Eigen::Index>(equality_rows_.size()), n_struct);
        for (std::size_t e = 0; e < equality_rows_.size(); ++e)
          AE_.row(static_cast<Eigen::Index>(e)) = Ad_.row(equality_rows_[e]);
      }
    }
  }

  /// Returns false when the factorisation fails even after raising delta.
  bool factor(const Eigen::VectorXd& d, double delta) {
    const bool ok = factor_any(d, delta);
    if (ok && (used_.empty() || used_.back() != method())) used_.push_back(method());
    return ok;
  }

  /// The methods used so far, in order, joined by '+' (e.g. "sparse_ldlt_dense_columns+
  /// dense_cholesky_rows" when the dense-column update lost accuracy).
  std::string methods() const {
    std::string all;
    for (const char* u : used_) all += (all.empty() ? "" : "+") + std::string(u);
    return all;
  }

 private:
  bool factor_any(const Eigen::VectorXd& d, double delta) {
    d_ = d;
    for (int attempt = 0; attempt < 6; ++attempt, delta *= 100) {
      delta_ = delta;
      if (columns_) {
        if (factor_columns(d, delta)) return true;
      } else if (dense_) {
        const Eigen::Index m = Ad_.rows();
        Eigen::MatrixXd M = Eigen::MatrixXd::Zero(m, m);
        Eigen::VectorXd root = d.head(n_struct_).cwiseSqrt();
        if (n_struct_ > 0 && m > 0)
          M.selfadjointView<Eigen::Lower>().rankUpdate(Ad_ * root.asDiagonal());
        for (std::size_t k = 0; k < slack_rows_.size(); ++k) {
          auto [row, a] = slack_rows_[k];
          M(row, row) += a * a * d[n_struct_ + static_cast<Eigen::Index>(k)];
        }
        M.diagonal().array() += delta;
        chol_.compute(std::move(M));
        if (chol_.ok()) return true;
      } else {
        if (!analysed_) analyse();
        if (dense_factor_) {
          // Lower triangle of sum_k d_k a_k a_k^T, column by column: sum_k nnz_k^2 / 2 flops.
          const Eigen::Index m = A_.rows();
          Eigen::MatrixXd Md = Eigen::MatrixXd::Zero(m, m);
          for (Eigen::Index k = 0; k < A_.cols(); ++k)
            for (lp_sparse::InnerIterator i(A_, k); i; ++i) {
              const double ai = i.value() * d[k];
              for (lp_sparse::InnerIterator j(A_, k); j && j.row() <= i.row(); ++j)
                Md(i.row(), j.row()) += ai * j.value();
            }
          Md.diagonal().array() += delta;
          chol_.compute(std::move(Md));
          if (chol_.ok()) return true;
          continue;
        }
        // Values of the fixed lower pattern: M_ij = sum_k d_k a_ik a_jk.
        std::fill(M_.valuePtr(), M_.valuePtr() + M_.nonZeros(), 0.0);
        double* values = M_.valuePtr();
        for (Eigen::Index k = 0; k < A_.cols(); ++k)
          for (std::size_t q = pair_start_[static_cast<std::size_t>(k)];
               q < pair_start_[static_cast<std::size_t>(k) + 1]; ++q)
            values[pair_slot_[q]] += pair_product_[q] * d[k];
        ldlt_.setShift(delta);
        ldlt_.factorize(M_);
        if (ldlt_.info() != Eigen::Success || !(ldlt_.vectorD().array() > 0).all()) continue;
        if (dense_cols_.empty()) return true;
        // Dense columns by Sherman-Morrison-Woodbury: M = M_s + A_d K_d A_d^T, with
        // W = M_s^-1 A_d and C = K_d^-1 + A_d^T W (k x k).
        const auto k = static_cast<Eigen::Index>(dense_cols_.size());
        Eigen::MatrixXd Ad(A_.rows(), k);
        Eigen::VectorXd kinv(k);
        for (Eigen::Index q = 0; q < k; ++q) {
          const Eigen::Index col = dense_cols_[static_cast<std::size_t>(q)];
          Ad.col(q) = A_.col(col);
          kinv[q] = 1.0 / d[col];
        }
        W_ = ldlt_.solve(Ad);
        Eigen::MatrixXd C = Ad.transpose() * W_;
        C.diagonal() += kinv;
        small_.compute(std::move(C), &kinv);
        Ad_dense_cols_ = std::move(Ad);
        if (small_.ok()) return true;
      }
    }
    return false;
  }

 public:
  /// Solves M x = r with two steps of iterative refinement against the unshifted M.
  /// The column-space factorisation loses accuracy once many rows are active (Theta_I^-1
  /// huge); when its refined residual exceeds 1e-8 relative, the rest of the solve uses
  /// the m x m factorisation, which drops dependent rows instead.
  Eigen::VectorXd solve(const Eigen::VectorXd& r) {
    Eigen::VectorXd x = raw_solve(r);
    Eigen::VectorXd res;
    for (int k = 0; k < 2; ++k) {
      res = r - apply(x);
      x += raw_solve(res);
    }
    if (columns_ || !dense_cols_.empty()) {
      res = r - apply(x);
      const double scale = r.lpNorm<Eigen::Infinity>() + (r - res).lpNorm<Eigen::Infinity>();
      if (res.lpNorm<Eigen::Infinity>() > 1e-8 * scale) {
        if (!dense_cols_.empty()) {  // back to the plain normal matrix
          allow_dense_columns_ = false;
          analysed_ = false;
        }
        columns_ = false;
        if (!factor(d_, delta_))
          return Eigen::VectorXd::Constant(r.size(), std::numeric_limits<double>::quiet_NaN());
        return solve(r);
      }
    }
    return x;
  }

  /// The factorisation in use: "dense_cholesky_columns" (n x n, more rows than columns),
  /// "dense_cholesky_rows" (m x m), "sparse_ldlt_dense_columns" or "sparse_ldlt".
  const char* method() const {
    if (columns_) return "dense_cholesky_columns";
    if (!dense_cols_.empty()) return "sparse_ldlt_dense_columns";
    return dense_ || dense_factor_ ? "dense_cholesky_rows" : "sparse_ldlt";
  }

  Eigen::VectorXd apply(const Eigen::VectorXd& y) const {
    Eigen::VectorXd t = A_.transpose() * y;
    t.array() *= d_.array();
    return A_ * t;
  }

 private:
  // Chooses the sparse method once: columns with more than max(40, 10 x average) entries
  // (at most m / 10 of them) are dense columns, kept out of the pattern (Andersen,
  // Roos, Terlaky, Trafalis and Warners, "The use of low-rank updates in interior-point
  // methods", 1996); a pattern more than 25% full factors densely instead (measured on
  // Netlib's seba, 39% full with its 14 dense columns, 1% without).
  void analyse() {
    analysed_ = true;
    const Eigen::Index m = A_.rows(), N = A_.cols();
    dense_cols_.clear();
    if (allow_dense_columns_ && N > 0) {
      const double average = static_cast<double>(A_.nonZeros()) / static_cast<double>(N);
      for (Eigen::Index k = 0; k < N; ++k)
        if (static_cast<double>(A_.col(k).nonZeros()) > std::max(40.0, 10 * average))
          dense_cols_.push_back(k);
      if (static_cast<Eigen::Index>(dense_cols_.size()) > m / 10) dense_cols_.clear();
    }
    std::vector<bool> is_dense(static_cast<std::size_t>(N), false);
    for (auto k : dense_cols_) is_dense[static_cast<std::size_t>(k)] = true;
    // Structure only: with every entry set to 1 no product can cancel to zero.
    lp_sparse ones = A_;
    for (Eigen::Index k = 0; k < N; ++k)
      for (lp_sparse::InnerIterator it(ones, k); it; ++it)
        it.valueRef() = is_dense[static_cast<std::size_t>(k)] ? 0.0 : 1.0;
    lp_sparse pattern = ones * ones.transpose();
    pattern.prune(0.0);
    const double md = static_cast<double>(m);
    dense_factor_ = m > 0 && static_cast<double>(pattern.nonZeros()) > 0.25 * md * md;
    if (dense_factor_) {
      dense_cols_.clear();
      return;
    }
    prepare_sparse_pattern(pattern, is_dense);
  }

  // The lower triangle of A A^T as a fixed pattern, and for every column k of A the
  // slots of M its products a_ik a_jk (i >= j) add to; analysed (AMD) once.
  void prepare_sparse_pattern(const lp_sparse& full, const std::vector<bool>& skip) {
    M_ = full.triangularView<Eigen::Lower>();
    M_.makeCompressed();
    ldlt_.analyzePattern(M_);
    pair_start_.assign(1, 0);
    for (Eigen::Index k = 0; k < A_.cols(); ++k) {
      for (lp_sparse::InnerIterator i(A_, k); i && !skip[static_cast<std::size_t>(k)]; ++i)
        for (lp_sparse::InnerIterator j(A_, k); j && j.row() <= i.row(); ++j) {
          // M_ column j.row() holds rows >= j.row(), sorted: find row i.row().
          const Eigen::Index* begin = M_.innerIndexPtr() + M_.outerIndexPtr()[j.row()];
          const Eigen::Index* end = M_.innerIndexPtr() + M_.outerIndexPtr()[j.row() + 1];
          const Eigen::Index* at = std::lower_bound(begin, end, i.row());
          pair_slot_.push_back(static_cast<std::size_t>(at - M_.innerIndexPtr()));
          pair_product_.push_back(i.value() * j.value());
        }
      pair_start_.push_back(pair_slot_.size());
    }
  }

  // With rows I that have a slack (M's diagonal gains theta_i = a^2 d_slack) and rows E
  // that have none, and K = diag(d_struct):
  //   M = A K A^T + diag(theta_I, 0) + delta I.
  // Eliminating u = K A^T y gives G = K^-1 + A_I^T Theta_I^-1 A_I (n x n) and the Schur
  // complement S = A_E G^-1 A_E^T + delta I on the equality rows; see raw_solve. This
  // costs n^2 m instead of m^2 n + m^3 / 3 when m > n (MFCQ LPs with many active rows).
  bool factor_columns(const Eigen::VectorXd& d, double delta) {
    const auto n_slack = static_cast<Eigen::Index>(slack_rows_.size());
    theta_inv_.resize(n_slack);
    for (Eigen::Index k = 0; k < n_slack; ++k) {
      const double a = slack_rows_[static_cast<std::size_t>(k)].second;
      theta_inv_[k] = 1.0 / (a * a * d[n_struct_ + k] + delta);
    }
    Eigen::MatrixXd G = Eigen::MatrixXd::Zero(n_struct_, n_struct_);
    G.selfadjointView<Eigen::Lower>().rankUpdate(AI_ * theta_inv_.cwiseSqrt().asDiagonal());
    const Eigen::VectorXd kinv = d.head(n_struct_).cwiseInverse();
    G.diagonal() += kinv;
    chol_.compute(std::move(G), &kinv);
    if (!chol_.ok()) return false;
    if (AE_.rows() == 0) return true;
    GinvAEt_.resize(n_struct_, AE_.rows());
    for (Eigen::Index e = 0; e < AE_.rows(); ++e)
      GinvAEt_.col(e) = chol_.solve(AE_.row(e).transpose());
    Eigen::MatrixXd S = AE_ * GinvAEt_;
    S.diagonal().array() += delta;
    schur_.compute(std::move(S));
    return schur_.ok();
  }

  Eigen::VectorXd raw_solve(const Eigen::VectorXd& r) const {
    if (columns_) {
      // h = A_I^T Theta_I^-1 r_I; y_E = S^-1 (r_E - A_E G^-1 h); u = G^-1 (h + A_E^T y_E);
      // y_I = Theta_I^-1 (r_I - A_I u).
      const auto n_slack = static_cast<Eigen::Index>(slack_rows_.size());
      Eigen::VectorXd rI(n_slack);
      for (Eigen::Index k = 0; k < n_slack; ++k)
        rI[k] = r[slack_rows_[static_cast<std::size_t>(k)].first];
      Eigen::VectorXd h = AI_ * theta_inv_.cwiseProduct(rI);
      Eigen::VectorXd y = Eigen::VectorXd::Zero(r.size());
      Eigen::VectorXd u;
      if (AE_.rows() > 0) {
        Eigen::VectorXd rE(AE_.rows());
        for (std::size_t e = 0; e < equality_rows_.size(); ++e)
          rE[static_cast<Eigen::Index>(e)] = r[equality_rows_[e]];
        Eigen::VectorXd yE = schur_.solve(rE - GinvAEt_.transpose() * h);
        u = chol_.solve(h + AE_.transpose() * yE);
        for (std::size_t e = 0; e < equality_rows_.size(); ++e)
          y[equality_rows_[e]] = yE[static_cast<Eigen::Index>(e)];
      } else {
        u = chol_.solve(h);
      }
      Eigen::VectorXd AIu = AI_.transpose() * u;
      for (Eigen::Index k = 0; k < n_slack; ++k) {
        const auto [row, a] = slack_rows_[static_cast<std::size_t>(k)];
        (void)a;
        y[row] = theta_inv_[k] * (rI[k] - AIu[k]);
      }
      return y;
    }
    if (dense_ || dense_factor_) return chol_.solve(r);
    Eigen::VectorXd z = ldlt_.solve(r);
    if (!dense_cols_.empty()) z -= W_ * small_.solve(Ad_dense_cols_.transpose() * z);
    return z;
  }

  const lp_sparse& A_;
  Eigen::Index n_struct_;
  bool dense_;
  Eigen::MatrixXd Ad_;
  std::vector<std::pair<Eigen::Index, double>> slack_rows_;
  Eigen::VectorXd d_;
  double delta_ = 0;
  dense_cholesky chol_;
  // Column-space factorisation (columns_): A_I^T, A_E, Theta_I^-1, G^-1 A_E^T, S.
  bool columns_ = false;
  std::vector<Eigen::Index> equality_rows_;
  Eigen::MatrixXd AI_, AE_, GinvAEt_;
  Eigen::VectorXd theta_inv_;
  dense_cholesky schur_;
  Eigen::SimplicialLDLT<lp_sparse, Eigen::Lower, Eigen::AMDOrdering<Eigen::Index>> ldlt_;
  bool analysed_ = false;
  bool dense_factor_ = false;  // sparse A whose normal matrix factors densely
  bool allow_dense_columns_ = true;
  std::vector<const char*> used_;         // methods in order of first use
  std::vector<Eigen::Index> dense_cols_;  // kept out of the sparse factor (see analyse)
  Eigen::MatrixXd Ad_dense_cols_, W_;
  dense_cholesky small_;
  lp_sparse M_;  // lower triangle of A diag(d) A^T on a fixed pattern
  std::vector<std::size_t> pair_start_, pair_slot_;
  std::vector<double> pair_product_;
};

/// The homogeneous self-dual model (Xu, Hung and Ye, Annals of OR 62, 1996; with upper
/// bounds as in Andersen and Andersen, "The MOSEK interior point optimizer for linear
/// programming", 2000):
///   A x = b tau,  x_U + w = u tau,  A^T y - v_U + s = c tau,  b^T y - u^T v - c^T x = kappa,
/// x, w, s, v, tau, kappa >= 0. tau > 0 at the limit gives a solution (x/tau, y/tau);
/// kappa > 0 gives a ray proving infeasibility (b^T y - u^T v > 0) or unboundedness
/// (c^T x < 0).
class hsd_solver {
 public:
  hsd_solver(const lp_standard& p, const ipm_settings& set)
      : p_(p), set_(set), ne_(p.A, p.n_struct, set.dense) {
    const Eigen::Index N = p.A.cols();
    boxed_ = Eigen::VectorXd::Zero(N);
    ub_ = Eigen::VectorXd::Zero(N);
    for (Eigen::Index j = 0; j < N; ++j)
      if (std::isfinite(p.u[j])) {
        boxed_[j] = 1.0;
        ub_[j] = p.u[j];
      }
    n_boxed_ = static_cast<Eigen::Index>(boxed_.sum());
  }

  /// `accept_ray` checks a candidate ray on the caller's original problem; a rejected
  /// ray lets the iterations go on (a later one is more accurate).
  ipm_result solve(const std::function<bool(const ipm_result&)>& accept_ray) {
    using Eigen::VectorXd;
    const Eigen::Index N = p_.A.cols(), m = p_.A.rows();
    const auto& A = p_.A;
    const auto& b = p_.b;
    const auto& c = p_.c;
    VectorXd x = VectorXd::Ones(N), s = VectorXd::Ones(N), w = boxed_, v = boxed_;
    VectorXd y = VectorXd::Zero(m);
    double tau = 1, kappa = 1;
    const double nb = 1 + std::max(b.size() ? b.lpNorm<Eigen::Infinity>() : 0.0,
                                   ub_.size() ? ub_.lpNorm<Eigen::Infinity>() : 0.0);
    const double nc = 1 + (c.size() ? c.lpNorm<Eigen::Infinity>() : 0.0);
    const double complementarity_count = static_cast<double>(N + n_boxed_ + 1);
    ipm_result r;
    int slow_steps = 0;

    for (int iter = 0;; ++iter) {
      r.iterations = iter;
      // Residuals F of the homogeneous model.
      VectorXd F1 = A * x - b * tau;
      VectorXd F2 = (x + w - ub_ * tau).cwiseProduct(boxed_);
      VectorXd Aty = A.transpose() * y;
      VectorXd F3 = Aty - v + s - c * tau;
      const double cx = c.dot(x), by = b.dot(y) - ub_.dot(v);
      const double F4 = -cx + by - kappa;
      const double mu = (x.dot(s) + w.dot(v) + tau * kappa) / complementarity_count;

      r.primal_residual =
          std::max(F1.lpNorm<Eigen::Infinity>(), F2.lpNorm<Eigen::Infinity>()) / tau / nb;
      r.dual_residual = F3.lpNorm<Eigen::Infinity>() / tau / nc;
      r.gap = std::abs(cx - by) / tau / (1 + std::abs(cx / tau));
      r.tau = tau;
      r.kappa = kappa;
      if (!std::isfinite(mu) || !std::isfinite(r.primal_residual) ||
          !std::isfinite(r.dual_residual)) {
        r.status = ipm_status::numerical_trouble;
        r.message = "the iterates are no longer finite";
        return r;
      }
      if (r.primal_residual <= set_.primal_tolerance && r.dual_residual <= set_.dual_tolerance &&
          r.gap <= set_.gap_tolerance) {
        r.status = ipm_status::optimal;
        r.x = x / tau;
        r.y = y / tau;
        r.s = s / tau;
        r.v = v / tau;
        return r;
      }
      // Rays: a dual ray (y, v, s) with A^T y - v + s ~ 0 and b^T y - u^T v > 0 proves
      // primal infeasibility; a primal ray x with A x ~ 0, x_U + w ~ 0, c^T x < 0
      // proves dual infeasibility. Tested relative to the ray's own value, and only once
      // kappa dominates tau; the caller verifies the ray on the original problem.
      if (kappa > tau) {
        const double dual_ray = (Aty - v + s).lpNorm<Eigen::Infinity>();
        if (by > 0 && dual_ray <= set_.infeasibility_tolerance * by) {
          r.status = ipm_status::primal_infeasible;
          r.y = y / by;
          r.v = v / by;
          r.s = s / by;
          r.x = x;
          if (accept_ray(r)) return r;
        }
        const double primal_ray = std::max((A * x).lpNorm<Eigen::Infinity>(),
                                           (x + w).cwiseProduct(boxed_).lpNorm<Eigen::Infinity>());
        if (cx < 0 && primal_ray <= set_.infeasibility_tolerance * -cx) {
          r.status = ipm_status::dual_infeasible;
          r.x = x / -cx;
          r.y = y;
          if (accept_ray(r)) return r;
        }
      }
      if (iter >= set_.max_iterations) {
        r.status = ipm_status::iteration_limit;
        r.x = x / tau;
        r.y = y / tau;
        r.s = s / tau;
        r.v = v / tau;
        r.message = "the iteration limit was reached";
        return r;
      }

      // Newton system: D = X^-1 S + W^-1 V, M = A D^-1 A^T.
      VectorXd D(N), g(N), winv(N);
      for (Eigen::Index j = 0; j < N; ++j) {
        winv[j] = boxed_[j] > 0 ? 1.0 / w[j] : 0.0;
        D[j] = s[j] / x[j] + v[j] * winv[j] + set_.regularization;
        g[j] = v[j] * winv[j] * ub_[j];
      }
      VectorXd Dinv = D.cwiseInverse();
      const bool factored = ne_.factor(Dinv, set_.regularization);
      r.linear_solver = ne_.methods();
      if (!factored) {
        r.status = ipm_status::numerical_trouble;
        r.message = "the normal equations could not be factored";
        r.x = x / tau;
        r.y = y / tau;
        return r;
      }
      VectorXd q = ne_.solve(b + A * Dinv.cwiseProduct(c - g));
      VectorXd xq = Dinv.cwiseProduct(A.transpose() * q + g - c);
      const double den = -(c + g).dot(xq) + b.dot(q) +
                         ub_.cwiseProduct(ub_).dot(v.cwiseProduct(winv)) + kappa / tau;

      struct direction {
        VectorXd dx, dw, ds, dv, dy;
        double dtau = 0, dkappa = 0;
      };
      auto newton = [&](double eta, const VectorXd& R5, const VectorXd& R6, double R7) {
        direction d;
        VectorXd R2 = -eta * F2;
        VectorXd R3 = -eta * F3;
        VectorXd h = R3 - R5.cwiseQuotient(x) + (R6 - v.cwiseProduct(R2)).cwiseProduct(winv);
        VectorXd p = ne_.solve(-eta * F1 + A * Dinv.cwiseProduct(h));
        VectorXd xp = Dinv.cwiseProduct(A.transpose() * p - h);
        const double num = -eta * F4 + ub_.dot((R6 - v.cwiseProduct(R2)).cwiseProduct(winv)) +
                           R7 / tau + (c + g).dot(xp) - b.dot(p);
        d.dtau = num / den;
        d.dy = p + q * d.dtau;
        d.dx = xp + xq * d.dtau;
        d.ds = (R5 - s.cwiseProduct(d.dx)).cwiseQuotient(x);
        d.dw = (R2 - d.dx + ub_ * d.dtau).cwiseProduct(boxed_);
        d.dv = (R6 - v.cwiseProduct(d.dw)).cwiseProduct(winv);
        d.dkappa = (R7 - kappa * d.dtau) / tau;
        return d;
      };
      auto max_step = [&](const direction& d) {
        double a = 1.0;
        auto limit = [&a](const VectorXd& z, const VectorXd& dz, const VectorXd* mask) {
          for (Eigen::Index j = 0; j < z.size(); ++j)
            if (dz[j] < 0 && (!mask || (*mask)[j] > 0)) a = std::min(a, -z[j] / dz[j]);
        };
        limit(x, d.dx, nullptr);
        limit(s, d.ds, nullptr);
        limit(w, d.dw, &boxed_);
        limit(v, d.dv, &boxed_);
        if (d.dtau < 0) a = std::min(a, -tau / d.dtau);
        if (d.dkappa < 0) a = std::min(a, -kappa / d.dkappa);
        return a;
      };

      // Predictor (affine scaling), then Mehrotra's corrector (Mehrotra, SIAM J. Optim. 2,
      // 1992): sigma = (mu_aff / mu)^3 and the second-order term dX_aff dS_aff.
      VectorXd xs = x.cwiseProduct(s), wv = w.cwiseProduct(v);
      direction aff = newton(1.0, -xs, -wv, -tau * kappa);
      const double a_aff = max_step(aff);
      const double mu_aff = ((x + a_aff * aff.dx).dot(s + a_aff * aff.ds) +
                             (w + a_aff * aff.dw).dot(v + a_aff * aff.dv) +
                             (tau + a_aff * aff.dtau) * (kappa + a_aff * aff.dkappa)) /
                            complementarity_count;
      const double sigma = std::clamp(std::pow(mu_aff / mu, 3), 0.0, 1.0);
      VectorXd R5 = -xs - aff.dx.cwiseProduct(aff.ds);
      R5.array() += sigma * mu;
      VectorXd R6 = (-wv - aff.dw.cwiseProduct(aff.dv) + VectorXd::Constant(N, sigma * mu))
                        .cwiseProduct(boxed_);
      const double R7 = -tau * kappa - aff.dtau * aff.dkappa + sigma * mu;
      direction d = newton(1.0 - sigma, R5, R6, R7);
      // Gondzio's centrality correctors (Gondzio, "Multiple centrality corrections in a
      // primal-dual method for linear programming", Comput. Optim. Appl. 6, 1996): push the
      // products at a longer trial step into [0.1, 10] sigma mu; keep a corrector while it
      // lengthens the step by 1% or more (constants as in that paper's experiments).
      double a_max = max_step(d);
      for (int k = 0; k < set_.max_correctors && a_max < 1.0; ++k) {
        const double trial = std::min(1.0, 1.5 * a_max + 0.1);
        const double target = sigma * mu, lo = 0.1 * target, hi = 10 * target;
        auto push = [&](double product) {
          if (product < lo) return lo - product;
          if (product > hi) return std::max(hi - product, -hi);
          return 0.0;
        };
        VectorXd C5(N), C6 = VectorXd::Zero(N);
        for (Eigen::Index j = 0; j < N; ++j) {
          C5[j] = push((x[j] + trial * d.dx[j]) * (s[j] + trial * d.ds[j]));
          if (boxed_[j] > 0) C6[j] = push((w[j] + trial * d.dw[j]) * (v[j] + trial * d.dv[j]));
        }
        const double C7 = push((tau + trial * d.dtau) * (kappa + trial * d.dkappa));
        direction e = newton(0.0, C5, C6, C7);
        e.dx += d.dx;
        e.dw += d.dw;
        e.ds += d.ds;
        e.dv += d.dv;
        e.dy += d.dy;
        e.dtau += d.dtau;
        e.dkappa += d.dkappa;
        const double a_new = max_step(e);
        if (!(a_new >= 1.01 * a_max)) break;
        d = std::move(e);
        a_max = a_new;
      }
      const double a = std::min(1.0, set_.step_fraction * a_max);
      if (!std::isfinite(a)) {
        r.status = ipm_status::numerical_trouble;
        r.message = "the Newton direction is not finite";
        return r;
      }
      slow_steps = a < 1e-6 ? slow_steps + 1 : 0;
      if (slow_steps >= 5) {
        r.status = ipm_status::numerical_trouble;
        r.message = "five successive steps shorter than 1e-6";
        r.x = x / tau;
        r.y = y / tau;
        return r;
      }
      x += a * d.dx;
      s += a * d.ds;
      w += a * d.dw;
      v += a * d.dv;
      y += a * d.dy;
      tau += a * d.dtau;
      kappa += a * d.dkappa;
    }
  }

 private:
  const lp_standard& p_;
  ipm_settings set_;
  normal_equations ne_;
  Eigen::VectorXd boxed_, ub_;
  Eigen::Index n_boxed_ = 0;
};

}  // namespace qualify::detail
