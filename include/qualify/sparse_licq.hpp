// qualify: LICQ on sparse Jacobians (Eigen::SparseMatrix), by SuiteSparse's SPQR when built with
// it. SPDX-License-Identifier: MIT
#pragma once

#include <Eigen/SparseCore>
#include <algorithm>
#include <cmath>
#include <cstddef>
#include <limits>
#include <new>
#include <optional>
#include <qualify/licq.hpp>
#include <string>
#include <type_traits>
#include <vector>

#if defined(QUALIFY_WITH_SPQR)
#include <SuiteSparseQR.hpp>
#endif

namespace qualify {

/// True when this translation unit was built with SuiteSparse's SPQR (QUALIFY_WITH_SPQR):
/// then sparse double Jacobians are factored sparse; otherwise they go to the dense core.
#if defined(QUALIFY_WITH_SPQR)
inline constexpr bool sparse_engine_available = true;
#else
inline constexpr bool sparse_engine_available = false;
#endif

namespace detail {

/// Index type of the sparse working copies (SPQR's SuiteSparse_long when built with it).
using sparse_index = std::ptrdiff_t;
#if defined(QUALIFY_WITH_SPQR)
static_assert(std::is_same_v<sparse_index, SuiteSparse_long>,
              "qualify's sparse index must be SPQR's SuiteSparse_long");
#endif
template <class Scalar>
using sparse_columns = Eigen::SparseMatrix<Scalar, Eigen::ColMajor, sparse_index>;

/// A message when compressed sparse storage is malformed (the arrays of an Eigen::Map built
/// from a host's own CSR or CSC arrays): outer offsets that decrease, inner indices out of
/// range or not increasing. Eigen's own matrices always pass; expressions are not scanned.
template <class Derived>
std::optional<std::string> sparse_structure_message(const Eigen::SparseMatrixBase<Derived>& m) {
  if constexpr (std::is_base_of_v<Eigen::SparseCompressedBase<Derived>, Derived>) {
    const Derived& d = m.derived();
    const bool by_row = bool(Derived::IsRowMajor);
    const char* outer_name = by_row ? "row" : "column";
    const char* inner_name = by_row ? "column" : "row";
    const Index outer_size = d.outerSize(), inner_size = d.innerSize();
    const auto* outer = d.outerIndexPtr();
    const auto* inner = d.innerIndexPtr();
    const auto* counts = d.innerNonZeroPtr();
    if (outer_size == 0 || d.nonZeros() == 0) return std::nullopt;
    if (outer == nullptr || inner == nullptr || d.valuePtr() == nullptr)
      return std::string("the sparse Jacobian has entries but no index or value arrays");
    if (outer[0] < 0)
      return "the sparse Jacobian's first outer offset is " + std::to_string(outer[0]) +
             ", negative";
    for (Index j = 0; j < outer_size; ++j) {
      const Index begin = Index(outer[j]);
      const Index end = counts ? begin + Index(counts[j]) : Index(outer[j + 1]);
      if (end < begin || (!counts && Index(outer[j + 1]) < begin) ||
          (counts && Index(outer[j + 1]) < end))
        return std::string("the sparse Jacobian's offsets decrease at ") + outer_name + " " +
               std::to_string(j);
      for (Index p = begin; p < end; ++p) {
        const Index i = Index(inner[p]);
        if (i < 0 || i >= inner_size)
          return std::string("sparse Jacobian ") + outer_name + " " + std::to_string(j) +
                 " has an entry in " + inner_name + " " + std::to_string(i) +
                 ", out of range [0, " + std::to_string(inner_size) + ")";
        if (p > begin && i <= Index(inner[p - 1]))
          return std::string("sparse Jacobian ") + outer_name + " " + std::to_string(j) + ": " +
                 inner_name + " index " + std::to_string(i) + " follows " +
                 std::to_string(inner[p - 1]) + " (indices must increase within a " + outer_name +
                 ")";
      }
    }
  }
  return std::nullopt;
}

/// The first non-finite stored entry in column-major order (as the dense check names it).
template <class Derived>
std::optional<std::string> sparse_non_finite_message(const Eigen::SparseMatrixBase<Derived>& m) {
  Eigen::internal::evaluator<Derived> ev(m.derived());
  std::optional<entry_position> first;
  long double bad_value = 0;
  for (Index j = 0; j < m.outerSize(); ++j)
    for (typename Eigen::internal::evaluator<Derived>::InnerIterator it(ev, j); it; ++it) {
      const auto v = static_cast<long double>(it.value());
      if (std::isfinite(v)) continue;
      const entry_position at{Index(it.row()), Index(it.col())};
      if (!first || at.col < first->col || (at.col == first->col && at.row < first->row)) {
        first = at;
        bad_value = v;
      }
    }
  if (!first) return std::nullopt;
  return "Jacobian entry (" + std::to_string(first->row) + ", " + std::to_string(first->col) +
         ") is " + describe_non_finite(bad_value);
}

/// Solves with the leading r x r block of a compressed column-major upper-triangular factor
/// whose last entry in each leading column is its diagonal (checked by the caller).
struct upper_triangle {
  Index r = 0;
  const sparse_index* p = nullptr;
  const sparse_index* i = nullptr;
  const double* x = nullptr;

