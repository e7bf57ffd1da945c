// qualify fuzzing: fuzzer bytes decoded into sizes, hostile numbers and structured matrices,
// and the independent checks the targets assert with.
// SPDX-License-Identifier: MIT
#pragma once

#include <Eigen/Dense>
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <cstring>
#include <limits>

namespace qualify_fuzz {

using Index = Eigen::Index;

/// A violated invariant: say which, then trap so that libFuzzer keeps the input.
#define QUALIFY_FUZZ_ASSERT(condition)                                                       \
  do {                                                                                      \
    if (!(condition)) {                                                                     \
      std::fprintf(stderr, "fuzz invariant violated: %s (%s:%d)\n", #condition, __FILE__,    \
                   __LINE__);                                                               \
      __builtin_trap();                                                                     \
    }                                                                                       \
  } while (0)

/// Reads the fuzzer's bytes front to back; past the end every read gives zeros, so that any
/// input decodes to something.
class byte_source {
 public:
  byte_source(const std::uint8_t* data, std::size_t size) : data_(data), size_(size) {}

  std::uint8_t byte() { return pos_ < size_ ? data_[pos_++] : 0; }
  bool flag() { return byte() & 1; }
  /// 0..limit.
  Index size(Index limit) { return Index(byte()) % (limit + 1); }
  bool empty() const { return pos_ >= size_; }

  /// A number drawn mostly from small integers and simple fractions (so that dependent and
  /// parallel rows arise), with NaN, +-Inf, denormals, 1e300, 1e-300, extremes and raw bit
  /// patterns mixed in.
  double number() {
    const std::uint8_t kind = byte();
    const double sign = (kind & 0x80) ? -1.0 : 1.0;
    const double small = double(byte() % 16);
    switch (kind & 0x1f) {
      case 0:
        return std::numeric_limits<double>::quiet_NaN();
      case 1:
        return sign * std::numeric_limits<double>::infinity();
      case 2:
        return sign * std::numeric_limits<double>::denorm_min() * (1 + small);
      case 3:
        return sign * 1e300 * (1 + small);
      case 4:
        return sign * 1e-300 * (1 + small);
      case 5:
        return sign * std::numeric_limits<double>::max() / (1 + small);
      case 6:
        return sign * std::numeric_limits<double>::min() * (1 + small);  // smallest normal
      case 7: {
        std::uint64_t bits = 0;
        for (int k = 0; k < 8; ++k) bits = bits << 8 | byte();
        double v;
        std::memcpy(&v, &bits, sizeof v);
        return v;
      }
      case 8:
      case 9:
      case 10:
        return 0.0;
      case 11:
        return sign * small / 8;
      case 12:
        return sign * (1 + small * 1e-9);  // nearly equal entries: nearly dependent rows
      default:
        return sign * small;
    }
  }

  /// A rows x cols matrix of numbers, then a few structural edits: copies of rows (exact
  /// duplicates), negated or scaled copies, zero rows, sums of two rows.
  Eigen::MatrixXd matrix(Index rows, Index cols) {
    Eigen::MatrixXd m(rows, cols);
    for (Index i = 0; i < rows; ++i)
      for (Index j = 0; j < cols; ++j) m(i, j) = number();
    if (rows == 0 || cols == 0) return m;  // (row(i) of an empty row offsets a null pointer)
    const int edits = byte() % 4;
    for (int e = 0; e < edits; ++e) {
      const std::uint8_t op = byte();
      const Index to = Index(byte()) % rows, from = Index(byte()) % rows,
                  other = Index(byte()) % rows;
      switch (op % 5) {
        case 0:
          m.row(to) = m.row(from);
          break;
        case 1:
          m.row(to) = -m.row(from);
          break;
        case 2:
          m.row(to) = number() * m.row(from);
          break;
        case 3:
          m.row(to).setZero();
          break;
        default:
          m.row(to) = m.row(from) + m.row(other);
      }
    }
    return m;
  }

  Eigen::VectorXd vector(Index size) {
    Eigen::VectorXd v(size);
    for (Index i = 0; i < size; ++i) v(i) = number();
    return v;
  }

 private:
  const std::uint8_t* data_;
  std::size_t size_;
  std::size_t pos_ = 0;
};

/// Rows whose 2-norm lies beyond double's range although their entries are finite: the LICQ
/// and MFCQ checks refuse them (row_norm_overflow). Norms in long double; `borderline` when a
/// norm is within rounding of the largest double, where either answer is right.
struct norm_overflow {
  bool overflows = false, borderline = false;
};

inline norm_overflow row_norm_overflow(const Eigen::MatrixXd& m) {
  norm_overflow out;
  if (m.cols() == 0) return out;  // (row(i) of an empty row offsets a null pointer)
  const long double top = std::numeric_limits<double>::max();
  for (Index i = 0; i < m.rows(); ++i) {
    const long double norm = m.row(i).cast<long double>().norm();
    if (norm > top * (1 + 1e-13L))
      out.overflows = true;
    else if (norm > top * (1 - 1e-13L))
      out.borderline = true;
  }
  return out;
}

/// Each row divided by its 2-norm (zero rows stay zero), computed without overflow or
/// underflow: the rows every check's thresholds refer to.
inline Eigen::MatrixXd unit_rows(const Eigen::MatrixXd& m) {
  Eigen::MatrixXd u = m;
  for (Index i = 0; i < m.rows(); ++i) {
    const double scale = m.row(i).cwiseAbs().maxCoeff();
    if (!(scale > 0)) continue;
    const Eigen::RowVectorXd scaled = m.row(i) / scale;
    u.row(i) = scaled / scaled.norm();
  }
  return u;
}

/// Singular values of the unit rows by a one-sided Jacobi SVD (independent of the library's
/// QR-based decisions), descending, zero-padded to one per row (more rows than columns give
/// zeros at the end).
inline Eigen::VectorXd row_singular_values(const Eigen::MatrixXd& m) {
  Eigen::VectorXd out = Eigen::VectorXd::Zero(m.rows());
  if (m.rows() == 0 || m.cols() == 0) return out;
  Eigen::JacobiSVD<Eigen::MatrixXd> svd(unit_rows(m));
  const Eigen::VectorXd s = svd.singularValues();
  out.head(s.size()) = s;
  return out;
}

/// Counts entries of `s` above `level`.
inline Index count_above(const Eigen::VectorXd& s, double level) {
  return Index((s.array() > level).count());
}

}  // namespace qualify_fuzz
