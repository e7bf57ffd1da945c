// qualify tests: the derivative check against automatic differentiation (Eigen's AutoDiff
// module) on published test problems; deliberately wrong derivatives; badly scaled variables;
// noisy callbacks; bad input.
// SPDX-License-Identifier: MIT
#include <doctest/doctest.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <limits>
#include <qualify/doctest.hpp>
#include <qualify/json.hpp>
#include <set>
#include <stdexcept>
#include <string>
#include <unsupported/Eigen/AutoDiff>
#include <utility>
#include <vector>

using Eigen::MatrixXd;
using Eigen::VectorXd;
using qualify::callback_model;
using qualify::check_derivatives;
using qualify::constraint_kind;
using qualify::constraint_type;
using qualify::derivative_check_options;
using qualify::derivative_check_report;
using qualify::derivative_part;
using qualify::derivative_selection;
using qualify::Index;
using qualify::verdict;

namespace {

// ---- The reference: exact derivatives by forward-mode automatic differentiation ----------

template <class T>
using column = Eigen::Matrix<T, Eigen::Dynamic, 1>;
using ad1 = Eigen::AutoDiffScalar<VectorXd>;     // value and gradient
using ad2 = Eigen::AutoDiffScalar<column<ad1>>;  // value, gradient and Hessian

column<ad1> seed1(const VectorXd& x) {
  const Index n = x.size();
  column<ad1> y(n);
  for (Index i = 0; i < n; ++i) y(i) = ad1(x(i), VectorXd::Unit(n, i));
  return y;
}

column<ad2> seed2(const VectorXd& x) {
  const Index n = x.size();
  column<ad2> y(n);
  for (Index i = 0; i < n; ++i) {
    y(i).value() = ad1(x(i), VectorXd::Unit(n, i));
    y(i).derivatives().resize(n);
    for (Index k = 0; k < n; ++k) y(i).derivatives()(k) = ad1(i == k, VectorXd::Zero(n));
  }
  return y;
}

/// AutoDiff leaves the derivatives of a constant empty; they are zeros.
VectorXd derivatives_of(const ad1& v, Index n) {
  return v.derivatives().size() == n ? VectorXd(v.derivatives()) : VectorXd(VectorXd::Zero(n));
}

MatrixXd hessian_of(const ad2& v, Index n) {
  MatrixXd h = MatrixXd::Zero(n, n);
  if (v.derivatives().size() == n)
    for (Index k = 0; k < n; ++k) h.row(k) = derivatives_of(v.derivatives()(k), n).transpose();
  return h;
}

/// A model whose derivatives come from AutoDiff on the problem's own templated functions, so
/// they are exact to rounding. `P` has `n`, `types`, `kinds`, `labels`, and the templates
/// `objective(x)` and `constraints(x)`.
template <class P>
callback_model ad_model(const P& p) {
  callback_model model;
  model.variables = p.n;
  model.types = p.types;
  model.kinds = p.kinds;
  model.labels = p.labels;
  const Index n = p.n;
  model.objective = [p](const VectorXd& x) { return p.objective(column<double>(x)); };
  model.objective_gradient = [p, n](const VectorXd& x) {
    return derivatives_of(p.objective(seed1(x)), n);
  };
  model.objective_hessian = [p, n](const VectorXd& x) {
    return hessian_of(p.objective(seed2(x)), n);
  };
  model.constraint_values = [p](const VectorXd& x) {
    return VectorXd(p.constraints(column<double>(x)));
  };
  model.constraint_jacobian = [p, n](const VectorXd& x) {
    const column<ad1> c = p.constraints(seed1(x));
    MatrixXd j(c.size(), n);
    for (Index i = 0; i < c.size(); ++i) j.row(i) = derivatives_of(c(i), n).transpose();
    return j;
  };
  model.constraint_hessian = [p, n](const VectorXd& x, Index i) {
    return hessian_of(p.constraints(seed2(x))(i), n);
  };
  return model;
}

const auto ineq = constraint_type::inequality;
const auto eq = constraint_type::equality;
const auto nonlinear = constraint_kind::nonlinear;

// ---- Published test problems (formulas and points from memory) ---------------------------

/// Hock and Schittkowski, Test Examples for Nonlinear Programming Codes (1981), problem 71:
/// min x1 x4 (x1 + x2 + x3) + x3 s.t. x1 x2 x3 x4 >= 25, sum x_i^2 = 40.
/// x0 = (1, 5, 5, 1); x* = (1, 4.7429994, 3.8211503, 1.3794082).
struct hs071 {
  Index n = 4;
  std::vector<constraint_type> types{ineq, eq};
  std::vector<constraint_kind> kinds{nonlinear, nonlinear};
  std::vector<std::string> labels{"product", "sphere"};
  template <class T>
  T objective(const column<T>& x) const {
    return x(0) * x(3) * (x(0) + x(1) + x(2)) + x(2);
  }
  template <class T>
  column<T> constraints(const column<T>& x) const {
    column<T> c(2);
    c(0) = 25.0 - x(0) * x(1) * x(2) * x(3);
    c(1) = x(0) * x(0) + x(1) * x(1) + x(2) * x(2) + x(3) * x(3) - 40.0;
    return c;
  }
};

/// Hock and Schittkowski (1981), problem 43 (Rosen and Suzuki): min x1^2 + x2^2 + 2 x3^2 +
/// x4^2 - 5 x1 - 5 x2 - 21 x3 + 7 x4 s.t. three quadratic inequalities (written g <= 0).
/// x0 = (0, 0, 0, 0); x* = (0, 1, 2, -1).
struct hs043 {
  Index n = 4;
  std::vector<constraint_type> types{ineq, ineq, ineq};
  std::vector<constraint_kind> kinds{constraint_kind::convex, constraint_kind::convex,
                                     constraint_kind::convex};
  std::vector<std::string> labels{"ball", "ellipsoid", "bowl"};
  template <class T>
  T objective(const column<T>& x) const {
    return x(0) * x(0) + x(1) * x(1) + 2.0 * x(2) * x(2) + x(3) * x(3) - 5.0 * x(0) - 5.0 * x(1) -
           21.0 * x(2) + 7.0 * x(3);
  }
  template <class T>
  column<T> constraints(const column<T>& x) const {
    column<T> c(3);
    c(0) = x(0) * x(0) + x(1) * x(1) + x(2) * x(2) + x(3) * x(3) + x(0) - x(1) + x(2) - x(3) - 8.0;
    c(1) = x(0) * x(0) + 2.0 * x(1) * x(1) + x(2) * x(2) + 2.0 * x(3) * x(3) - x(0) - x(3) - 10.0;
    c(2) = 2.0 * x(0) * x(0) + x(1) * x(1) + x(2) * x(2) + 2.0 * x(0) - x(1) - x(3) - 5.0;
    return c;
  }
};

/// Hock and Schittkowski (1981), problem 40: min -x1 x2 x3 x4 s.t. x1^3 + x2^2 = 1,
/// x1^2 x4 - x3 = 0, x4^2 - x2 = 0. x0 = (0.8, 0.8, 0.8, 0.8);
/// x* = (2^(-1/3), 2^(-1/2), 2^(-11/12), 2^(-1/4)).
struct hs040 {
  Index n = 4;
  std::vector<constraint_type> types{eq, eq, eq};
  std::vector<constraint_kind> kinds{nonlinear, nonlinear, nonlinear};
  std::vector<std::string> labels{"cubic", "link", "square"};
  template <class T>
  T objective(const column<T>& x) const {
    return -(x(0) * x(1) * x(2) * x(3));
  }
  template <class T>
  column<T> constraints(const column<T>& x) const {
    column<T> c(3);
    c(0) = x(0) * x(0) * x(0) + x(1) * x(1) - 1.0;
    c(1) = x(0) * x(0) * x(3) - x(2);
    c(2) = x(3) * x(3) - x(1);
    return c;
  }
};

/// Hock and Schittkowski (1981), problem 7: min log(1 + x1^2) - x2 s.t.
/// (1 + x1^2)^2 + x2^2 - 4 = 0. x0 = (2, 2); x* = (0, sqrt(3)).
struct hs007 {
  Index n = 2;
  std::vector<constraint_type> types{eq};
  std::vector<constraint_kind> kinds{nonlinear};
  std::vector<std::string> labels{"ring"};
  template <class T>
  T objective(const column<T>& x) const {
    using std::log;
    return log(1.0 + x(0) * x(0)) - x(1);
  }
  template <class T>
  column<T> constraints(const column<T>& x) const {
    column<T> c(1);
    const T s = 1.0 + x(0) * x(0);
    c(0) = s * s + x(1) * x(1) - 4.0;
    return c;
  }
};

/// Moré, Garbow and Hillstrom, Testing Unconstrained Optimization Software, ACM TOMS 7(1),
/// 1981, problem 3 (Powell badly scaled): f1 = 1e4 x1 x2 - 1, f2 = exp(-x1) + exp(-x2) - 1.0001.
/// x0 = (0, 1); x* = (1.098e-5, 9.106). Residuals as equalities, objective their sum of squares.
struct mgh03 {
  Index n = 2;
  std::vector<constraint_type> types{eq, eq};
  std::vector<constraint_kind> kinds{nonlinear, nonlinear};
  std::vector<std::string> labels{"f1", "f2"};
  template <class T>
  column<T> constraints(const column<T>& x) const {
    using std::exp;
    column<T> c(2);
    c(0) = 1e4 * x(0) * x(1) - 1.0;
    c(1) = exp(-x(0)) + exp(-x(1)) - 1.0001;
    return c;
  }
  template <class T>
  T objective(const column<T>& x) const {
    const column<T> c = constraints(x);
    return c(0) * c(0) + c(1) * c(1);
  }
};

/// Moré, Garbow and Hillstrom (1981), problem 4 (Brown badly scaled): f1 = x1 - 1e6,
/// f2 = x2 - 2e-6, f3 = x1 x2 - 2. x0 = (1, 1); x* = (1e6, 2e-6).
struct mgh04 {
  Index n = 2;
  std::vector<constraint_type> types{eq, eq, eq};
  std::vector<constraint_kind> kinds{constraint_kind::affine, constraint_kind::affine, nonlinear};
  std::vector<std::string> labels{"f1", "f2", "f3"};
  template <class T>
  column<T> constraints(const column<T>& x) const {
    column<T> c(3);
    c(0) = x(0) - 1e6;
    c(1) = x(1) - 2e-6;
    c(2) = x(0) * x(1) - 2.0;
    return c;
  }
  template <class T>
  T objective(const column<T>& x) const {
    const column<T> c = constraints(x);
    return c(0) * c(0) + c(1) * c(1) + c(2) * c(2);
  }
};

/// Moré, Garbow and Hillstrom (1981), problem 7 (helical valley): f1 = 10 (x3 - 10 theta),
/// f2 = 10 (sqrt(x1^2 + x2^2) - 1), f3 = x3, theta = atan(x2 / x1) / (2 pi), + 0.5 when x1 < 0.
/// x0 = (-1, 0, 0); x* = (1, 0, 0).
struct mgh07 {
  Index n = 3;
  std::vector<constraint_type> types{eq, eq, eq};
  std::vector<constraint_kind> kinds{nonlinear, nonlinear, nonlinear};
  std::vector<std::string> labels{"f1", "f2", "f3"};
  template <class T>
  column<T> constraints(const column<T>& x) const {
    using std::atan2;
    using std::sqrt;
    const double pi = 3.14159265358979323846;
    // AutoDiff has atan2 but no atan: atan2(x2, x1) is atan(x2 / x1) for x1 > 0, and
    // atan(x2 / x1) + pi for x1 < 0 <= x2, atan(x2 / x1) - pi for x1 < 0, x2 < 0.
    T theta = atan2(x(1), x(0)) / (2 * pi);
    if (value_of(x(0)) < 0 && value_of(x(1)) < 0) theta = theta + 1.0;
    column<T> c(3);
    c(0) = 10.0 * (x(2) - 10.0 * theta);
    c(1) = 10.0 * (sqrt(x(0) * x(0) + x(1) * x(1)) - 1.0);
    c(2) = x(2);
    return c;
  }
  template <class T>
  T objective(const column<T>& x) const {
    const column<T> c = constraints(x);
    return c(0) * c(0) + c(1) * c(1) + c(2) * c(2);
  }
  static double value_of(double v) { return v; }
  static double value_of(const ad1& v) { return v.value(); }
  static double value_of(const ad2& v) { return v.value().value(); }
};

/// Moré, Garbow and Hillstrom (1981), problem 1 (Rosenbrock): f1 = 10 (x2 - x1^2), f2 = 1 - x1.
/// x0 = (-1.2, 1); x* = (1, 1).
struct mgh01 {
  Index n = 2;
  std::vector<constraint_type> types{eq, eq};
  std::vector<constraint_kind> kinds{nonlinear, constraint_kind::affine};
  std::vector<std::string> labels{"f1", "f2"};
  template <class T>
  column<T> constraints(const column<T>& x) const {
    column<T> c(2);
    c(0) = 10.0 * (x(1) - x(0) * x(0));
    c(1) = 1.0 - x(0);
    return c;
  }
  template <class T>
  T objective(const column<T>& x) const {
    const column<T> c = constraints(x);
    return c(0) * c(0) + c(1) * c(1);
  }
};

/// Invented: a district-heating dispatch with a pumped flow x1 ~ 1e6 kg/h and a fouling
/// resistance x2 ~ 1e-6 m^2 K/W, each entering on its own scale (logarithms, a reciprocal, a
/// square root), so that a step of 6e-6 * max(|x_j|, 1) leaves x2's domain.
struct scaled_plant {
  Index n = 2;
  std::vector<constraint_type> types{ineq, eq};
  std::vector<constraint_kind> kinds{nonlinear, nonlinear};
  std::vector<std::string> labels{"pump_head", "heat_balance"};
  template <class T>
  T objective(const column<T>& x) const {
    using std::log;
    using std::sqrt;
    return 1e-6 * x(0) - log(x(1)) + sqrt(x(0) * x(1));
  }
  template <class T>
  column<T> constraints(const column<T>& x) const {
    using std::log;
    column<T> c(2);
    c(0) = 1.0 / x(1) - x(0) - 2e5;
    c(1) = x(1) * log(x(0)) - 1.3e-5;
    return c;
  }
};

/// Invented: a wave-shaped constraint and a steep exponential cost, curved enough that a
/// first step of 1e-2 relative is far outside the asymptotic range of central differences.
struct curved {
  Index n = 2;
  std::vector<constraint_type> types{ineq};
  std::vector<constraint_kind> kinds{nonlinear};
  std::vector<std::string> labels{"wave"};
  template <class T>
  T objective(const column<T>& x) const {
    using std::exp;
    return exp(40.0 * x(0)) * 1e-8 + x(1) * x(1);
  }
  template <class T>
  column<T> constraints(const column<T>& x) const {
    using std::sin;
    column<T> c(1);
    c(0) = sin(60.0 * x(1)) + x(0) * x(1);
    return c;
  }
};

/// Every entry is listed, so the test can look at each.
derivative_check_options list_all() {
  derivative_check_options options;
  options.max_listed = 100000;
  return options;
}

/// The entries of `rep` with verdict `v`, as (part, row, hessian_row, variable).
std::set<std::tuple<derivative_part, Index, Index, Index>> entries_with(
    const derivative_check_report& rep, verdict v) {
  std::set<std::tuple<derivative_part, Index, Index, Index>> out;
  for (const auto& e : rep.worst)
    if (e.result == v) out.insert({e.part, e.row, e.hessian_row, e.variable});
  return out;
}

/// Exact derivatives agree, and the error estimate covers the true error of every finite
/// difference (the reference is AutoDiff, so d is that error).
void check_exact(const callback_model& model, const VectorXd& x,
                 derivative_check_options options = list_all()) {
  const auto rep = check_derivatives(model, x, options);
  QUALIFY_CHECK_HOLDS(rep);
  CHECK(rep.parts.size() == 4);
  const Index n = model.variables, m = model.constraints();
  CHECK(rep.entries == n + m * n + n * n + m * n * n);
  CHECK(rep.agreeing == rep.entries);
  REQUIRE(Index(rep.worst.size()) == rep.entries);
  for (const auto& e : rep.worst) {
    CAPTURE(e.name());
    CAPTURE(e.analytic);
    CAPTURE(e.finite_difference);
    CHECK(e.error <= e.error_estimate);
  }
}

}  // namespace

