// qualify: sparse kernels shared by the checks (storage scan, row norms, triangular solves and
// estimates, SuiteSparse's SPQR). SPDX-License-Identifier: MIT
#pragma once

#include <Eigen/SparseCore>
#include <algorithm>
#include <cmath>
#include <cstddef>
#include <new>
#include <optional>
#include <qualify/detail/config.hpp>
#include <qualify/detail/dense.hpp>
#include <qualify/report.hpp>
#include <string>
#include <type_traits>
#include <vector>

#if defined(QUALIFY_WITH_SPQR)
#include <SuiteSparseQR.hpp>
#endif

namespace qualify {

/// True when this translation unit was built with SuiteSparse's SPQR (QUALIFY_WITH_SPQR):
/// then sparse float and double Jacobians are factored sparse; otherwise the sparse checks use
/// the dense core within licq_options::sparse_dense_limit.
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

/// What a scan of compressed sparse storage found.
struct sparse_storage {
  std::optional<std::string> error;  ///< malformed: offsets that decrease, an index out of range
  bool canonical = true;             ///< inner indices strictly increase in every outer vector
};

/// Scans the arrays of compressed storage (an Eigen::Map of a host's own CSR or CSC arrays can
/// hold anything): offsets that decrease and indices out of range are errors, named by
/// position; repeated or unordered indices only make the storage non-canonical (the entries
/// are then summed per position, as Matrix Market does). Expressions are not compressed
/// storage: they are reported non-canonical and evaluated by the caller.
template <class Derived>
sparse_storage scan_sparse_storage(const Eigen::SparseMatrixBase<Derived>& m,
                                   const std::string& what) {
  sparse_storage out;
  if constexpr (!std::is_base_of_v<Eigen::SparseCompressedBase<Derived>, Derived>) {
    out.canonical = false;
  } else {
    const Derived& d = m.derived();
    const bool by_row = bool(Derived::IsRowMajor);
    const std::string outer_name = by_row ? "row" : "column";
    const std::string inner_name = by_row ? "column" : "row";
    const Index outer_size = d.outerSize(), inner_size = d.innerSize();
    const auto* outer = d.outerIndexPtr();
    const auto* inner = d.innerIndexPtr();
    const auto* counts = d.innerNonZeroPtr();
    if (outer_size == 0 || d.nonZeros() == 0) return out;
    if (outer == nullptr || inner == nullptr || d.valuePtr() == nullptr) {
      out.error = what + " has entries but no index or value arrays";
      return out;
    }
    if (outer[0] < 0) {
      out.error = what + ": the first outer offset is " + std::to_string(outer[0]) + ", negative";
      return out;
    }
    for (Index j = 0; j < outer_size; ++j) {
      const Index begin = Index(outer[j]);
      const Index end = counts ? begin + Index(counts[j]) : Index(outer[j + 1]);
      if (end < begin || (counts && Index(outer[j + 1]) < end)) {
        out.error = what + ": the offsets decrease at " + outer_name + " " + std::to_string(j);
        return out;
      }
      for (Index p = begin; p < end; ++p) {
        const Index i = Index(inner[p]);
        if (i < 0 || i >= inner_size) {
          out.error = what + " " + outer_name + " " + std::to_string(j) + " has an entry in " +
                      inner_name + " " + std::to_string(i) + ", out of range [0, " +
                      std::to_string(inner_size) + ")";
          return out;
        }
        if (p > begin && i <= Index(inner[p - 1])) out.canonical = false;
      }
    }
  }
  return out;
}

/// The entries of `m` summed per position, in sorted column-major storage: the canonical form
/// of storage that scan_sparse_storage did not find canonical.
template <class Scalar, class Derived>
Eigen::SparseMatrix<Scalar> summed_copy(const Eigen::SparseMatrixBase<Derived>& m) {
  Eigen::internal::evaluator<Derived> ev(m.derived());
  std::vector<Eigen::Triplet<Scalar>> entries;
  for (Index j = 0; j < m.outerSize(); ++j)
    for (typename Eigen::internal::evaluator<Derived>::InnerIterator it(ev, j); it; ++it)
      entries.emplace_back(Index(it.row()), Index(it.col()), Scalar(it.value()));
  Eigen::SparseMatrix<Scalar> out(m.rows(), m.cols());
  out.setFromTriplets(entries.begin(), entries.end());  // repeated positions are summed
  return out;
}

/// The first non-finite stored entry in column-major order (as the dense checks name it):
/// "<what> entry (i, j) is NaN".
template <class Derived>
std::optional<std::string> sparse_non_finite_message(const Eigen::SparseMatrixBase<Derived>& m,
                                                     const char* what) {
  if constexpr (std::is_base_of_v<Eigen::SparseCompressedBase<Derived>, Derived>) {
    // Compressed storage: one vectorised pass over the values in the usual, finite case.
    const Derived& d = m.derived();
    if (d.isCompressed() &&
        (d.nonZeros() == 0 ||
         Eigen::Map<const Eigen::Array<typename Derived::Scalar, Eigen::Dynamic, 1>>(d.valuePtr(),
                                                                                     d.nonZeros())
             .allFinite()))
      return std::nullopt;
  }
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
  return std::string(what) + " entry (" + std::to_string(first->row) + ", " +
         std::to_string(first->col) + ") is " + describe_non_finite(bad_value);
}

/// 2-norms of the rows of a sparse matrix and their entry counts, streaming over the storage
/// once; rows whose sum of squares could have over- or underflowed are summed again with a
/// scale (as stableNorm does).
template <class Derived>
void sparse_row_norms(const Derived& m, std::vector<double>& norms,
                      std::vector<sparse_index>& counts) {
  using std::abs;
  Eigen::internal::evaluator<Derived> ev(m);
  using iterator = typename Eigen::internal::evaluator<Derived>::InnerIterator;
  const std::size_t rows = std::size_t(m.rows());
  norms.assign(rows, 0.0);
  counts.assign(rows, 0);
  for (Index j = 0; j < m.outerSize(); ++j)
    for (iterator it(ev, j); it; ++it) {
      const double x = double(it.value());
      norms[it.row()] += x * x;
      ++counts[it.row()];
    }
  constexpr double safe_low = 1e-280, safe_high = 1e280;  // squares stay normal doubles
  const auto unsafe = [&](std::size_t i) {
    return counts[i] > 0 && !(norms[i] >= safe_low && norms[i] <= safe_high);
  };
  bool rescale = false;
  for (std::size_t i = 0; i < rows && !rescale; ++i) rescale = unsafe(i);
  if (rescale) {
    std::vector<double> big(rows, 0.0), scaled(rows, 0.0);
    for (Index j = 0; j < m.outerSize(); ++j)
      for (iterator it(ev, j); it; ++it)
        big[it.row()] = std::max(big[it.row()], abs(double(it.value())));
    for (Index j = 0; j < m.outerSize(); ++j)
      for (iterator it(ev, j); it; ++it)
        if (big[it.row()] > 0) {
          const double x = double(it.value()) / big[it.row()];
          scaled[it.row()] += x * x;
        }
    for (std::size_t i = 0; i < rows; ++i)
      norms[i] = unsafe(i) ? big[i] * std::sqrt(scaled[i]) : std::sqrt(norms[i]);
  } else {
    for (double& x : norms) x = std::sqrt(x);
  }
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
/// `image`, when given, receives X v for the vector v of Hager's iterations that gave the
/// largest ||X v||_1 (v = e_j, or the start (1, ..., 1) / r): a good start for a power step.
inline double inverse_one_norm_estimate(const upper_triangle& t, bool transposed,
                                        std::vector<double>* image = nullptr) {
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
  if (image) *image = y;
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
    if (image) *image = y;
  }
  for (Index c = 0; c < r; ++c)
    y[c] = (c % 2 ? -1.0 : 1.0) * (1.0 + (r > 1 ? double(c) / double(r - 1) : 0.0));
  apply(y, false);
  return std::max(est, 2 * one_norm(y) / (3 * double(r)));
}

/// Estimate of ||R^{-1}||_2 from y = R^{-1} v (image of inverse_one_norm_estimate): one power
/// step, ||R^{-T} y||_2 / ||y||_2, which lies between ||y||_2 / ||v||_2 and ||R^{-1}||_2 (Cauchy-
/// Schwarz), so it never exceeds the true norm. y is overwritten.
inline double inverse_two_norm_estimate(const upper_triangle& t, std::vector<double>& y) {
  double yn = 0;
  for (double a : y) yn += a * a;
  yn = std::sqrt(yn);
  if (!(yn > 0) || !std::isfinite(yn)) return 0;
  t.solve_transposed(y.data());
  double wn = 0;
  for (double a : y) wn += a * a;
  return std::sqrt(wn) / yn;
}

/// Power-iteration estimate of ||A||_2 for a sparse A (never above the true norm).
template <class Scalar>
Scalar sparse_two_norm_estimate(const sparse_columns<Scalar>& a, int iterations) {
  if (a.rows() == 0 || a.cols() == 0) return Scalar(0);
  vector<Scalar> v(a.cols()), w(a.rows());
  for (Index i = 0; i < v.size(); ++i) v(i) = Scalar(1) + Scalar(i % 7) / Scalar(7);
  Scalar estimate(0);
  for (int k = 0; k < iterations; ++k) {
    const Scalar vn = v.norm();
    if (!(vn > Scalar(0))) break;
    v /= vn;
    w.noalias() = a * v;
    estimate = w.norm();
    v.noalias() = a.transpose() * w;
  }
  return estimate;
}

#if defined(QUALIFY_WITH_SPQR)
/// SPQR's rank-revealing QR of A (n x k, compressed, column-major, sorted) with its
/// fill-reducing column ordering: A E = Q R, R = [R11 R12] of r rows, the columns SPQR found
/// dead (Heath's method: remaining 2-norm <= tol when reached) last in E. Q is not kept.
class spqr_factor {
 public:
  spqr_factor(const sparse_columns<double>& a, double tol, int ordering = SPQR_ORDERING_DEFAULT)
      : k_(a.cols()) {
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
#if QUALIFY_HAS_EXCEPTIONS
      throw std::bad_alloc();  // resource exhaustion is the one condition that throws
#endif
      // Without exceptions ok() is now false, and the caller takes its fallback.
    }
  }
  spqr_factor(const spqr_factor&) = delete;
  spqr_factor& operator=(const spqr_factor&) = delete;
  ~spqr_factor() { release(); }

  bool ok() const { return rank_ >= 0 && r_ != nullptr; }
  Index rank() const { return Index(rank_); }
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
  Index k_ = 0;
  cholmod_common cc_{};
  cholmod_sparse* r_ = nullptr;
  SuiteSparse_long* e_ = nullptr;
  SuiteSparse_long rank_ = -1;
  bool finished_ = false;
};
#endif

}  // namespace detail
}  // namespace qualify