  void solve(double* b) const {  // R z = b, z overwrites b
    for (Index j = r - 1; j >= 0; --j) {
      const sparse_index last = p[j + 1] - 1;
      const double z = b[j] / x[last];
      b[j] = z;
      if (z == 0) continue;
      for (sparse_index q = p[j]; q < last; ++q) b[i[q]] -= x[q] * z;
    }
  }
  void solve_transposed(double* c) const {  // R^T z = c, z overwrites c
    for (Index j = 0; j < r; ++j) {
      const sparse_index last = p[j + 1] - 1;
      double s = c[j];
      for (sparse_index q = p[j]; q < last; ++q) s -= x[q] * c[i[q]];
      c[j] = s / x[last];
    }
  }
};

/// Estimate of ||X||_1 for X = R^{-1} (or R^{-T} when `transposed`), by Hager's method with
/// Higham's extra vector (Higham, "FORTRAN codes for estimating the one-norm of a real or
/// complex matrix", ACM TOMS 14, 1988). It never exceeds the true norm and is usually equal.
inline double inverse_one_norm_estimate(const upper_triangle& t, bool transposed) {
  const Index r = t.r;
  const auto apply = [&](std::vector<double>& v, bool transpose) {
    if (transpose != transposed)
      t.solve_transposed(v.data());
    else
      t.solve(v.data());
  };
  const auto one_norm = [](const std::vector<double>& v) {
    double s = 0;
    for (double y : v) s += std::abs(y);
    return s;
  };
  std::vector<double> v(static_cast<std::size_t>(r), 1.0 / double(r)),
      y = v, z(static_cast<std::size_t>(r));
  apply(y, false);
  double est = one_norm(y);
  constexpr int max_steps = 5;  // Higham's limit
  for (int step = 0; step < max_steps; ++step) {
    for (Index c = 0; c < r; ++c) z[c] = y[c] >= 0 ? 1.0 : -1.0;
    apply(z, true);
    Index best = 0;
    double z_dot_v = 0;
    for (Index c = 0; c < r; ++c) {
      z_dot_v += z[c] * v[c];
      if (std::abs(z[c]) > std::abs(z[best])) best = c;
    }
    if (step > 0 && std::abs(z[best]) <= z_dot_v) break;  // no vertex promises more
    std::fill(v.begin(), v.end(), 0.0);
    v[best] = 1;
    y = v;
    apply(y, false);
    const double next = one_norm(y);
    if (next <= est) break;
    est = next;
  }
  for (Index c = 0; c < r; ++c)
    y[c] = (c % 2 ? -1.0 : 1.0) * (1.0 + (r > 1 ? double(c) / double(r - 1) : 0.0));
  apply(y, false);
  return std::max(est, 2 * one_norm(y) / (3 * double(r)));
}

/// Power-iteration estimate of ||R^{-1}||_2 (a Rayleigh quotient: never above the true norm).
inline double inverse_two_norm_estimate(const upper_triangle& t, int iterations) {
  const Index r = t.r;
  std::vector<double> v(static_cast<std::size_t>(r));
  for (Index c = 0; c < r; ++c) v[c] = 1.0 + double(c % 7) / 7.0;
  double estimate = 0;
  for (int k = 0; k < iterations; ++k) {
    double vn = 0;
    for (double a : v) vn += a * a;
    vn = std::sqrt(vn);
    if (!(vn > 0) || !std::isfinite(vn)) break;
    for (double& a : v) a /= vn;
    t.solve(v.data());
    double wn = 0;
    for (double a : v) wn += a * a;
    estimate = std::sqrt(wn);
    t.solve_transposed(v.data());
  }
  return estimate;
}

/// Power-iteration estimate of ||A||_2 for a sparse A (never above the true norm).
template <class Scalar>
Scalar sparse_two_norm_estimate(const sparse_columns<Scalar>& a, int iterations) {
  if (a.rows() == 0 || a.cols() == 0) return Scalar(0);
  vector<Scalar> v(a.cols());
  for (Index i = 0; i < v.size(); ++i) v(i) = Scalar(1) + Scalar(i % 7) / Scalar(7);
  Scalar estimate(0);
  for (int k = 0; k < iterations; ++k) {
    const Scalar vn = v.norm();
    if (!(vn > Scalar(0))) break;
    v /= vn;
    const vector<Scalar> w = a * v;
    estimate = w.norm();
    v.noalias() = a.transpose() * w;
  }
  return estimate;
}

#if defined(QUALIFY_WITH_SPQR)
/// SPQR's rank-revealing QR of A (n x k, compressed, column-major) with fill-reducing
/// column ordering: A E = Q R, R = [R11 R12] of r rows, the columns SPQR found dead (Heath's
/// method: remaining 2-norm <= tol when reached) last in E. Q is not kept.
class spqr_factor {
 public:
  spqr_factor(const sparse_columns<double>& a, double tol, int ordering = SPQR_ORDERING_DEFAULT) {
    cholmod_l_start(&cc_);
    cc_.print = 0;  // status is read below; SPQR must not write to the host's stdout
    cholmod_sparse view{};
    view.nrow = std::size_t(a.rows());
    view.ncol = std::size_t(a.cols());
    view.nzmax = std::size_t(a.nonZeros());
    view.p = const_cast<sparse_index*>(a.outerIndexPtr());
    view.i = const_cast<sparse_index*>(a.innerIndexPtr());
    view.x = const_cast<double*>(a.valuePtr());
    view.stype = 0;
    view.itype = CHOLMOD_LONG;
    view.xtype = CHOLMOD_REAL;
    view.dtype = CHOLMOD_DOUBLE;
    view.sorted = 1;
    view.packed = 1;
    rank_ = SuiteSparseQR<double>(ordering, tol, 0, &view, &r_, &e_, &cc_);
    if (rank_ < 0 && cc_.status == CHOLMOD_OUT_OF_MEMORY) {
      release();
      throw std::bad_alloc();  // resource exhaustion is the one condition that throws
    }
    k_ = a.cols();
  }
  spqr_factor(const spqr_factor&) = delete;
  spqr_factor& operator=(const spqr_factor&) = delete;
  ~spqr_factor() { release(); }