TEST_CASE("exact derivatives agree on published test problems, within an honest estimate") {
  SUBCASE("Hock and Schittkowski (1981), problem 71, at x0 and x*") {
    check_exact(ad_model(hs071{}), VectorXd{{1, 5, 5, 1}});
    check_exact(ad_model(hs071{}), VectorXd{{1, 4.7429994, 3.8211503, 1.3794082}});
  }
  SUBCASE("Hock and Schittkowski (1981), problem 43, at x0 and x*") {
    check_exact(ad_model(hs043{}), VectorXd{{0, 0, 0, 0}});
    check_exact(ad_model(hs043{}), VectorXd{{0, 1, 2, -1}});
  }
  SUBCASE("Hock and Schittkowski (1981), problem 40, at x0 and x*") {
    check_exact(ad_model(hs040{}), VectorXd{{0.8, 0.8, 0.8, 0.8}});
    check_exact(ad_model(hs040{}), VectorXd{{std::pow(2, -1.0 / 3), std::pow(2, -0.5),
                                             std::pow(2, -11.0 / 12), std::pow(2, -0.25)}});
  }
  SUBCASE("Hock and Schittkowski (1981), problem 7, at x0 and x*") {
    check_exact(ad_model(hs007{}), VectorXd{{2, 2}});
    check_exact(ad_model(hs007{}), VectorXd{{0, std::sqrt(3.0)}});
  }
  SUBCASE("Moré, Garbow and Hillstrom (1981), problems 1 and 7, at x0 and x*") {
    check_exact(ad_model(mgh01{}), VectorXd{{-1.2, 1}});
    check_exact(ad_model(mgh01{}), VectorXd{{1, 1}});
    check_exact(ad_model(mgh07{}), VectorXd{{-1, 0, 0}});
    check_exact(ad_model(mgh07{}), VectorXd{{1, 0, 0}});
  }
}

