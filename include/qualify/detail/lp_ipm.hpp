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
  /// M's storage is swapped with the previous factor's, so that a caller passing the same
  /// matrix each time reuses memory instead of faulting in fresh pages.
  void compute(Eigen::MatrixXd&& M, const Eigen::VectorXd* pivot_floor = nullptr) {
    L_.swap(M);
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
  /// X := L^-1 X (M = L L^T).
  template <class Derived>
  void lower_solve_in_place(Eigen::MatrixBase<Derived>& X) const {
    L_.triangularView<Eigen::Lower>().solveInPlace(X);
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
      // A column that is the negative of its left neighbour (the halves x+ and x- of a free
      // variable) adds a a^T (d_k + d_k+1) to A D A^T: the two share one dense column, which
      // halves the normal matrix's work for free variables.
      group_.resize(static_cast<std::size_t>(n_struct));
      sign_.resize(static_cast<std::size_t>(n_struct));
      std::vector<Eigen::Index> kept;
      for (Eigen::Index k = 0; k < n_struct; ++k) {
        const auto kk = static_cast<std::size_t>(k);
        if (k > 0 && negated_neighbours(A, k - 1, k)) {
          group_[kk] = group_[kk - 1];
          sign_[kk] = -sign_[kk - 1];
        } else {
          group_[kk] = static_cast<Eigen::Index>(kept.size());
          sign_[kk] = 1.0;
          kept.push_back(k);
        }
      }
      Ad_ = Eigen::MatrixXd::Zero(A.rows(), static_cast<Eigen::Index>(kept.size()));
      for (std::size_t g = 0; g < kept.size(); ++g)
        for (lp_sparse::InnerIterator it(A, kept[g]); it; ++it)
          Ad_(it.row(), static_cast<Eigen::Index>(g)) = it.value();
      for (Eigen::Index k = n_struct; k < A.cols(); ++k)
        for (lp_sparse::InnerIterator it(A, k); it; ++it)
          slack_rows_.push_back({it.row(), it.value()});
      // More rows than columns: factor in the column space instead (see factor_columns).
      const Eigen::Index m = A.rows();
      const auto n_slack = static_cast<Eigen::Index>(slack_rows_.size());
      columns_ = Ad_.cols() > 0 && Ad_.cols() + (m - n_slack) < m;
      if (columns_) {
        std::vector<bool> has_slack(static_cast<std::size_t>(m), false);
        for (auto [row, a] : slack_rows_) has_slack[static_cast<std::size_t>(row)] = true;
        for (Eigen::Index i = 0; i < m; ++i)
          if (!has_slack[static_cast<std::size_t>(i)]) equality_rows_.push_back(i);
        // A_I^T: rows with a slack and more than 8 entries are columns of AI_ (a dense rank
        // update); rows with up to 8 entries (bounds moved to rows, singletons) are added by
        // scatter, which costs their entry count squared instead of n^2.
        sparse_start_.assign(1, 0);
        for (Eigen::Index k = 0; k < n_slack; ++k) {
          const Eigen::Index row = slack_rows_[static_cast<std::size_t>(k)].first;
          if ((Ad_.row(row).array() != 0).count() > 8) {
            dense_slacks_.push_back(k);
            continue;
          }
          sparse_slacks_.push_back(k);
          for (Eigen::Index j = 0; j < Ad_.cols(); ++j)
            if (Ad_(row, j) != 0) sparse_entries_.push_back({j, Ad_(row, j)});
          sparse_start_.push_back(sparse_entries_.size());
        }
        AI_.resize(Ad_.cols(), static_cast<Eigen::Index>(dense_slacks_.size()));
        for (std::size_t k = 0; k < dense_slacks_.size(); ++k)
          AI_.col(static_cast<Eigen::Index>(k)) =
              Ad_.row(slack_rows_[static_cast<std::size_t>(dense_slacks_[k])].first).transpose();
        AI2_ = AI_.cwiseAbs2();
        AEq_.resize(static_cast<Eigen::Index>(equality_rows_.size()), Ad_.cols());
        for (std::size_t e = 0; e < equality_rows_.size(); ++e)
          AEq_.row(static_cast<Eigen::Index>(e)) = Ad_.row(equality_rows_[e]);
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
    if (dense_) {
      merged_ = Eigen::VectorXd::Zero(Ad_.cols());
      for (Eigen::Index k = 0; k < n_struct_; ++k)
        merged_[group_[static_cast<std::size_t>(k)]] += d[k];
    }
    for (int attempt = 0; attempt < 6; ++attempt, delta *= 100) {
      delta_ = delta;
      if (columns_) {
        if (factor_columns(d, delta)) return true;
      } else if (dense_) {
        const Eigen::Index m = Ad_.rows();
        Eigen::MatrixXd M = Eigen::MatrixXd::Zero(m, m);
        const Eigen::VectorXd root = merged_.cwiseSqrt();
        if (Ad_.cols() > 0 && m > 0)
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
  /// Solves M x = r, refined against the unshifted M while the residual is above 1e-10
  /// relative and falls by half or more per step (at most 6 steps). The column-space
  /// factorisation loses accuracy once many rows are active (Theta_I^-1 huge); when its
  /// refined residual exceeds 1e-8 relative, the rest of the solve uses the m x m
  /// factorisation, which drops dependent rows instead.
  Eigen::VectorXd solve(const Eigen::VectorXd& r) {
    Eigen::VectorXd x = raw_solve(r);
    Eigen::VectorXd res = r - apply(x);
    double norm = res.lpNorm<Eigen::Infinity>();
    const double scale = r.lpNorm<Eigen::Infinity>() + (r - res).lpNorm<Eigen::Infinity>();
    for (int k = 0; k < 6 && norm > 1e-10 * scale; ++k) {
      Eigen::VectorXd trial = x + raw_solve(res);
      Eigen::VectorXd trial_res = r - apply(trial);
      const double trial_norm = trial_res.lpNorm<Eigen::Infinity>();
      if (!(trial_norm < norm)) break;
      const bool slow = trial_norm > 0.5 * norm;
      x = std::move(trial);
      res = std::move(trial_res);
      norm = trial_norm;
      if (slow) break;
    }
    if ((columns_ || !dense_cols_.empty()) && norm > 1e-8 * scale) {
      if (!dense_cols_.empty()) {  // back to the plain normal matrix
        allow_dense_columns_ = false;
        analysed_ = false;
      }
      columns_ = false;
      if (!factor(d_, delta_))
        return Eigen::VectorXd::Constant(r.size(), std::numeric_limits<double>::quiet_NaN());
      return solve(r);
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

  /// M y, without the shift delta.
  Eigen::VectorXd apply(const Eigen::VectorXd& y) const {
    if (dense_) {
      Eigen::VectorXd out = dense_times(merged_.cwiseProduct(dense_transpose_times(y)));
      for (std::size_t k = 0; k < slack_rows_.size(); ++k) {
        const auto [row, a] = slack_rows_[k];
        out[row] += a * a * d_[n_struct_ + static_cast<Eigen::Index>(k)] * y[row];
      }
      return out;
    }
    Eigen::VectorXd t = A_.transpose() * y;
    t.array() *= d_.array();
    return A_ * t;
  }

  /// A x and A^T y, by the dense copy in dense mode (a dense product streams memory; a
  /// sparse one on a dense matrix is several times slower).
  Eigen::VectorXd times(const Eigen::VectorXd& x) const {
    if (!dense_) return A_ * x;
    Eigen::VectorXd xg = Eigen::VectorXd::Zero(Ad_.cols());
    for (Eigen::Index k = 0; k < n_struct_; ++k)
      xg[group_[static_cast<std::size_t>(k)]] += sign_[static_cast<std::size_t>(k)] * x[k];
    Eigen::VectorXd out = dense_times(xg);
    for (std::size_t k = 0; k < slack_rows_.size(); ++k) {
      const auto [row, a] = slack_rows_[k];
      out[row] += a * x[n_struct_ + static_cast<Eigen::Index>(k)];
    }
    return out;
  }
  Eigen::VectorXd transpose_times(const Eigen::VectorXd& y) const {
    if (!dense_) return A_.transpose() * y;
    const Eigen::VectorXd t = dense_transpose_times(y);
    Eigen::VectorXd out(A_.cols());
    for (Eigen::Index k = 0; k < n_struct_; ++k)
      out[k] = sign_[static_cast<std::size_t>(k)] * t[group_[static_cast<std::size_t>(k)]];
    for (std::size_t k = 0; k < slack_rows_.size(); ++k) {
      const auto [row, a] = slack_rows_[k];
      out[n_struct_ + static_cast<Eigen::Index>(k)] = a * y[row];
    }
    return out;
  }

 private:
  // Ad_ v and Ad_^T y; with the column-space layout, from its blocks (the rows with at most
  // 8 entries cost their entries only).
  Eigen::VectorXd dense_times(const Eigen::VectorXd& v) const {
    if (AI_.size() == 0 && sparse_slacks_.empty()) return Ad_ * v;
    Eigen::VectorXd out = Eigen::VectorXd::Zero(Ad_.rows());
    const Eigen::VectorXd dense_part = AI_.transpose() * v;
    for (std::size_t k = 0; k < dense_slacks_.size(); ++k)
      out[slack_rows_[static_cast<std::size_t>(dense_slacks_[k])].first] =
          dense_part[static_cast<Eigen::Index>(k)];
    for (std::size_t q = 0; q < sparse_slacks_.size(); ++q) {
      double sum = 0;
      for (std::size_t a = sparse_start_[q]; a < sparse_start_[q + 1]; ++a)
        sum += sparse_entries_[a].second * v[sparse_entries_[a].first];
      out[slack_rows_[static_cast<std::size_t>(sparse_slacks_[q])].first] = sum;
    }
    if (AEq_.rows() > 0) {
      const Eigen::VectorXd equality_part = AEq_ * v;
      for (std::size_t e = 0; e < equality_rows_.size(); ++e)
        out[equality_rows_[e]] = equality_part[static_cast<Eigen::Index>(e)];
    }
    return out;
  }
  Eigen::VectorXd dense_transpose_times(const Eigen::VectorXd& y) const {
    if (AI_.size() == 0 && sparse_slacks_.empty()) return Ad_.transpose() * y;
    Eigen::VectorXd yd(AI_.cols());
    for (std::size_t k = 0; k < dense_slacks_.size(); ++k)
      yd[static_cast<Eigen::Index>(k)] =
          y[slack_rows_[static_cast<std::size_t>(dense_slacks_[k])].first];
    Eigen::VectorXd out = AI_ * yd;
    for (std::size_t q = 0; q < sparse_slacks_.size(); ++q) {
      const double yq = y[slack_rows_[static_cast<std::size_t>(sparse_slacks_[q])].first];
      for (std::size_t a = sparse_start_[q]; a < sparse_start_[q + 1]; ++a)
        out[sparse_entries_[a].first] += sparse_entries_[a].second * yq;
    }
    if (AEq_.rows() > 0) {
      Eigen::VectorXd ye(AEq_.rows());
      for (std::size_t e = 0; e < equality_rows_.size(); ++e)
        ye[static_cast<Eigen::Index>(e)] = y[equality_rows_[e]];
      out += AEq_.transpose() * ye;
    }
    return out;
  }

  // True when column k2 of A is exactly minus column k1 (same rows, negated values).
  static bool negated_neighbours(const lp_sparse& A, Eigen::Index k1, Eigen::Index k2) {
    lp_sparse::InnerIterator a(A, k1), b(A, k2);
    for (; a && b; ++a, ++b)
      if (a.row() != b.row() || a.value() != -b.value()) return false;
    return !a && !b && A.col(k1).nonZeros() > 0;
  }

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

  // With K = diag(d summed over each group) and theta_i = a^2 d_slack on rows with a slack
  // (0 on equality rows), M = A K A^T + diag(theta) + delta I. Rows split into I (slack rows
  // whose theta is not small) and E (equality rows, and slack rows with theta_i < 1e-4 times
  // their structural diagonal (A K A^T)_ii: nearly active rows, whose theta^-1 would be huge
  // and cancel). Eliminating u = K A^T y gives G = K^-1 + A_I^T Theta_I^-1 A_I (n x n) and
  // the Schur complement S = A_E G^-1 A_E^T + Theta_E + delta I on E; see raw_solve. This
  // costs n^2 m + |E|^2 n instead of m^2 n + m^3 / 3 when m > n (phase-one and MFCQ LPs).
  bool factor_columns(const Eigen::VectorXd& d, double delta) {
    const auto n_slack = static_cast<Eigen::Index>(slack_rows_.size());
    const Eigen::Index n = Ad_.cols();
    Eigen::VectorXd structural(n_slack);
    Eigen::MatrixXd& G = work_;
    structural(dense_slacks_) = AI2_.transpose() * merged_;
    for (std::size_t q = 0; q < sparse_slacks_.size(); ++q) {
      double sum = 0;
      for (std::size_t a = sparse_start_[q]; a < sparse_start_[q + 1]; ++a)
        sum += sparse_entries_[a].second * sparse_entries_[a].second *
               merged_[sparse_entries_[a].first];
      structural[sparse_slacks_[q]] = sum;
    }
    theta_inv_.resize(n_slack);
    schur_rows_ = equality_rows_;
    std::vector<double> schur_theta(equality_rows_.size(), delta);
    for (Eigen::Index k = 0; k < n_slack; ++k) {
      const auto [row, a] = slack_rows_[static_cast<std::size_t>(k)];
      const double theta = a * a * d[n_struct_ + k];
      const bool nearly_active = theta < 1e-4 * structural[k];
      theta_inv_[k] = nearly_active ? 0.0 : 1.0 / (theta + delta);
      if (nearly_active) {
        schur_rows_.push_back(row);
        schur_theta.push_back(theta + delta);
      }
    }
    G.setZero(n, n);
    scaled_ = AI_ * theta_inv_(dense_slacks_).cwiseSqrt().asDiagonal();
    G.selfadjointView<Eigen::Lower>().rankUpdate(scaled_);
    for (std::size_t q = 0; q < sparse_slacks_.size(); ++q) {  // lower triangle, by scatter
      const double t = theta_inv_[sparse_slacks_[q]];
      if (t == 0) continue;
      for (std::size_t a = sparse_start_[q]; a < sparse_start_[q + 1]; ++a)
        for (std::size_t b = sparse_start_[q]; b < sparse_start_[q + 1]; ++b) {
          const auto [i, vi] = sparse_entries_[a];
          const auto [j, vj] = sparse_entries_[b];
          if (i >= j) G(i, j) += t * vi * vj;
        }
    }
    const Eigen::VectorXd kinv = merged_.cwiseInverse();
    G.diagonal() += kinv;
    chol_.compute(std::move(G), &kinv);
    if (!chol_.ok()) return false;
    const auto k = static_cast<Eigen::Index>(schur_rows_.size());
    if (k == 0) return true;
    // W = L^-1 A_E^T (G = L L^T), so that S = W^T W + Theta_E.
    W_E_.resize(n, k);
    for (Eigen::Index e = 0; e < k; ++e)
      W_E_.col(e) = Ad_.row(schur_rows_[static_cast<std::size_t>(e)]).transpose();
    AE_ = W_E_;
    chol_.lower_solve_in_place(W_E_);
    Eigen::MatrixXd S = Eigen::MatrixXd::Zero(k, k);
    S.selfadjointView<Eigen::Lower>().rankUpdate(W_E_.transpose());
    S.diagonal() += Eigen::Map<const Eigen::VectorXd>(schur_theta.data(), k);
    schur_.compute(std::move(S));
    return schur_.ok();
  }

  Eigen::VectorXd raw_solve(const Eigen::VectorXd& r) const {
    if (columns_) {
      // h = A_I^T Theta_I^-1 r_I; y_E = S^-1 (r_E - A_E G^-1 h); u = G^-1 (h + A_E^T y_E);
      // y_I = Theta_I^-1 (r_I - A_I u). Rows of E have theta_inv_ = 0.
      const auto n_slack = static_cast<Eigen::Index>(slack_rows_.size());
      Eigen::VectorXd rI(n_slack);
      for (Eigen::Index k = 0; k < n_slack; ++k)
        rI[k] = r[slack_rows_[static_cast<std::size_t>(k)].first];
      const Eigen::VectorXd trI = theta_inv_.cwiseProduct(rI);
      Eigen::VectorXd h = AI_ * trI(dense_slacks_);
      for (std::size_t q = 0; q < sparse_slacks_.size(); ++q)
        for (std::size_t a = sparse_start_[q]; a < sparse_start_[q + 1]; ++a)
          h[sparse_entries_[a].first] += sparse_entries_[a].second * trI[sparse_slacks_[q]];
      Eigen::VectorXd y = Eigen::VectorXd::Zero(r.size());
      Eigen::VectorXd u;
      const auto k = static_cast<Eigen::Index>(schur_rows_.size());
      if (k > 0) {
        Eigen::VectorXd rE(k);
        for (Eigen::Index e = 0; e < k; ++e) rE[e] = r[schur_rows_[static_cast<std::size_t>(e)]];
        Eigen::VectorXd z = h;
        chol_.lower_solve_in_place(z);
        const Eigen::VectorXd yE = schur_.solve(rE - W_E_.transpose() * z);
        u = chol_.solve(h + AE_ * yE);
        for (Eigen::Index e = 0; e < k; ++e) y[schur_rows_[static_cast<std::size_t>(e)]] = yE[e];
      } else {
        u = chol_.solve(h);
      }
      Eigen::VectorXd AIu(n_slack);
      AIu(dense_slacks_) = AI_.transpose() * u;
      for (std::size_t q = 0; q < sparse_slacks_.size(); ++q) {
        double sum = 0;
        for (std::size_t a = sparse_start_[q]; a < sparse_start_[q + 1]; ++a)
          sum += sparse_entries_[a].second * u[sparse_entries_[a].first];
        AIu[sparse_slacks_[q]] = sum;
      }
      for (Eigen::Index j = 0; j < n_slack; ++j)
        if (theta_inv_[j] != 0)
          y[slack_rows_[static_cast<std::size_t>(j)].first] = theta_inv_[j] * (rI[j] - AIu[j]);
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
  Eigen::MatrixXd Ad_;               // dense mode: one column per group of structural columns
  std::vector<Eigen::Index> group_;  // structural column -> its column of Ad_
  std::vector<double> sign_;         // structural column = sign * that column
  Eigen::VectorXd merged_;           // d summed over each group
  std::vector<std::pair<Eigen::Index, double>> slack_rows_;
  Eigen::VectorXd d_;
  double delta_ = 0;
  dense_cholesky chol_;
  // Column-space factorisation (columns_): see factor_columns.
  bool columns_ = false;
  std::vector<Eigen::Index> equality_rows_;
  Eigen::MatrixXd AI_, AI2_, AEq_;        // A_I^T (dense slack rows), its squares, equality rows
  std::vector<Eigen::Index> schur_rows_;  // E: equality rows, then nearly active slack rows
  Eigen::MatrixXd AE_, W_E_;              // A_E^T and L^-1 A_E^T
  Eigen::MatrixXd work_, scaled_;         // G and A_I^T Theta_I^-1/2, kept to reuse memory
  std::vector<Eigen::Index> dense_slacks_, sparse_slacks_;  // slacks by their row's entries
  std::vector<std::size_t> sparse_start_;  // entries of sparse_slacks_[q]: [start_q, start_q+1)
  std::vector<std::pair<Eigen::Index, double>> sparse_entries_;  // (column of Ad_, value)
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
      VectorXd F1 = ne_.times(x) - b * tau;
      VectorXd F2 = (x + w - ub_ * tau).cwiseProduct(boxed_);
      VectorXd Aty = ne_.transpose_times(y);
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
        const double primal_ray = std::max(ne_.times(x).lpNorm<Eigen::Infinity>(),
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
      VectorXd q = ne_.solve(b + ne_.times(Dinv.cwiseProduct(c - g)));
      VectorXd xq = Dinv.cwiseProduct(ne_.transpose_times(q) + g - c);
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
        VectorXd p = ne_.solve(-eta * F1 + ne_.times(Dinv.cwiseProduct(h)));
        VectorXd xp = Dinv.cwiseProduct(ne_.transpose_times(p) - h);
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
