// qualify tests: seeded sparse Jacobians (random with planted dependencies, banded optimal
// control with a redundant constraint), shared by the sparse tests and the sparse benchmark.
// SPDX-License-Identifier: MIT
#pragma once

#include <Eigen/Dense>
#include <Eigen/SparseCore>
#include <qualify/mps.hpp>
#include <random>
#include <string>
#include <vector>

namespace qualify_test {

/// A random sparse m x n Jacobian with `density` and planted dependencies: rows that are
/// combinations of two others, duplicates, opposed and parallel copies, a zero row.
inline Eigen::SparseMatrix<double> random_sparse(Eigen::Index m, Eigen::Index n, double density,
                                                 int planted, std::mt19937& rng) {
  using Eigen::Index;
  std::uniform_real_distribution<double> unit(0, 1), value(-2, 2);
  Eigen::MatrixXd a = Eigen::MatrixXd::Zero(m, n);
  for (Index i = 0; i < m; ++i) {
    for (Index c = 0; c < n; ++c)
      if (unit(rng) < density) a(i, c) = value(rng);
    if (a.row(i).squaredNorm() == 0) a(i, Index(unit(rng) * double(n)) % n) = 1;
  }
  std::uniform_int_distribution<Index> pick(0, m - 1);
  for (int p = 0; p < planted; ++p) {
    const Index target = pick(rng), x = pick(rng), y = pick(rng);
    if (target == x || target == y) continue;
    switch (p % 5) {
      case 0:
        a.row(target) = 2 * a.row(x) - 0.5 * a.row(y);
        break;
      case 1:
        a.row(target) = a.row(x);
        break;
      case 2:
        a.row(target) = -3 * a.row(x);
        break;
      case 3:
        a.row(target) = 1e6 * a.row(x);
        break;
      default:
        a.row(target).setZero();
    }
  }
  return a.sparseView();
}

/// The Jacobian of a discretised optimal-control problem: states x_0..x_N (nx each), controls
/// u_0..u_{N-1} (nu each), variables ordered x_0, u_0, x_1, u_1, ..., x_N. Rows: the initial
/// condition x_0 = given (nx rows), then the dynamics x_{k+1} - A_k x_k - B_k u_k = 0 of each
/// stage (nx rows coupling stage k and k + 1, 1 + nx + nu entries each), A_k and B_k random.
/// plant_redundant_row adds a path constraint that restates the dynamics of one stage.
struct control_jacobian {
  std::vector<Eigen::Triplet<double>> entries;
  Eigen::Index rows = 0, cols = 0, nx = 0, nu = 0;
  Eigen::Index planted = -1, planted_stage = -1, source_a = -1, source_b = -1;

  Eigen::Index dynamics_row(Eigen::Index stage, Eigen::Index i) const {
    return nx + stage * nx + i;
  }
  template <int Options = Eigen::ColMajor>
  Eigen::SparseMatrix<double, Options> matrix() const {
    Eigen::SparseMatrix<double, Options> j(rows, cols);
    j.setFromTriplets(entries.begin(), entries.end());
    return j;
  }
};

inline control_jacobian banded_control(Eigen::Index stages, Eigen::Index nx, Eigen::Index nu,
                                       std::mt19937& rng) {
  using Eigen::Index;
  std::uniform_real_distribution<double> value(-1, 1);
  control_jacobian out;
  out.nx = nx;
  out.nu = nu;
  const Index stride = nx + nu;
  out.cols = stages * stride + nx;
  out.rows = nx + stages * nx;
  out.entries.reserve(std::size_t(out.rows * (1 + stride) + 2 * (1 + stride)));
  for (Index i = 0; i < nx; ++i) out.entries.emplace_back(i, i, 1.0);
  for (Index k = 0; k < stages; ++k)
    for (Index i = 0; i < nx; ++i) {
      const Index row = out.dynamics_row(k, i);
      out.entries.emplace_back(row, (k + 1) * stride + i, 1.0);
      for (Index c = 0; c < nx; ++c) out.entries.emplace_back(row, k * stride + c, value(rng));
      for (Index c = 0; c < nu; ++c) out.entries.emplace_back(row, k * stride + nx + c, value(rng));
    }
  return out;
}

/// Appends the row 2 * (dynamics row 1 of stage k) - 0.5 * (dynamics row nx - 1 of stage k)
/// for a random stage k (nx >= 2): a constraint that is redundant by construction.
inline void plant_redundant_row(control_jacobian& oc, std::mt19937& rng) {
  using Eigen::Index;
  const Index stages = (oc.rows - oc.nx) / oc.nx;
  oc.planted_stage = std::uniform_int_distribution<Index>(0, stages - 1)(rng);
  oc.source_a = oc.dynamics_row(oc.planted_stage, 1);
  oc.source_b = oc.dynamics_row(oc.planted_stage, oc.nx - 1);
  oc.planted = oc.rows++;
  std::vector<Eigen::Triplet<double>> extra;
  for (const auto& e : oc.entries) {
    if (e.row() == oc.source_a) extra.emplace_back(oc.planted, e.col(), 2 * e.value());
    if (e.row() == oc.source_b) extra.emplace_back(oc.planted, e.col(), -0.5 * e.value());
  }
  oc.entries.insert(oc.entries.end(), extra.begin(), extra.end());
}

/// The equality rows of an LP model (row_lower == row_upper), with their names.
struct equality_block {
  Eigen::SparseMatrix<double> matrix;
  std::vector<std::string> labels;
};

inline equality_block equality_rows(const qualify::mps_model& model) {
  using Eigen::Index;
  std::vector<Index> position(std::size_t(model.matrix.rows()), -1);
  equality_block out;
  for (Index i = 0; i < model.matrix.rows(); ++i)
    if (model.row_lower(i) == model.row_upper(i)) {
      position[i] = Index(out.labels.size());
      out.labels.push_back(model.row_names[i]);
    }
  std::vector<Eigen::Triplet<double>> entries;
  for (Index c = 0; c < model.matrix.outerSize(); ++c)
    for (Eigen::SparseMatrix<double>::InnerIterator it(model.matrix, c); it; ++it)
      if (position[it.row()] >= 0) entries.emplace_back(position[it.row()], c, it.value());
  out.matrix.resize(Index(out.labels.size()), model.matrix.cols());
  out.matrix.setFromTriplets(entries.begin(), entries.end());
  return out;
}

}  // namespace qualify_test