TEST_CASE("badly scaled variables (x_j ~ 1e6 and 1e-6) pass") {
  SUBCASE("Moré, Garbow and Hillstrom (1981), problem 4 (Brown badly scaled), at x0 and x*") {
    check_exact(ad_model(mgh04{}), VectorXd{{1, 1}});
    check_exact(ad_model(mgh04{}), VectorXd{{1e6, 2e-6}});
  }
  SUBCASE("Moré, Garbow and Hillstrom (1981), problem 3 (Powell badly scaled), at x0 and x*") {
    check_exact(ad_model(mgh03{}), VectorXd{{0, 1}});
    // At x*, f2 = exp(-x1) + exp(-x2) - 1.0001 is mostly rounding along x2 (exp(-x2) ~ 1e-4
    // added to 1), noise that the size of f2 or of its terms does not show.
    check_exact(ad_model(mgh03{}), VectorXd{{1.098e-5, 9.106}});
  }
  SUBCASE("functions on the variables' own scales: the step is reduced where x2 - h < 0") {
    const VectorXd x = VectorXd{{1e6, 1e-6}};
    check_exact(ad_model(scaled_plant{}), x);
    const auto rep = check_derivatives(ad_model(scaled_plant{}), x);
    QUALIFY_CHECK_HOLDS(rep);
    for (const auto& part : rep.parts) CHECK(part.reduced_variables >= 1);
    // log(x2 - 6.06e-6) is NaN: named, and recovered at a smaller step.
    bool named = false;
    for (const auto& f : rep.findings)
      named = named ||
              (f.code == "step_reduced" && f.message.find("x[1] - 6.06e-06") != std::string::npos);
    CHECK(named);
    // Given the variables' typical sizes, the first step already fits.
    auto options = list_all();
    options.typical_magnitude = VectorXd{{1e6, 1e-6}};
    const auto typed = check_derivatives(ad_model(scaled_plant{}), x, options);
    QUALIFY_CHECK_HOLDS(typed);
    for (const auto& part : typed.parts) CHECK(part.reduced_variables == 0);
    for (const auto& e : typed.worst) CHECK(e.error <= e.error_estimate);
  }
}

