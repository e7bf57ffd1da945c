// qualify: dense linear-algebra kernels shared by the checks (input scan, triangular inverse, norms).
// SPDX-License-Identifier: MIT
#pragma once

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <optional>
#include <string>

namespace qualify::detail {

template <class Scalar>
using matrix = Eigen::Matrix<Scalar, Eigen::Dynamic, Eigen::Dynamic>;
template <class Scalar>
using vector = Eigen::Matrix<Scalar, Eigen::Dynamic, 1>;

/// Position of the first non-finite entry (column-major scan), if any.
struct entry_position {
  Eigen::Index row = 0, col = 0;
};

template <class Derived>
std::optional<entry_position> first_non_finite(const Eigen::MatrixBase<Derived>& m) {
  if (m.allFinite()) return std::nullopt;  // fast vectorised path for the usual case
  for (Eigen::Index j = 0; j < m.cols(); ++j)
    for (Eigen::Index i = 0; i < m.rows(); ++i)
      if (!std::isfinite(static_cast<long double>(m(i, j)))) return entry_position{i, j};
  return std::nullopt;
}

inline std::string describe_non_finite(long double v) {
  return std::isnan(v) ? "NaN" : (v > 0 ? "+Inf" : "-Inf");
}

/// The first row whose 2-norm lies beyond the scalar type's range although its entries are
/// finite (entries near the largest value): its unit gradient and every coefficient on it would
/// overflow. Rows are only scanned when the largest entry times sqrt(cols) could overflow.
template <class Derived>
std::optional<Eigen::Index> first_overflowing_row(const Eigen::MatrixBase<Derived>& m) {
  using Scalar = typename Derived::Scalar;
  using std::sqrt;
  if (m.size() == 0 ||
      m.cwiseAbs().maxCoeff() <= std::numeric_limits<Scalar>::max() / sqrt(Scalar(m.cols())))
    return std::nullopt;
  for (Eigen::Index i = 0; i < m.rows(); ++i) {
    const Eigen::Matrix<Scalar, 1, Eigen::Dynamic> row = m.row(i);
    if (!std::isfinite(static_cast<long double>(row.stableNorm()))) return i;
  }
  return std::nullopt;
}

/// The message for a row found by first_overflowing_row (or its sparse twin).
inline std::string overflowing_row_message(const std::string& name) {
  return name + " has finite entries but a 2-norm beyond the floating-point range; divide it by "
                "a positive constant (a scaled row is the same constraint)";
}

/// dst = src^T, copied in square tiles so that both sides move a cache line at a time (a plain
/// transposed assignment reads one of them with a stride of a whole column).
template <class Scalar>
void transpose_into(const Eigen::Ref<const matrix<Scalar>>& src, matrix<Scalar>& dst) {
  constexpr Eigen::Index tile = 32;
  dst.resize(src.cols(), src.rows());
  for (Eigen::Index j0 = 0; j0 < src.cols(); j0 += tile)
    for (Eigen::Index i0 = 0; i0 < src.rows(); i0 += tile) {
      const Eigen::Index h = std::min(tile, src.rows() - i0), w = std::min(tile, src.cols() - j0);
      dst.block(j0, i0, w, h) = src.block(i0, j0, h, w).transpose();
    }
}

/// Inverts an upper-triangular matrix in place by recursive 2x2 blocking, so that almost
/// all the work runs in triangular-times-dense products at matrix-multiply speed (about n^3/3
/// flops). Entries below the diagonal are left untouched. The caller makes sure the diagonal
/// has no zero.
template <class Scalar>
void invert_upper_in_place(Eigen::Ref<matrix<Scalar>> t) {
  const Eigen::Index n = t.rows();
  constexpr Eigen::Index leaf = 64;
  if (n <= leaf) {
    matrix<Scalar> inverse = matrix<Scalar>::Identity(n, n);
    t.template triangularView<Eigen::Upper>().solveInPlace(inverse);
    t.template triangularView<Eigen::Upper>() = inverse;
    return;
  }
  const Eigen::Index h = n / 2;
  invert_upper_in_place<Scalar>(t.topLeftCorner(h, h));
  invert_upper_in_place<Scalar>(t.bottomRightCorner(n - h, n - h));
  // [A B; 0 C]^{-1} = [A^{-1}  -A^{-1} B C^{-1}; 0  C^{-1}]
  matrix<Scalar> left = t.topLeftCorner(h, h).template triangularView<Eigen::Upper>() *
                        t.topRightCorner(h, n - h);
  t.topRightCorner(h, n - h).noalias() =
      -(left * t.bottomRightCorner(n - h, n - h).template triangularView<Eigen::Upper>());
}

/// Estimate of the 2-norm of an upper-trapezoidal matrix (zeros below the diagonal) by power
/// iteration on M^T M, with triangular products that read half the matrix. It never exceeds
/// the true norm (a Rayleigh quotient), so 1/estimate of an inverse's norm is an upper
/// estimate of the smallest singular value. A handful of steps is enough for an estimate.
template <class Scalar>
Scalar upper_two_norm_estimate(const matrix<Scalar>& m, int iterations = 8) {
  const Eigen::Index n = m.cols();
  if (n == 0 || m.rows() == 0) return Scalar(0);
  // A fixed, uneven start so that no singular vector is missed by symmetry.
  vector<Scalar> v(n);
  for (Eigen::Index i = 0; i < n; ++i) v(i) = Scalar(1) + Scalar(i % 7) / Scalar(7);
  const auto upper = m.template triangularView<Eigen::Upper>();
  Scalar estimate(0);
  for (int k = 0; k < iterations; ++k) {
    const Scalar vn = v.norm();
    if (!(vn > Scalar(0))) break;
    v /= vn;
    const vector<Scalar> w = upper * v;
    estimate = w.norm();
    v.noalias() = upper.transpose() * w;
  }
  return estimate;
}

}  // namespace qualify::detail
