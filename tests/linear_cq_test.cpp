// qualify tests: the linear CQ by declared structure, and the check of affine declarations.
// SPDX-License-Identifier: MIT
#include <doctest/doctest.h>
#include <qualify/doctest.hpp>
#include <qualify/linear_cq.hpp>

using namespace qualify;
using Eigen::MatrixXd;
using Eigen::VectorXd;

namespace {
const auto affine = constraint_kind::affine;
const auto nonlinear = constraint_kind::nonlinear;
const auto ineq = constraint_type::inequality;

point_sample<double> sample(std::initializer_list<double> x, std::initializer_list<double> g,
                            const MatrixXd& jac) {
  point_sample<double> p;
  p.x = Eigen::Map<const VectorXd>(x.begin(), Index(x.size()));
  p.values = Eigen::Map<const VectorXd>(g.begin(), Index(g.size()));
  p.jacobian = jac;
  return p;
}
}  // namespace

TEST_CASE("a degenerate vertex of linear constraints: LICQ fails, the linear CQ holds") {
  // Three lines through the origin of the plane: -x1 <= 0, -x2 <= 0, -x1 - x2 <= 0. With all
  // active constraints affine the tangent cone equals the linearised cone (Nocedal and
  // Wright, Numerical Optimization, 2nd ed., 2006, Lemma 12.2; from memory), so KKT conditions
  // are necessary although LICQ fails.
  MatrixXd j(3, 2);
  j << -1, 0, 0, -1, -1, -1;
  const auto rep = check_qualifications(j, VectorXd::Zero(3), {ineq, ineq, ineq},
                                        {affine, affine, affine}, {}, {"x1_min", "x2_min", "sum_min"});
  QUALIFY_CHECK_FAILS(rep.licq);
  QUALIFY_CHECK_HOLDS(rep.linear_cq);
  CHECK(rep.linear_cq.checked_rows == std::vector<Index>{0, 1, 2});
}

TEST_CASE("the Kuhn-Tucker cusp is not covered by the linear CQ") {
  // Kuhn and Tucker, "Nonlinear programming" (1951): x2 - (1 - x1)^3 <= 0 is nonlinear.
  MatrixXd j(2, 2);
  j << 0, 1, 0, -1;
  const auto rep = check_qualifications(j, VectorXd::Zero(2), {ineq, ineq}, {nonlinear, affine});
  QUALIFY_CHECK_FAILS(rep.licq);
  QUALIFY_CHECK_FAILS(rep.linear_cq);
  CHECK(rep.linear_cq.non_affine_rows == std::vector<Index>{0});
  CHECK(rep.linear_cq.findings.at(0).code == "not_declared_affine");
}

TEST_CASE("only active rows matter to the linear CQ") {
  const std::vector<constraint_kind> kinds{affine, nonlinear, affine};
  QUALIFY_CHECK_HOLDS(check_linear_cq(kinds, std::vector<Index>{0, 2}));
  QUALIFY_CHECK_FAILS(check_linear_cq(kinds));
  QUALIFY_CHECK_HOLDS(check_linear_cq(kinds, std::vector<Index>{}));  // nothing active
}

TEST_CASE("linear CQ bad input") {
  const std::vector<constraint_kind> kinds{affine, affine};
  CHECK(check_linear_cq(kinds, std::vector<Index>{2}).findings.at(0).code == "row_out_of_range");
  CHECK(check_linear_cq(kinds, std::vector<Index>{-1}).result == verdict::invalid_input);
  CHECK(check_linear_cq(kinds, {"one"}).findings.at(0).code == "label_count");
  const auto mismatched = check_qualifications(MatrixXd::Identity(2, 2), VectorXd::Zero(2),
                                               {ineq, ineq}, {affine});
  CHECK(mismatched.linear_cq.findings.at(0).code == "kind_count");
  const auto bad_jacobian = check_qualifications(MatrixXd(2, 0), VectorXd::Zero(2), {ineq, ineq},
                                                 {affine, affine});
  CHECK(bad_jacobian.licq.result == verdict::invalid_input);
  CHECK(bad_jacobian.linear_cq.result == verdict::invalid_input);
  const linear_cq_report untouched;
  CHECK(untouched.message == "check_linear_cq was not called");
}

TEST_CASE("a declared-affine quadratic is caught, exact affine rows pass") {
  // Rows: g0 = 2 x1 - x2 + 1 (affine), g1 = x1^2 (declared affine: wrong). Figures below are
  // hand-computed from the definitions in affine_check_options.
  const auto jac = [](double x1) {
    MatrixXd j(2, 2);
    j << 2, -1, 2 * x1, 0;
    return j;
  };
  const std::vector<point_sample<double>> samples{sample({1, 0}, {3, 1}, jac(1)),
                                                  sample({2, 5}, {0, 4}, jac(2))};
  const auto rep = check_declared_affine({affine, affine}, samples, {}, {"line", "square"});
  QUALIFY_CHECK_FAILS(rep);
  CHECK(rep.not_affine_rows == std::vector<Index>{1});
  CHECK(rep.deviation.at(0) == 0.0);
  // gradient (2, 0) -> (4, 0): change 2 over scale 4 = 0.5; value: 4 - 1 - 2 = 1 over
  // max(1, 4, 2 * sqrt(26)) = 10.2: 0.098. The worst is 0.5.
  CHECK(rep.deviation.at(1) == doctest::Approx(0.5));
  CHECK(rep.findings.at(0).labels == std::vector<std::string>{"square"});
}

TEST_CASE("equal gradients at two points do not hide a cubic: values are checked too") {
  // g = x^3 has derivative 3 at x = -1 and x = 1; its values -1 and 1 do not follow the
  // gradient: predicted -1 + 3 * 2 = 5, found 1, off by 4 over max(1, 1, 6) = 6.
  MatrixXd d(1, 1);
  d << 3;
  const std::vector<point_sample<double>> samples{sample({-1}, {-1}, d), sample({1}, {1}, d)};
  const auto rep = check_declared_affine({affine}, samples);
  QUALIFY_CHECK_FAILS(rep);
  CHECK(rep.deviation.at(0) == doctest::Approx(4.0 / 6.0));
}

TEST_CASE("declared-affine check: bad input") {
  MatrixXd j = MatrixXd::Identity(2, 2);
  const auto good = sample({0, 0}, {0, 0}, j);
  CHECK(check_declared_affine({affine, affine}, std::vector<point_sample<double>>{good})
            .findings.at(0)
            .code == "too_few_samples");
  auto short_x = sample({0}, {0, 0}, j);
  CHECK(check_declared_affine({affine, affine}, std::vector{good, short_x}).findings.at(0).code ==
        "dimension_mismatch");
  auto nan = good;
  nan.values(1) = std::numeric_limits<double>::quiet_NaN();
  const auto rep = check_declared_affine({affine, affine}, std::vector{good, nan});
  CHECK(rep.result == verdict::invalid_input);
  CHECK(rep.message.find("sample 1: value entry (1, 0) is NaN") != std::string::npos);
  affine_check_options options;
  options.tolerance = -1;
  CHECK(check_declared_affine({affine, affine}, std::vector{good, good}, options)
            .findings.at(0)
            .code == "bad_option");
  CHECK(check_declared_affine({affine}, std::vector{good, good}).result == verdict::invalid_input);
}