TEST_CASE("strongly curved functions: the estimate covers the truncation error") {
  // exp(40 x1) and sin(60 x2) at x = (0.5, 0.3), from a deliberately large first step.
  const VectorXd x = VectorXd{{0.5, 0.3}};
  derivative_check_options options = list_all();
  options.relative_step = 1e-2;
  check_exact(ad_model(curved{}), x, options);
  const auto rep = check_derivatives(ad_model(curved{}), x, options);
  for (const auto& part : rep.parts) CHECK(part.reduced_variables >= 1);
  // Without smaller steps the same entries are undecided, never judged wrong.
  options.step_reductions = 0;
  const auto coarse = check_derivatives(ad_model(curved{}), x, options);
  QUALIFY_CHECK_VERDICT(coarse, verdict::undecided);
  CHECK(coarse.disagreeing == 0);
  for (const auto& e : coarse.worst) CHECK(e.error <= e.error_estimate);
}

TEST_CASE("a deliberately wrong Jacobian entry is found and named") {
  // Hock and Schittkowski (1981), problem 71 at x0 = (1, 5, 5, 1); the reference is AutoDiff.
  const VectorXd x = VectorXd{{1, 5, 5, 1}};
  callback_model model = ad_model(hs071{});
  const auto exact = model.constraint_jacobian;
  for (double factor : {2.0, -1.0, 1.0 + 1e-4}) {
    CAPTURE(factor);
    model.constraint_jacobian = [exact, factor](const VectorXd& y) {
      MatrixXd j = exact(y);
      j(0, 2) *= factor;  // d(product)/dx[2] = -x1 x2 x4 = -5
      return j;
    };
    const auto rep = check_derivatives(model, x);
    QUALIFY_CHECK_FAILS(rep);
    CHECK(rep.parts[1].part == derivative_part::constraint_jacobian);
    CHECK(rep.parts[1].disagreeing == 1);
    REQUIRE(!rep.worst.empty());
    const auto& w = rep.worst.front();
    CHECK(w.part == derivative_part::constraint_jacobian);
    CHECK(w.label == "product");
    CHECK(w.row == 0);
    CHECK(w.variable == 2);
    CHECK(w.analytic == doctest::Approx(-5 * factor));
    CHECK(w.finite_difference == doctest::Approx(-5).epsilon(1e-9));
    CHECK(rep.message.find("d(product)/dx[2]") != std::string::npos);
    bool named = false, warned = false;
    for (const auto& f : rep.findings) {
      named = named || (f.code == "derivative_mismatch" && f.rows == std::vector<Index>{0} &&
                        f.labels == std::vector<std::string>{"product"});
      warned = warned || (f.code == "hessian_reference_suspect" && f.labels == f.labels);
    }
    CHECK(named);
    // The constraint Hessians are differenced from this Jacobian: the row's second
    // derivatives with x[2] look wrong too (d2/dx[2]dx[j], j = 0, 1, 3), and a warning says why.
    CHECK(rep.parts[3].disagreeing == 3);
    CHECK(warned);
  }
  // An error of 1e-9 relative is below the tolerance (1e-6): it passes.
  model.constraint_jacobian = [exact](const VectorXd& y) {
    MatrixXd j = exact(y);
    j(0, 2) *= 1 + 1e-9;
    return j;
  };
  QUALIFY_CHECK_HOLDS(check_derivatives(model, x));
}

