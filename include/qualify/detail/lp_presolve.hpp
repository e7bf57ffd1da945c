// qualify: the LP engine's light presolve (empty, singleton, fixed) and Ruiz scaling.
// SPDX-License-Identifier: MIT
#pragma once

#include <qualify/report.hpp>

#include <Eigen/Core>
#include <Eigen/SparseCore>
#include <algorithm>
#include <cmath>
#include <limits>
#include <optional>
#include <string>
#include <vector>

namespace qualify::detail {

using lp_sparse = Eigen::SparseMatrix<double, Eigen::ColMajor, Eigen::Index>;

/// An LP in the general form the engine works on:
/// minimise c^T x + c0 s.t. row_lower <= A x <= row_upper, col_lower <= x <= col_upper.
struct lp_general {
  lp_sparse A;
  Eigen::VectorXd c;
  double c0 = 0.0;
  Eigen::VectorXd row_lower, row_upper, col_lower, col_upper;
};

/// What presolve removed and how to put it back.
struct lp_presolve_map {
  Eigen::Index rows = 0, cols = 0;      // of the original problem
  std::vector<Eigen::Index> live_rows;  // reduced row -> original row
  std::vector<Eigen::Index> live_cols;  // reduced column -> original column
  Eigen::VectorXd fixed_value;          // value of each original column removed as fixed
  std::vector<bool> col_removed;
  // The singleton row whose bound became the column's lower / upper bound.
  std::vector<std::optional<Eigen::Index>> lower_source, upper_source;
  // Singleton rows in the order presolve removed them: (row, its column).
  std::vector<std::pair<Eigen::Index, Eigen::Index>> singleton_order;
  Eigen::Index empty_rows = 0, singleton_rows = 0, fixed_cols = 0, empty_cols = 0;
  // Set when presolve alone proves infeasibility: the row whose bounds cannot be met, and
  // the rows (with weights) of a Farkas combination that proves it, to be checked.
  std::optional<Eigen::Index> infeasible_row;
  std::string infeasible_reason;
  std::vector<std::pair<Eigen::Index, double>> infeasible_weights;
};

struct lp_presolved {
  lp_general reduced;
  lp_presolve_map map;
};

/// Removes empty rows, turns singleton rows into column bounds, removes fixed columns
/// and empty columns whose best bound is finite. `tolerance` is absolute on the
/// (unscaled) bounds: a row is consistent when row_lower - tol*(1+|row_lower|) <= 0 <= ...
inline lp_presolved presolve(const lp_general& p, double tolerance) {
  using Eigen::Index;
  const Index m = p.A.rows(), n = p.A.cols();
  lp_presolved out;
  auto& map = out.map;
  map.rows = m;
  map.cols = n;
  map.fixed_value = Eigen::VectorXd::Zero(n);
  map.col_removed.assign(static_cast<std::size_t>(n), false);
  map.lower_source.assign(static_cast<std::size_t>(n), std::nullopt);
  map.upper_source.assign(static_cast<std::size_t>(n), std::nullopt);

  Eigen::VectorXd rl = p.row_lower, ru = p.row_upper, cl = p.col_lower, cu = p.col_upper;
  std::vector<bool> row_removed(static_cast<std::size_t>(m), false);
  const lp_sparse At = p.A.transpose();  // row access
  std::vector<Index> row_count(static_cast<std::size_t>(m), 0),
      col_count(static_cast<std::size_t>(n), 0);
  for (Index j = 0; j < n; ++j)
    for (lp_sparse::InnerIterator it(p.A, j); it; ++it)
      if (it.value() != 0.0) {
        ++row_count[static_cast<std::size_t>(it.row())];
        ++col_count[static_cast<std::size_t>(j)];
      }
  auto slack = [&](double bound) { return tolerance * (1.0 + std::abs(bound)); };

  auto remove_col = [&](Index j, double value) {
    map.col_removed[static_cast<std::size_t>(j)] = true;
    map.fixed_value[j] = value;
    out.reduced.c0 += p.c[j] * value;
    for (lp_sparse::InnerIterator it(p.A, j); it; ++it) {
      auto i = static_cast<std::size_t>(it.row());
      if (row_removed[i] || it.value() == 0.0) continue;
      rl[it.row()] -= it.value() * value;
      ru[it.row()] -= it.value() * value;
      --row_count[i];
    }
  };

  bool changed = true;
  while (changed && !map.infeasible_row) {
    changed = false;
    for (Index j = 0; j < n; ++j) {
      auto jj = static_cast<std::size_t>(j);
      if (map.col_removed[jj]) continue;
      if (cl[j] == cu[j]) {
        remove_col(j, cl[j]);
        ++map.fixed_cols;
        changed = true;
      } else if (col_count[jj] == 0) {
        // The best bound for c_j x_j; an unbounded direction is left to the solver,
        // which can prove it.
        double value;
        if (p.c[j] > 0)
          value = cl[j];
        else if (p.c[j] < 0)
          value = cu[j];
        else
          value = std::clamp(0.0, cl[j], cu[j]);
        if (!std::isfinite(value)) continue;
        remove_col(j, value);
        ++map.empty_cols;
        changed = true;
      }
    }
    for (Index i = 0; i < m && !map.infeasible_row; ++i) {
      auto ii = static_cast<std::size_t>(i);
      if (row_removed[ii] || row_count[ii] > 1) continue;
      if (row_count[ii] == 0) {
        if (rl[i] > slack(rl[i]) || ru[i] < -slack(ru[i])) {
          map.infeasible_row = i;
          map.infeasible_reason =
              "row " + std::to_string(i) +
              " has no free entries and its bounds exclude the value of the fixed ones";
          map.infeasible_weights = {{i, rl[i] > slack(rl[i]) ? 1.0 : -1.0}};
          break;
        }
        row_removed[ii] = true;
        ++map.empty_rows;
        changed = true;
        continue;
      }
      // Singleton row: a x_j in [rl, ru] is a bound on x_j.
      Index j = -1;
      double a = 0.0;
      for (lp_sparse::InnerIterator it(At, i); it;
           ++it)  // column i of A^T: it.row() is a column of A
        if (it.value() != 0.0 && !map.col_removed[static_cast<std::size_t>(it.row())]) {
          j = it.row();
          a = it.value();
        }
      auto jj = static_cast<std::size_t>(j);
      double lo = a > 0 ? rl[i] / a : ru[i] / a;
      double up = a > 0 ? ru[i] / a : rl[i] / a;
      const bool above = lo > cu[j] + slack(cu[j]), below = up < cl[j] - slack(cl[j]);
      if (above || below) {
        // Row i implies x_j >= lo (weight 1/a) above the upper bound of x_j, or x_j <= up
        // (weight -1/a) below its lower bound; when that bound came from an earlier singleton
        // row, that row with the opposite weight cancels x_j from the combination.
        map.infeasible_row = i;
        map.infeasible_reason = "row " + std::to_string(i) + " bounds column " +
                                std::to_string(j) + " to [" + format_figure(lo) + ", " +
                                format_figure(up) + "], outside its bounds [" +
                                format_figure(cl[j]) + ", " + format_figure(cu[j]) + "]";
        const double sign = above ? 1.0 : -1.0;
        map.infeasible_weights = {{i, sign / a}};
        if (const auto& src = above ? map.upper_source[jj] : map.lower_source[jj]) {
          for (lp_sparse::InnerIterator it(At, *src); it; ++it)
            if (it.row() == j) map.infeasible_weights.emplace_back(*src, -sign / it.value());
        }
        break;
      }
      if (lo > cl[j]) {
        cl[j] = std::min(lo, cu[j]);
        map.lower_source[jj] = i;
      }
      if (up < cu[j]) {
        cu[j] = std::max(up, cl[j]);
        map.upper_source[jj] = i;
      }
      row_removed[ii] = true;
      --col_count[jj];
      ++map.singleton_rows;
      map.singleton_order.emplace_back(i, j);
      changed = true;
    }
  }

  for (Index i = 0; i < m; ++i)
    if (!row_removed[static_cast<std::size_t>(i)]) map.live_rows.push_back(i);
  for (Index j = 0; j < n; ++j)
    if (!map.col_removed[static_cast<std::size_t>(j)]) map.live_cols.push_back(j);
  const auto mr = static_cast<Index>(map.live_rows.size());
  const auto nr = static_cast<Index>(map.live_cols.size());
  std::vector<Index> new_row(static_cast<std::size_t>(m), -1);
  for (Index k = 0; k < mr; ++k)
    new_row[static_cast<std::size_t>(map.live_rows[static_cast<std::size_t>(k)])] = k;

  auto& r = out.reduced;
  r.c0 += p.c0;
  r.c.resize(nr);
  r.col_lower.resize(nr);
  r.col_upper.resize(nr);
  r.row_lower.resize(mr);
  r.row_upper.resize(mr);
  std::vector<Eigen::Triplet<double, Index>> t;
  for (Index k = 0; k < nr; ++k) {
    Index j = map.live_cols[static_cast<std::size_t>(k)];
    r.c[k] = p.c[j];
    r.col_lower[k] = cl[j];
    r.col_upper[k] = cu[j];
    for (lp_sparse::InnerIterator it(p.A, j); it; ++it) {
      Index ni = new_row[static_cast<std::size_t>(it.row())];
      if (ni >= 0 && it.value() != 0.0) t.emplace_back(ni, k, it.value());
    }
  }
  for (Index k = 0; k < mr; ++k) {
    Index i = map.live_rows[static_cast<std::size_t>(k)];
    r.row_lower[k] = rl[i];
    r.row_upper[k] = ru[i];
  }
  r.A.resize(mr, nr);
  r.A.setFromTriplets(t.begin(), t.end());
  r.A.makeCompressed();
  return out;
}

/// Row and column scale factors: A_scaled = diag(row) A diag(col).
struct lp_scaling {
  Eigen::VectorXd row, col;
  double cost = 1.0;  // c_scaled = diag(col) c / cost
};

/// Ruiz equilibration (D. Ruiz, "A scaling algorithm to equilibrate both rows and columns
/// norms in matrices", RAL-TR-2001-034): `passes` rounds that divide each row and column
/// by the square root of its largest magnitude. Factors are rounded to powers of two so
/// that scaling introduces no rounding error.
inline lp_scaling ruiz_scale(lp_general& p, int passes) {
  using Eigen::Index;
  const Index m = p.A.rows(), n = p.A.cols();
  lp_scaling s;
  s.row = Eigen::VectorXd::Ones(m);
  s.col = Eigen::VectorXd::Ones(n);
  auto pow2 = [](double v) { return std::exp2(std::round(std::log2(v))); };
  for (int pass = 0; pass < passes; ++pass) {
    Eigen::VectorXd rmax = Eigen::VectorXd::Zero(m), cmax = Eigen::VectorXd::Zero(n);
    for (Index j = 0; j < n; ++j)
      for (lp_sparse::InnerIterator it(p.A, j); it; ++it) {
        double a = std::abs(it.value());
        rmax[it.row()] = std::max(rmax[it.row()], a);
        cmax[j] = std::max(cmax[j], a);
      }
    Eigen::VectorXd rf(m), cf(n);
    for (Index i = 0; i < m; ++i) rf[i] = rmax[i] > 0 ? pow2(1.0 / std::sqrt(rmax[i])) : 1.0;
    for (Index j = 0; j < n; ++j) cf[j] = cmax[j] > 0 ? pow2(1.0 / std::sqrt(cmax[j])) : 1.0;
    if ((rf.array() == 1.0).all() && (cf.array() == 1.0).all()) break;
    p.A = rf.asDiagonal() * p.A * cf.asDiagonal();
    s.row.array() *= rf.array();
    s.col.array() *= cf.array();
  }
  p.row_lower.array() *= s.row.array();
  p.row_upper.array() *= s.row.array();
  p.col_lower.array() /= s.col.array();
  p.col_upper.array() /= s.col.array();
  p.c.array() *= s.col.array();
  double cmax = p.c.size() ? p.c.cwiseAbs().maxCoeff() : 0.0;
  s.cost = cmax > 1.0 ? pow2(cmax) : 1.0;
  p.c /= s.cost;
  p.c0 /= s.cost;
  return s;
}

}  // namespace qualify::detail
