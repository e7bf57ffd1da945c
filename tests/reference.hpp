// qualify tests: reference figures from LAPACK (through LAPACKE) and seeded random matrices.
// SPDX-License-Identifier: MIT
#pragma once

#include <Eigen/Dense>
#include <lapacke.h>

#include <random>
#include <vector>

namespace qualify_test {

using Eigen::Index;
using Eigen::MatrixXd;
using Eigen::VectorXd;

/// Singular values, largest first, by LAPACK's dgesdd (values only).
inline VectorXd lapack_singular_values(MatrixXd a) {
  const lapack_int m = lapack_int(a.rows()), n = lapack_int(a.cols());
  VectorXd s(std::min(m, n));
  if (s.size() == 0) return s;
  const lapack_int info = LAPACKE_dgesdd(LAPACK_COL_MAJOR, 'N', m, n, a.data(), m, s.data(),
                                         nullptr, 1, nullptr, 1);
  if (info != 0) s.setConstant(std::numeric_limits<double>::quiet_NaN());
  return s;
}

/// Each row divided by its 2-norm (zero rows stay zero).
inline MatrixXd normalise_rows(const MatrixXd& a) {
  MatrixXd out = a;
  for (Index i = 0; i < a.rows(); ++i)
    if (a.row(i).norm() > 0) out.row(i) /= a.row(i).norm();
  return out;
}

/// Numerical rank as LAPACK's SVD sees it on unit rows: singular values above tau.
inline Index lapack_rank_of_unit_rows(const MatrixXd& a, double tau) {
  const VectorXd s = lapack_singular_values(normalise_rows(a));
  return Index((s.array() > tau).count());
}

/// A random matrix with orthogonal factors (QR of Gaussian matrices) and the given singular
/// values, as in Stewart, "The efficient generation of random orthogonal matrices", SIAM J.
/// Numer. Anal. 17, 1980.
inline MatrixXd with_singular_values(Index m, Index n, const VectorXd& sigma, std::mt19937& rng) {
  std::normal_distribution<double> gauss;
  const auto orthogonal = [&](Index k) {
    MatrixXd g(k, k);
    for (Index i = 0; i < g.size(); ++i) g.data()[i] = gauss(rng);
    return MatrixXd(Eigen::HouseholderQR<MatrixXd>(g).householderQ());
  };
  MatrixXd s = MatrixXd::Zero(m, n);
  for (Index i = 0; i < sigma.size(); ++i) s(i, i) = sigma(i);
  return orthogonal(m) * s * orthogonal(n).transpose();
}

inline MatrixXd gaussian(Index m, Index n, std::mt19937& rng) {
  std::normal_distribution<double> gauss;
  MatrixXd g(m, n);
  for (Index i = 0; i < g.size(); ++i) g.data()[i] = gauss(rng);
  return g;
}

}  // namespace qualify_test