TEST_CASE("a sign error in a gradient entry is found and named") {
  // Hock and Schittkowski (1981), problem 43 at x* = (0, 1, 2, -1): grad f = (-5, -3, -13, 5).
  const VectorXd x = VectorXd{{0, 1, 2, -1}};
  callback_model model = ad_model(hs043{});
  const auto exact = model.objective_gradient;
  CHECK(exact(x).isApprox(VectorXd{{-5, -3, -13, 5}}));
  model.objective_gradient = [exact](const VectorXd& y) {
    VectorXd g = exact(y);
    g(3) = -g(3);
    return g;
  };
  derivative_check_options options = list_all();
  options.objective_hessian = derivative_selection::off;
  const auto rep = check_derivatives(model, x, options);
  QUALIFY_CHECK_FAILS(rep);
  CHECK(rep.disagreeing == 1);
  CHECK(rep.worst.front().name() == "d(objective)/dx[3]");
  CHECK(rep.worst.front().row == -1);
  CHECK(rep.worst.front().analytic == -5);
  CHECK(rep.worst.front().finite_difference == doctest::Approx(5).epsilon(1e-9));
  // With the objective Hessian checked against the wrong gradient, row 3 of the (correct)
  // Hessian seems wrong too, and a warning says why.
  const auto with_hessian = check_derivatives(model, x, list_all());
  QUALIFY_CHECK_FAILS(with_hessian);
  bool warned = false;
  for (const auto& f : with_hessian.findings)
    warned = warned || f.code == "hessian_reference_suspect";
  CHECK(warned);
}