  bool ok() const { return rank_ >= 0 && r_ != nullptr; }
  Index rank() const { return Index(rank_); }
  int status() const { return cc_.status; }
  Index order(Index c) const { return e_ ? Index(e_[c]) : c; }
  const cholmod_sparse& r() const { return *r_; }

  /// The leading block as a triangle, when its structure is what the analysis relies on:
  /// sorted columns, each ending on a finite, non-zero diagonal.
  std::optional<upper_triangle> leading_triangle() const {
    if (!ok() || r_->packed == 0 || r_->sorted == 0 || Index(r_->nrow) != Index(rank_))
      return std::nullopt;
    upper_triangle t{Index(rank_), static_cast<const sparse_index*>(r_->p),
                     static_cast<const sparse_index*>(r_->i), static_cast<const double*>(r_->x)};
    for (Index j = 0; j < t.r; ++j) {
      const sparse_index last = t.p[j + 1] - 1;
      if (last < t.p[j] || t.i[last] != j || !(t.x[last] != 0) || !std::isfinite(t.x[last]))
        return std::nullopt;
    }
    return t;
  }

 private:
  void release() {
    if (finished_) return;
    if (r_) cholmod_l_free_sparse(&r_, &cc_);
    if (e_) cholmod_l_free(std::size_t(k_), sizeof(SuiteSparse_long), e_, &cc_);
    e_ = nullptr;
    cholmod_l_finish(&cc_);
    finished_ = true;
  }
  cholmod_common cc_{};
  cholmod_sparse* r_ = nullptr;
  SuiteSparse_long* e_ = nullptr;
  SuiteSparse_long rank_ = -1;
  Index k_ = 0;
  bool finished_ = false;
};
#endif

/// What the sparse analysis ended with, so that the caller can say it.
enum class sparse_outcome { sparse_engine, dense_core, dense_check, too_large, engine_failed };

/// Chord ||u -+ v|| of two sorted sparse unit columns.
template <class Scalar>
Scalar sparse_chord(const sparse_columns<Scalar>& u, Index a, Index b, Scalar sign) {
  typename sparse_columns<Scalar>::InnerIterator x(u, a), y(u, b);
  Scalar sum(0);
  while (x || y) {
    Scalar d;
    if (x && (!y || x.index() < y.index())) {
      d = x.value();
      ++x;
    } else if (y && (!x || y.index() < x.index())) {
      d = -sign * y.value();
      ++y;
    } else {
      d = x.value() - sign * y.value();
      ++x;
      ++y;
    }
    sum += d * d;
  }
  return std::sqrt(sum);
}

/// The dense core on the sparse Jacobian (its size has been checked against the limit).
template <class Scalar, class Derived>
void analyze_dense_copy(const Derived& jac, const licq_options& options, licq_report& rep) {
  licq_report fresh;
  fresh.rows = rep.rows;
  fresh.cols = rep.cols;
  fresh.relative_threshold_requested = rep.relative_threshold_requested;
  fresh.names = std::move(rep.names);
  rep = std::move(fresh);
  const matrix<Scalar> dense = jac.toDense();
  analyze_rows<Scalar>(dense, options, {}, rep);
}

/// The LICQ analysis of a sparse Jacobian: the SPQR engine for double when built with it,
/// else the dense core within options.sparse_dense_limit. Inputs have been validated.
template <class Scalar, class Derived>
sparse_outcome analyze_sparse_rows(const Derived& jac, const licq_options& options,
                                   licq_report& rep) {
  const Index m = jac.rows(), n = jac.cols();
  const bool fits_dense = m == 0 || std::size_t(n) <= options.sparse_dense_limit / std::size_t(m);
#if defined(QUALIFY_WITH_SPQR)
  constexpr bool engine = std::is_same_v<Scalar, double>;
#else
  constexpr bool engine = false;
#endif
  if constexpr (!engine) {
    if (!fits_dense) return sparse_outcome::too_large;
    analyze_dense_copy<Scalar>(jac, options, rep);
    return sparse_outcome::dense_core;
  } else {
#if defined(QUALIFY_WITH_SPQR)
    using std::abs;
    const double eps = std::numeric_limits<double>::epsilon();
    const double band = options.undecided_band;
    const double tau = options.relative_threshold.value_or(double(std::max(m, n)) * eps);
    const double parallel_tol = options.parallel_tolerance.value_or(band * tau);
    rep.relative_threshold = rep.threshold = tau;

    // Unit gradients as the columns of A = J^T, zero rows left out.
    std::vector<Index> kept;    // local column -> row of J
    std::vector<double> norms;  // of the kept rows
    sparse_columns<double> unit;
    {
      // Straight from the input in two or three streaming passes (no transposed copy):
      // counts and sums of squares, a rescaled pass only for rows that could over- or
      // underflow (as stableNorm would), then the unit rows as the columns of A.
      Eigen::internal::evaluator<Derived> ev(jac);
      using iterator = typename Eigen::internal::evaluator<Derived>::InnerIterator;
      std::vector<double> all_norms(static_cast<std::size_t>(m), 0.0);
      std::vector<sparse_index> count(static_cast<std::size_t>(m), 0);
      for (Index j = 0; j < jac.outerSize(); ++j)
        for (iterator it(ev, j); it; ++it) {
          const double x = it.value();
          all_norms[it.row()] += x * x;
          ++count[it.row()];
        }
      constexpr double safe_low = 1e-280, safe_high = 1e280;  // squares stay normal doubles
      std::vector<double> big;
      for (Index i = 0; i < m; ++i)
        if (count[i] > 0 && !(all_norms[i] >= safe_low && all_norms[i] <= safe_high)) {
          big.assign(static_cast<std::size_t>(m), 0.0);
          break;
        }
      if (!big.empty()) {
        for (Index j = 0; j < jac.outerSize(); ++j)
          for (iterator it(ev, j); it; ++it)
            big[it.row()] = std::max(big[it.row()], abs(double(it.value())));
        std::vector<double> scaled(static_cast<std::size_t>(m), 0.0);
        for (Index j = 0; j < jac.outerSize(); ++j)
          for (iterator it(ev, j); it; ++it)
            if (big[it.row()] > 0) {
              const double x = it.value() / big[it.row()];
              scaled[it.row()] += x * x;
            }
        for (Index i = 0; i < m; ++i)
          if (count[i] > 0 && !(all_norms[i] >= safe_low && all_norms[i] <= safe_high))
            all_norms[i] = big[i] * std::sqrt(scaled[i]);
          else
            all_norms[i] = std::sqrt(all_norms[i]);
      } else {
        for (double& x : all_norms) x = std::sqrt(x);
      }
      std::vector<sparse_index> column_of(static_cast<std::size_t>(m), -1);
      sparse_index nnz = 0;
      for (Index i = 0; i < m; ++i) {
        if (all_norms[i] <= options.zero_row_norm) {
          rep.zero_rows.push_back(i);
          rep.dependencies.push_back({i, {}, 0.0});
        } else {
          column_of[i] = sparse_index(kept.size());
          kept.push_back(i);
          norms.push_back(all_norms[i]);
          nnz += count[i];
        }
      }
      const Index k = Index(kept.size());
      unit.resize(n, k);
      unit.resizeNonZeros(nnz);
      auto* up = unit.outerIndexPtr();
      auto* ui = unit.innerIndexPtr();
      auto* ux = unit.valuePtr();
      up[0] = 0;
      for (Index c = 0; c < k; ++c) up[c + 1] = up[c] + count[kept[c]];
      std::vector<sparse_index> next(up, up + k);
      // Outer vectors in increasing order: entries land in increasing column order of J, so
      // each column of A is sorted, as SPQR requires.
      for (Index j = 0; j < jac.outerSize(); ++j)
        for (iterator it(ev, j); it; ++it) {
          const sparse_index c = column_of[it.row()];
          if (c < 0) continue;
          const sparse_index at = next[c]++;
          ui[at] = sparse_index(it.col());
          ux[at] = double(it.value()) / norms[c];
        }
    }
    const Index k = Index(kept.size());
    double largest_norm = 0, smallest_norm = std::numeric_limits<double>::infinity();
    for (double x : norms) {
      largest_norm = std::max(largest_norm, x);
      smallest_norm = std::min(smallest_norm, x);
    }
    rep.raw_threshold = tau * largest_norm;
    if (!rep.zero_rows.empty())
      add_finding(rep.findings, severity::error, "zero_gradient",
                  "gradient is zero: the row can never be independent", rep.zero_rows, rep.names);

    rank_decision<double> decision;
    decision.method = rank_method::sparse_qr;
    decision.clear = k == 0;
    if (k > 0) {
      const spqr_factor qr(unit, tau);
      const auto tri = qr.leading_triangle();
      if (!tri) {
        if (!fits_dense) return sparse_outcome::engine_failed;
        analyze_dense_copy<Scalar>(jac, options, rep);
        return sparse_outcome::dense_check;
      }
      const Index r = qr.rank();
      decision.rank = r;
      decision.order.resize(std::size_t(k));
      for (Index c = 0; c < k; ++c) decision.order[c] = qr.order(c);

      // Kept side: sigma_min(R11) >= 1 / ||R11^{-1}||_2 >= 1 / sqrt(||X||_1 ||X||_inf), with
      // both 1-norms estimated (Higham 1988), capped by the power-iteration estimate.
      if (r > 0) {
        constexpr int power_steps = 2;  // a figure for the report, not a proof
        const double n1 = inverse_one_norm_estimate(*tri, false);
        const double ninf = inverse_one_norm_estimate(*tri, true);
        const double n2 = inverse_two_norm_estimate(*tri, power_steps);
        decision.smallest_estimate = n2 > 0 ? 1 / n2 : 0.0;
        const double lower = n1 > 0 && ninf > 0 ? 1 / std::sqrt(n1 * ninf) : 0.0;
        decision.kept_lower =
            std::isfinite(lower) ? std::min(lower, decision.smallest_estimate) : 0.0;
      }

      // Dependent side: each dead column against the live ones, X = R11^{-1} R12, and its
      // residual formed from the unit gradients themselves. [A_live, A_dead - W] has rank r,
      // so sigma_{r+1} <= ||W||_F (Eckart-Young): the bound the failure rests on.
      const cholmod_sparse& rf = qr.r();
      const auto* rp = static_cast<const sparse_index*>(rf.p);
      const auto* ri = static_cast<const sparse_index*>(rf.i);
      const auto* rx = static_cast<const double*>(rf.x);
      std::vector<double> x(static_cast<std::size_t>(r)), res(static_cast<std::size_t>(n), 0.0);
      std::vector<char> touched_flag(static_cast<std::size_t>(n), 0);
      std::vector<Index> touched;
      double dropped_sq = 0;
      for (Index c = r; c < k; ++c) {
        std::fill(x.begin(), x.end(), 0.0);
        for (sparse_index q = rp[c]; q < rp[c + 1]; ++q)
          if (ri[q] < r) x[ri[q]] = rx[q];
        if (r > 0) tri->solve(x.data());
        const Index dead = decision.order[c];
        const auto add = [&](Index col, double factor) {
          for (typename sparse_columns<double>::InnerIterator it(unit, col); it; ++it) {
            const Index v = Index(it.index());
            if (!touched_flag[v]) {
              touched_flag[v] = 1;
              touched.push_back(v);
            }
            res[v] += factor * it.value();
          }
        };
        const auto residual_norm = [&] {
          double s = 0;
          for (Index v : touched) s += res[v] * res[v];
          return std::sqrt(s);
        };
        add(dead, 1.0);
        for (Index t = 0; t < r; ++t)
          if (x[t] != 0) add(decision.order[t], -x[t]);
        const double full_residual = residual_norm();
        dropped_sq += full_residual * full_residual;
        // Terms below the threshold are omitted from the explanation (as in the dense
        // path); its residual is that of the listed terms.
        bool omitted = false;
        row_dependence dep{kept[dead], {}, 0.0};
        for (Index t = 0; t < r; ++t) {
          if (x[t] == 0) continue;
          const Index base = decision.order[t];
          if (abs(x[t]) <= tau) {
            add(base, x[t]);
            omitted = true;
            continue;
          }
          dep.terms.push_back({kept[base], x[t] * norms[dead] / norms[base]});
        }
        dep.residual = omitted ? residual_norm() : full_residual;
        std::sort(dep.terms.begin(), dep.terms.end(), [](const auto& a, const auto& b) {
          return abs(a.coefficient) > abs(b.coefficient);
        });
        rep.dependencies.push_back(std::move(dep));
        for (Index v : touched) {
          res[v] = 0;
          touched_flag[v] = 0;
        }
        touched.clear();
      }
      decision.dropped_upper = std::sqrt(dropped_sq);
      if (r < k) decision.smallest_estimate = decision.dropped_upper;
      decision.clear =
          (r == 0 || decision.kept_lower >= band * tau) && decision.dropped_upper <= tau;
    }

    // A close call goes to the dense core when the matrix is small enough for it.
    if (!decision.clear && fits_dense) {
      analyze_dense_copy<Scalar>(jac, options, rep);
      return sparse_outcome::dense_check;
    }

    const Index r = decision.rank;
    rep.method = decision.method;
    rep.rank = r;
    rep.largest_singular_value = sparse_two_norm_estimate<double>(unit, 3);
    rep.smallest_singular_value =
        rep.zero_rows.empty() && k <= n ? decision.smallest_estimate : 0.0;
    rep.condition_number = rep.smallest_singular_value > 0
                               ? rep.largest_singular_value / rep.smallest_singular_value
                               : std::numeric_limits<double>::infinity();
    set_verdict<double>(rep, k, n, decision, tau, band);
    for (Index c = 0; c < r; ++c) rep.independent_rows.push_back(kept[decision.order[c]]);

    if (r < k) {
      // Duplicated, parallel and opposed pairs involve a dependent row; partners share a
      // variable, found through the rows of each variable.
      std::vector<char> dead_flag(static_cast<std::size_t>(k), 0);
      for (Index c = r; c < k; ++c) dead_flag[decision.order[c]] = 1;
      // Rows by variable, for the variables of dependent rows only: one streaming pass.
      std::vector<sparse_index> slot(static_cast<std::size_t>(n), -1);
      Index marked = 0;
      for (Index c = r; c < k; ++c)
        for (typename sparse_columns<double>::InnerIterator it(unit, decision.order[c]); it; ++it)
          if (slot[it.index()] < 0) slot[it.index()] = sparse_index(marked++);
      std::vector<sparse_index> start(static_cast<std::size_t>(marked + 1), 0);
      const auto* ui = unit.innerIndexPtr();
      const auto* ux = unit.valuePtr();
      const auto* up = unit.outerIndexPtr();
      for (sparse_index q = 0; q < up[k]; ++q)
        if (slot[ui[q]] >= 0) ++start[slot[ui[q]] + 1];
      for (Index t = 0; t < marked; ++t) start[t + 1] += start[t];
      std::vector<sparse_index> fill(start.begin(), start.end() - 1);
      std::vector<sparse_index> member(static_cast<std::size_t>(start[marked]));
      std::vector<double> member_value(member.size());
      for (Index c = 0; c < k; ++c)
        for (sparse_index q = up[c]; q < up[c + 1]; ++q)
          if (const sparse_index sl = slot[ui[q]]; sl >= 0) {
            member[fill[sl]] = sparse_index(c);
            member_value[fill[sl]++] = ux[q];
          }
      std::vector<double> cosine(static_cast<std::size_t>(k), 0.0);
      std::vector<Index> partners;
      std::vector<char> seen(static_cast<std::size_t>(k), 0);
      for (Index c = r; c < k; ++c) {
        const Index a = decision.order[c];
        for (typename sparse_columns<double>::InnerIterator it(unit, a); it; ++it)
          for (sparse_index q = start[slot[it.index()]]; q < start[slot[it.index()] + 1]; ++q) {
            const Index b = Index(member[q]);
            if (b == a || (dead_flag[b] && b < a)) continue;  // each dependent pair once
            if (!seen[b]) {
              seen[b] = 1;
              partners.push_back(b);
            }
            cosine[b] += it.value() * member_value[q];
          }
        for (Index b : partners) {
          if (abs(cosine[b]) >= 0.5) {
            const double sign = cosine[b] > 0 ? 1.0 : -1.0;
            record_pair<double>(rep, kept[a], kept[b], cosine[b],
                                sparse_chord<double>(unit, a, b, sign), norms[a], norms[b],
                                parallel_tol);
          }
          cosine[b] = 0;
          seen[b] = 0;
        }
        partners.clear();
      }
    }
    orient_parallel_pairs(rep);
    sort_rows(rep);

    // The same decision on the gradients as given (see analyze_rows): settled by the bounds
    // unless rows are badly scaled, then SPQR's rank of the scaled columns.
    if (k == 0) {
      rep.raw_rank = 0;
    } else if (decision.clear && smallest_norm * decision.kept_lower >= band * tau * largest_norm) {
      rep.raw_rank = r;
    } else {
      sparse_columns<double> scaled = unit;
      for (Index c = 0; c < k; ++c) scaled.col(c) *= norms[c] / largest_norm;
      const spqr_factor raw(scaled, tau);
      rep.raw_rank = raw.ok() ? raw.rank() : r;
    }
    return sparse_outcome::sparse_engine;
#endif
  }
}

}  // namespace detail

/// LICQ on a sparse Jacobian of the active constraints (rows = gradients; Eigen::SparseMatrix
/// row- or column-major, a Map of a host's CSR/CSC arrays, or a sparse expression). Same
/// report, verdicts, findings and thresholds as the dense check. Built with SPQR
/// (QUALIFY_WITH_SPQR), double Jacobians are decided by SPQR's rank-revealing sparse QR of the
/// row-normalised J^T with a fill-reducing ordering (method `sparse_qr`), confirmed by a
/// condition estimate of the kept triangle and the residuals of the dependent rows; a close
/// call, or any call without SPQR, goes to the dense core when rows * cols <=
/// options.sparse_dense_limit; otherwise the verdict is undecided and a finding says why.
template <class Derived>
licq_report check_licq(const Eigen::SparseMatrixBase<Derived>& jacobian,
                       const licq_options& options = {}, std::vector<std::string> labels = {}) {
  detail::check_scalar<Derived>();
  using Scalar = typename Derived::Scalar;
  licq_report rep;
  rep.rows = jacobian.rows();
  rep.cols = jacobian.cols();
  rep.relative_threshold_requested = options.relative_threshold;
  const std::size_t label_count = labels.size();
  rep.names = row_names(std::move(labels));
  if (auto bad = options.validate(); !bad.empty())
    return detail::invalid_licq(rep, "bad_option", bad);
  if (label_count != 0 && label_count != std::size_t(rep.rows))
    return detail::invalid_licq(
        rep, "label_count",
        std::to_string(label_count) + " labels for " + std::to_string(rep.rows) + " rows");
  if (rep.cols == 0)
    return detail::invalid_licq(rep, "empty_jacobian", "the Jacobian has no columns (variables)");
  if (auto bad = detail::sparse_structure_message(jacobian))
    return detail::invalid_licq(rep, "invalid_sparse_structure", *bad);
  if (auto bad = detail::sparse_non_finite_message(jacobian))
    return detail::invalid_licq(rep, "non_finite_entry", *bad);

  const auto outcome = detail::analyze_sparse_rows<Scalar>(jacobian.derived(), options, rep);
  const std::string size = std::to_string(rep.rows) + " x " + std::to_string(rep.cols);
  if (outcome == detail::sparse_outcome::too_large ||
      outcome == detail::sparse_outcome::engine_failed) {
    rep.result = verdict::undecided;
    rep.method = rank_method::none;
    const std::string why =
        outcome == detail::sparse_outcome::too_large
            ? "the " + size + " sparse Jacobian exceeds sparse_dense_limit = " +
                  std::to_string(options.sparse_dense_limit) +
                  " entries, and qualify was built without SPQR (QUALIFY_WITH_SPQR)" +
                  (std::is_same_v<Scalar, double> ? "" : " or the scalar is not double")
            : "SPQR could not factor the " + size +
                  " sparse Jacobian, which exceeds sparse_dense_limit = " +
                  std::to_string(options.sparse_dense_limit) + " entries for the dense core";
    add_finding(rep.findings, severity::warning, "no_sparse_engine", why, {}, rep.names);
    rep.message = "LICQ undecided: " + why;
    return rep;
  }
  detail::describe(rep, options, double(std::numeric_limits<Scalar>::epsilon()));
  if (outcome == detail::sparse_outcome::dense_core)
    add_finding(rep.findings, severity::info, "dense_fallback",
                "the " + size + " sparse Jacobian was checked by the dense core" +
                    (sparse_engine_available ? " (SPQR takes double only)"
                                             : " (qualify was built without SPQR)"),
                {}, rep.names);
  else if (outcome == detail::sparse_outcome::dense_check)
    add_finding(rep.findings, severity::info, "dense_check",
                "the sparse factorisation left the rank decision close; the dense core decided", {},
                rep.names);
  return rep;
}

}  // namespace qualify
