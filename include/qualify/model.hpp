// qualify: a model evaluated at one point, the common input of the point checks (KKT and the
// derivative-free parts of the others). Callback models are evaluated into this form.
// SPDX-License-Identifier: MIT
#pragma once

#include <qualify/constraints.hpp>

#include <optional>
#include <string>
#include <vector>

namespace qualify {

/// f, g_i <= 0 and h_j = 0 at x: values, first derivatives and, where known, second
/// derivatives. Row i of `jacobian` is the gradient of constraint i; `types`, `kinds`,
/// `labels` (may be empty) and `hessians` (empty, or one optional entry per constraint) are
/// indexed the same way. Nothing here is validated on construction: every check validates it
/// and answers `invalid_input` naming the field.
struct model_at_point {
  Eigen::VectorXd x;
  Eigen::VectorXd objective_gradient;
  std::optional<Eigen::MatrixXd> objective_hessian;
  Eigen::VectorXd values;
  Eigen::MatrixXd jacobian;
  std::vector<constraint_type> types;
  std::vector<constraint_kind> kinds;
  std::vector<std::string> labels;
  std::vector<std::optional<Eigen::MatrixXd>> hessians;
  /// The modeller's claim that f and every inequality are convex and every equality affine.
  bool convex_model = false;
};

}  // namespace qualify