TEST_CASE("a transposed Hessian block is found entry by entry") {
  // Hock and Schittkowski (1981), problem 71 at x0 = (1, 5, 5, 1). The objective Hessian's
  // block B = H[0:2, 2:4] = [[x4, 2 x1 + x2 + x3], [0, x1]] is not symmetric, so writing B^T
  // there (and B below, keeping H symmetric) puts wrong values at (0,3), (1,2), (2,1), (3,0).
  const VectorXd x = VectorXd{{1, 5, 5, 1}};
  callback_model model = ad_model(hs071{});
  const auto exact = model.objective_hessian;
  model.objective_hessian = [exact](const VectorXd& y) {
    MatrixXd h = exact(y);
    const MatrixXd b = h.block(0, 2, 2, 2);
    h.block(0, 2, 2, 2) = b.transpose();
    h.block(2, 0, 2, 2) = b;
    return h;
  };
  const auto rep = check_derivatives(model, x, list_all());
  QUALIFY_CHECK_FAILS(rep);
  const auto p = derivative_part::objective_hessian;
  CHECK(entries_with(rep, verdict::fails) ==
        std::set<std::tuple<derivative_part, Index, Index, Index>>{
            {p, -1, 0, 3}, {p, -1, 1, 2}, {p, -1, 2, 1}, {p, -1, 3, 0}});
  CHECK(rep.parts[2].part == p);
  CHECK(rep.parts[2].disagreeing == 4);
  CHECK(rep.disagreeing == 4);
}

TEST_CASE("a missing factor 2 is found on the whole row and in the constraint Hessian") {
  // Hock and Schittkowski (1981), problem 71: d(sum x_i^2)/dx_j written x_j instead of 2 x_j.
  const VectorXd x = VectorXd{{1, 4.7429994, 3.8211503, 1.3794082}};
  callback_model model = ad_model(hs071{});
  const auto exact = model.constraint_jacobian;
  model.constraint_jacobian = [exact](const VectorXd& y) {
    MatrixXd j = exact(y);
    j.row(1) = y.transpose();
    return j;
  };
  model.constraint_hessian = [](const VectorXd&, Index i) -> MatrixXd {
    // The sphere's Hessian is 2 I; the product's is left out on purpose (zeros: wrong too).
    return i == 1 ? MatrixXd(2 * MatrixXd::Identity(4, 4)) : MatrixXd(MatrixXd::Zero(4, 4));
  };
  derivative_check_options options = list_all();
  const auto rep = check_derivatives(model, x, options);
  QUALIFY_CHECK_FAILS(rep);
  const auto& jac = rep.parts[1];
  CHECK(jac.part == derivative_part::constraint_jacobian);
  CHECK(jac.disagreeing == 4);
  for (const auto& e : rep.worst)
    if (e.part == derivative_part::constraint_jacobian)
      CHECK((e.result == verdict::fails) == (e.row == 1));
  // Differences of the halved row give I, not 2 I: every diagonal entry of the sphere's
  // Hessian is flagged, and the product's missing Hessian is flagged off the diagonal.
  const auto& hess = rep.parts[3];
  CHECK(hess.part == derivative_part::constraint_hessians);
  for (const auto& e : rep.worst)
    if (e.part == derivative_part::constraint_hessians && e.row == 1)
      CHECK((e.result == verdict::fails) == (e.hessian_row == e.variable));
  for (const auto& e : rep.worst)
    if (e.part == derivative_part::constraint_hessians && e.row == 0)
      CHECK((e.result == verdict::fails) == (e.hessian_row != e.variable));
  CHECK(hess.disagreeing == 4 + 12);
}

TEST_CASE("noisy values: a correct derivative within the noise is undecided, a wrong one fails") {
  // Values carrying noise of 1e-8 (as from an inner iterative solve): a hash of x's bits.
  const auto noise = [](const VectorXd& x) {
    std::uint64_t h = 0x9e3779b97f4a7c15ull;
    for (Index i = 0; i < x.size(); ++i) {
      std::uint64_t bits;
      const double v = x(i);
      std::memcpy(&bits, &v, sizeof bits);
      h ^= bits + 0x9e3779b97f4a7c15ull + (h << 6) + (h >> 2);
      h *= 0xbf58476d1ce4e5b9ull;
      h ^= h >> 31;
    }
    return 1e-8 * (double(h >> 11) / double(1ull << 53) - 0.5);
  };
  callback_model model = ad_model(hs071{});
  const auto exact_objective = model.objective;
  model.objective = [exact_objective, noise](const VectorXd& y) {
    return exact_objective(y) + noise(y) * 16;  // |f| ~ 16 at x0
  };
  derivative_check_options options = list_all();
  options.value_precision = 1e-8;  // the noise, as the user knows it
  options.constraint_jacobian = derivative_selection::off;
  options.objective_hessian = derivative_selection::off;
  options.constraint_hessians = derivative_selection::off;
  const VectorXd x = VectorXd{{1, 5, 5, 1}};
  const auto rep = check_derivatives(model, x, options);
  QUALIFY_CHECK_VERDICT(rep, verdict::undecided);
  CHECK(rep.undecided == 4);
  for (const auto& e : rep.worst) CHECK(e.error <= e.error_estimate);
  // A wrong entry stands out of the noise.
  const auto exact_gradient = model.objective_gradient;
  model.objective_gradient = [exact_gradient](const VectorXd& y) {
    VectorXd g = exact_gradient(y);
    g(1) += 1;  // 1 + 1 = 2 instead of x1 x4 = 1
    return g;
  };
  const auto wrong = check_derivatives(model, x, options);
  QUALIFY_CHECK_FAILS(wrong);
  CHECK(wrong.disagreeing == 1);
  CHECK(wrong.worst.front().name() == "d(objective)/dx[1]");
  // Not told of the noise, the check sees it in the values along a line through x, and the
  // correct derivatives are undecided, not judged wrong. The step reductions that the noise
  // provokes stop at the resolution of x: every figure stays finite.
  options.value_precision = derivative_check_options{}.value_precision;
  options.step_reductions = 12;
  model.objective_gradient = exact_gradient;
  const auto unaware = check_derivatives(model, x, options);
  QUALIFY_CHECK_VERDICT(unaware, verdict::undecided);
  for (const auto& e : unaware.worst) {
    CHECK(e.error <= e.error_estimate);
    CHECK(std::isfinite(e.finite_difference));
    CHECK(std::isfinite(e.error_estimate));
    CHECK(e.step > 0);
  }
}

