// qualify tests: the MFCQ LP's value t* by GLPK's simplex, an LP code independent of ours.
// SPDX-License-Identifier: MIT
#pragma once

#include <Eigen/Dense>
#include <Eigen/SparseCore>
#include <glpk.h>

#include <cmath>
#include <limits>
#include <vector>

namespace qualify_test {

using sparse_rows = Eigen::SparseMatrix<double, Eigen::RowMajor>;

/// Each row divided by its 2-norm (zero rows stay zero), for sparse rows.
inline sparse_rows normalise_rows(const sparse_rows& a) {
  sparse_rows out = a;
  for (Eigen::Index i = 0; i < a.rows(); ++i)
    if (a.row(i).norm() > 0) out.row(i) /= a.row(i).norm();
  return out;
}

/// t* of max t s.t. A_unit d + t 1 <= 0, E_unit d = 0, -1 <= d <= 1, t <= 1 (DESIGN.md,
/// section 2) by GLPK's simplex (Debian's libglpk), an independent LP code.
inline double glpk_margin(const sparse_rows& a, const sparse_rows& e) {
  const sparse_rows au = normalise_rows(a), eu = normalise_rows(e);
  const int ma = int(a.rows()), me = int(e.rows()), n = int(a.cols());
  glp_prob* lp = glp_create_prob();
  glp_set_obj_dir(lp, GLP_MAX);
  glp_add_rows(lp, ma + me);
  glp_add_cols(lp, n + 1);
  for (int i = 0; i < ma; ++i) glp_set_row_bnds(lp, i + 1, GLP_UP, 0, 0);
  for (int j = 0; j < me; ++j) glp_set_row_bnds(lp, ma + j + 1, GLP_FX, 0, 0);
  for (int k = 0; k < n; ++k) glp_set_col_bnds(lp, k + 1, GLP_DB, -1, 1);
  glp_set_col_bnds(lp, n + 1, GLP_UP, 0, 1);
  glp_set_obj_coef(lp, n + 1, 1);
  std::vector<int> ia{0}, ja{0};
  std::vector<double> ar{0};
  const auto put = [&](int row, int col, double v) {
    if (v == 0) return;
    ia.push_back(row);
    ja.push_back(col);
    ar.push_back(v);
  };
  for (int i = 0; i < ma; ++i) {
    for (sparse_rows::InnerIterator it(au, i); it; ++it) put(i + 1, int(it.col()) + 1, it.value());
    put(i + 1, n + 1, 1);
  }
  for (int j = 0; j < me; ++j)
    for (sparse_rows::InnerIterator it(eu, j); it; ++it)
      put(ma + j + 1, int(it.col()) + 1, it.value());
  glp_load_matrix(lp, int(ar.size()) - 1, ia.data(), ja.data(), ar.data());
  glp_smcp parm;
  glp_init_smcp(&parm);
  parm.msg_lev = GLP_MSG_OFF;
  glp_simplex(lp, &parm);
  const double t = glp_get_status(lp) == GLP_OPT ? glp_get_obj_val(lp)
                                                 : std::numeric_limits<double>::quiet_NaN();
  glp_delete_prob(lp);
  return t;
}

inline double glpk_margin(const Eigen::MatrixXd& a, const Eigen::MatrixXd& e) {
  return glpk_margin(sparse_rows(a.sparseView(0.0, 0.0)), sparse_rows(e.sparseView(0.0, 0.0)));
}

/// The residual of an MFCQ certificate as mfcq_certificate documents it, recomputed on the data
/// (dense or sparse): ||A^T lambda + E^T mu||_2 / (sum lambda_i ||a_i|| + sum |mu_j| ||e_j||),
/// 0 when that size is 0 (zero gradients depend on nothing).
template <class Matrix>
double certificate_residual(const Matrix& a, const Matrix& e, const Eigen::VectorXd& lambda,
                            const Eigen::VectorXd& mu) {
  const Eigen::VectorXd sum = a.transpose() * lambda + e.transpose() * mu;
  double size = 0;
  for (Eigen::Index i = 0; i < a.rows(); ++i) size += lambda(i) * a.row(i).norm();
  for (Eigen::Index j = 0; j < e.rows(); ++j) size += std::abs(mu(j)) * e.row(j).norm();
  return size > 0 ? sum.norm() / size : 0.0;
}

}  // namespace qualify_test
