// qualify demo: an orchard irrigation plan whose model has a duplicated constraint and a
// constraint declared affine that is not. Invented scenario; every number is made up.
// SPDX-License-Identifier: MIT
#include <qualify/format.hpp>
#include <qualify/json.hpp>
#include <qualify/qualify.hpp>

#include <fmt/core.h>

// Variables: water (m^3/day) to the apple, pear and plum blocks, and pump hours per day.
// Constraints, all written g(x) <= 0:
//   reservoir      apple + pear + plum - 90              <= 0   affine
//   pump           apple + pear + plum - 9 * hours       <= 0   affine
//   reservoir_b    the reservoir row again, imported from the second site's spreadsheet
//   evaporation    0.2 * plum + 0.05 * hours^2 - 11      <= 0   declared affine: it is not
//   pear_minimum   20 - pear                             <= 0   affine
namespace {

using Eigen::MatrixXd;
using Eigen::VectorXd;
const std::vector<std::string> labels{"reservoir", "pump", "reservoir_b", "evaporation",
                                      "pear_minimum"};

VectorXd values(const VectorXd& x) {
  VectorXd g(5);
  const double total = x(0) + x(1) + x(2);
  g << total - 90, total - 9 * x(3), total - 90, 0.2 * x(2) + 0.05 * x(3) * x(3) - 11, 20 - x(1);
  return g;
}

MatrixXd jacobian(const VectorXd& x) {
  MatrixXd j(5, 4);
  j << 1, 1, 1, 0,  //
      1, 1, 1, -9,  //
      1, 1, 1, 0,   //
      0, 0, 0.2, 0.1 * x(3),  //
      0, -1, 0, 0;
  return j;
}

}  // namespace

int main() {
  using namespace qualify;
  // A plan the optimizer returned: the reservoir is exhausted and the pump runs 10 hours.
  VectorXd plan(4);
  plan << 35, 25, 30, 10;
  const std::vector<constraint_type> types(5, constraint_type::inequality);
  const std::vector<constraint_kind> kinds(5, constraint_kind::affine);  // as the modeller declared

  const auto cq = check_qualifications(jacobian(plan), values(plan), types, kinds, {}, labels);
  fmt::print("== Constraint qualifications at the returned plan ==\n{:f}\n", cq);

  // The modeller's declarations are worth checking: sample a second plan and compare.
  VectorXd other(4);
  other << 20, 30, 10, 6;
  const std::vector<point_sample<double>> samples{{plan, values(plan), jacobian(plan)},
                                                  {other, values(other), jacobian(other)}};
  const auto affine = check_declared_affine(kinds, samples, {}, labels);
  fmt::print("== Are the declared-affine constraints affine? ==\n{:f}\n", affine);

  // With the declaration corrected, the linear CQ no longer covers the active set.
  std::vector<constraint_kind> corrected = kinds;
  for (Index row : affine.not_affine_rows) corrected[row] = constraint_kind::nonlinear;
  const auto lcq = check_linear_cq(corrected, cq.licq.active->active, labels);
  fmt::print("== Linear CQ with the corrected declaration ==\n{:f}\n", lcq);

  fmt::print("== One-line forms, for a log ==\n{}\n{}\n\n", cq.licq, affine);
  fmt::print("== LICQ as JSON ==\n{}\n", to_json(cq.licq));
  return cq.licq.result == verdict::fails && affine.result == verdict::fails &&
                 lcq.result == verdict::fails
             ? 0
             : 1;
}