TEST_CASE("a callback that fails at a displaced point is a finding, not a crash") {
  // Hock and Schittkowski (1981), problem 71 at x0; constraint_values refuses any x2 but x0's.
  const VectorXd x = VectorXd{{1, 5, 5, 1}};
  callback_model model = ad_model(hs071{});
  const auto exact = model.constraint_values;
  SUBCASE("throws") {
    model.constraint_values = [exact](const VectorXd& y) -> VectorXd {
      if (y(1) != 5) throw std::runtime_error("pressure table: no entry");
      return exact(y);
    };
  }
  SUBCASE("returns NaN") {
    model.constraint_values = [exact](const VectorXd& y) -> VectorXd {
      VectorXd v = exact(y);
      if (y(1) != 5) v(1) = std::numeric_limits<double>::quiet_NaN();
      return v;
    };
  }
  SUBCASE("returns the wrong size") {
    model.constraint_values = [exact](const VectorXd& y) -> VectorXd {
      return y(1) != 5 ? VectorXd(VectorXd::Zero(3)) : exact(y);
    };
  }
  const auto rep = check_derivatives(model, x);
  QUALIFY_CHECK_VERDICT(rep, verdict::undecided);
  CHECK(rep.parts[1].not_evaluated == 2);  // the two constraints' entries for x[1]
  CHECK(rep.disagreeing == 0);
  bool named = false;
  for (const auto& f : rep.findings)
    if (f.code == "displaced_point_failed") {
      named = f.message.find("constraint_values failed at x[1] + 3.03e-05") != std::string::npos &&
              f.message.find("entries of x[1] are not checked") != std::string::npos;
      CAPTURE(f.message);
      CHECK(named);
    }
  CHECK(named);
}

TEST_CASE("bad input is invalid_input naming the entry") {
  const callback_model model = ad_model(hs071{});
  const VectorXd x = VectorXd{{1, 5, 5, 1}};
  const auto code_of = [](const derivative_check_report& rep) {
    return rep.findings.empty() ? std::string() : rep.findings.back().code;
  };
  SUBCASE("x of the wrong size, or with NaN or Inf") {
    auto rep = check_derivatives(model, VectorXd{{1, 5, 5}});
    QUALIFY_CHECK_VERDICT(rep, verdict::invalid_input);
    CHECK(code_of(rep) == "dimension_mismatch");
    rep = check_derivatives(model, VectorXd{{1, std::numeric_limits<double>::quiet_NaN(), 5, 1}});
    CHECK(code_of(rep) == "non_finite_entry");
    CHECK(rep.message.find("x[1] is NaN") != std::string::npos);
    rep = check_derivatives(model, VectorXd{{1, 5, 5, -std::numeric_limits<double>::infinity()}});
    CHECK(rep.message.find("x[3] is -Inf") != std::string::npos);
  }
  SUBCASE("bad options name the field") {
    const auto bad = [&](auto change, const char* field) {
      derivative_check_options options;
      change(options);
      const auto rep = check_derivatives(model, x, options);
      CAPTURE(field);
      QUALIFY_CHECK_VERDICT(rep, verdict::invalid_input);
      CHECK(rep.message.find(field) != std::string::npos);
    };
    const double nan = std::numeric_limits<double>::quiet_NaN();
    bad([](auto& o) { o.relative_step = 0.0; }, "relative_step");
    bad([](auto& o) { o.relative_step = 1e-13; }, "relative_step");
    bad([](auto& o) { o.relative_step = 1.5; }, "relative_step");
    bad([&](auto& o) { o.relative_step = nan; }, "relative_step");
    bad([](auto& o) { o.typical_magnitude = VectorXd{{1, 0, 1, 1}}; }, "typical_magnitude(1)");
    bad([](auto& o) { o.typical_magnitude = VectorXd{{1, 1}}; }, "typical_magnitude has 2 entries");
    bad([](auto& o) { o.step_reductions = -1; }, "step_reductions");
    bad([](auto& o) { o.step_reductions = 13; }, "step_reductions");
    bad([](auto& o) { o.relative_tolerance = 0; }, "relative_tolerance");
    bad([&](auto& o) { o.relative_tolerance = nan; }, "relative_tolerance");
    bad([](auto& o) { o.scale_floor = -0.1; }, "scale_floor");
    bad([&](auto& o) { o.scale_floor = nan; }, "scale_floor");
    bad([](auto& o) { o.value_precision = -1; }, "value_precision");
    bad([](auto& o) { o.estimate_safety = 0.5; }, "estimate_safety");
    bad([](auto& o) { o.max_listed = -1; }, "max_listed");
  }
  SUBCASE("an invalid model") {
    callback_model broken = model;
    broken.kinds.pop_back();
    const auto rep = check_derivatives(broken, x);
    CHECK(code_of(rep) == "invalid_model");
    CHECK(rep.message.find("kinds") != std::string::npos);
  }
  SUBCASE("a callback that fails at x itself") {
    callback_model broken = model;
    broken.objective_gradient = [](const VectorXd&) -> VectorXd { throw std::runtime_error("no"); };
    auto rep = check_derivatives(broken, x);
    CHECK(code_of(rep) == "callback_failed");
    broken = model;
    broken.objective_hessian = [](const VectorXd&) { return MatrixXd(MatrixXd::Zero(4, 3)); };
    rep = check_derivatives(broken, x);
    CHECK(code_of(rep) == "callback_size");
    broken = model;
    broken.constraint_hessian = [](const VectorXd&, Index i) {
      MatrixXd h = MatrixXd::Zero(4, 4);
      if (i == 1) h(2, 2) = std::numeric_limits<double>::infinity();
      return h;
    };
    rep = check_derivatives(broken, x);
    CHECK(code_of(rep) == "non_finite_entry");
    CHECK(rep.message.find("(for sphere)") != std::string::npos);
  }
  SUBCASE("a model without the callbacks being checked") {
    callback_model bare;
    bare.variables = 2;
    bare.objective_gradient = [](const VectorXd& y) { return VectorXd(2 * y); };
    // Nothing to compare: no objective value, no constraints, no Hessians.
    auto rep = check_derivatives(bare, VectorXd{{1, 2}});
    QUALIFY_CHECK_VERDICT(rep, verdict::invalid_input);
    CHECK(code_of(rep) == "missing_callback");
    CHECK(rep.message.find("nothing to check") != std::string::npos);
    // Asked for explicitly: the part is named.
    derivative_check_options options;
    options.objective_gradient = derivative_selection::required;
    rep = check_derivatives(bare, VectorXd{{1, 2}}, options);
    CHECK(code_of(rep) == "missing_callback");
    CHECK(rep.message.find("objective_gradient is required") != std::string::npos);
    options = {};
    options.constraint_jacobian = derivative_selection::required;
    rep = check_derivatives(bare, VectorXd{{1, 2}}, options);
    CHECK(rep.message.find("constraint_jacobian is required") != std::string::npos);
    // With the objective value, the gradient is checked and the Hessian noted as skipped.
    bare.objective = [](const VectorXd& y) { return y.squaredNorm(); };
    rep = check_derivatives(bare, VectorXd{{1, 2}});
    QUALIFY_CHECK_HOLDS(rep);
    CHECK(rep.parts.size() == 1);
    CHECK(rep.findings.front().code == "part_not_checked");
  }
  SUBCASE("an untouched report explains itself") {
    const derivative_check_report untouched;
    CHECK(fmt::format("{}", untouched) == "check_derivatives was not called");
  }
}

TEST_CASE("text and JSON forms of a derivative check") {
  // Hock and Schittkowski (1981), problem 7 at x0 = (2, 2), with d(ring)/dx[0] doubled.
  callback_model model = ad_model(hs007{});
  const auto exact = model.constraint_jacobian;
  model.constraint_jacobian = [exact](const VectorXd& y) {
    MatrixXd j = exact(y);
    j(0, 0) *= 2;
    return j;
  };
  const auto rep = check_derivatives(model, VectorXd{{2, 2}});
  const std::string brief = fmt::format("{}", rep), full = fmt::format("{:f}", rep);
  CHECK(brief.find('\n') == std::string::npos);
  CHECK(brief == rep.message + " [" + std::to_string(rep.findings.size()) + " findings]");
  CHECK(full.rfind(rep.message + "\n", 0) == 0);
  CHECK(full.find("  model        2 variables, 1 constraint\n") != std::string::npos);
  CHECK(full.find("  constraint_jacobian  2 entries: 1 agree, 1 disagree, 0 undecided, 0 not "
                  "evaluated; 0 variables at a reduced step\n") != std::string::npos);
  CHECK(full.find("               fails     d(ring)/dx[0]              80") != std::string::npos);
  CHECK(full.find("error   derivative_mismatch        d(ring)/dx[0]: analytic 80, finite "
                  "difference 40") != std::string::npos);
  const std::string json = qualify::to_json(rep);
  for (const char* key :
       {"\"check\":\"derivatives\"", "\"verdict\":\"fails\"", "\"disagreeing\":1",
        "\"relative_step_requested\":\"automatic\"", "\"name\":\"d(ring)/dx[0]\"",
        "\"part\":\"constraint_jacobian\"", "\"label\":\"ring\"", "\"labels\":[\"ring\"]"})
    CHECK_MESSAGE(json.find(key) != std::string::npos, key);
}
