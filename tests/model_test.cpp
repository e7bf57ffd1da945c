// qualify tests: callback models, their evaluation and the checks on what callbacks return.
// SPDX-License-Identifier: MIT
#include <doctest/doctest.h>

#include <qualify/model.hpp>
#include <stdexcept>

using Eigen::MatrixXd;
using Eigen::VectorXd;
using qualify::constraint_kind;
using qualify::constraint_type;
using qualify::Index;

namespace {

/// Hock and Schittkowski, Test Examples for Nonlinear Programming Codes (1981), problem 71:
/// min x1 x4 (x1 + x2 + x3) + x3 s.t. x1 x2 x3 x4 >= 25, sum x_i^2 = 40 (bounds left out),
/// written as g = 25 - x1 x2 x3 x4 <= 0 and h = sum x_i^2 - 40 = 0.
struct hs071 {
  Index variables() const { return 4; }
  std::vector<constraint_type> types() const {
    return {constraint_type::inequality, constraint_type::equality};
  }
  std::vector<constraint_kind> kinds() const {
    return {constraint_kind::nonlinear, constraint_kind::nonlinear};
  }
  double objective(const VectorXd& x) const { return x(0) * x(3) * (x(0) + x(1) + x(2)) + x(2); }
  VectorXd objective_gradient(const VectorXd& x) const {
    VectorXd g(4);
    g << x(3) * (2 * x(0) + x(1) + x(2)), x(0) * x(3), x(0) * x(3) + 1, x(0) * (x(0) + x(1) + x(2));
    return g;
  }
  VectorXd constraint_values(const VectorXd& x) const {
    VectorXd v(2);
    v << 25 - x.prod(), x.squaredNorm() - 40;
    return v;
  }
  MatrixXd constraint_jacobian(const VectorXd& x) const {
    MatrixXd j(2, 4);
    j << -x(1) * x(2) * x(3), -x(0) * x(2) * x(3), -x(0) * x(1) * x(3), -x(0) * x(1) * x(2),
        2 * x.transpose();
    return j;
  }
  MatrixXd constraint_hessian(const VectorXd& x, Index i) const {
    if (i == 1) return 2 * MatrixXd::Identity(4, 4);
    MatrixXd h = MatrixXd::Zero(4, 4);  // d2/dxj dxk of -x1 x2 x3 x4: minus the other two
    for (Index j = 0; j < 4; ++j)
      for (Index k = 0; k < 4; ++k)
        if (j != k) h(j, k) = -x.prod() / (x(j) * x(k));
    return h;
  }
};

VectorXd vec(std::initializer_list<double> v) {
  VectorXd out(Index(v.size()));
  Index i = 0;
  for (double e : v) out(i++) = e;
  return out;
}

}  // namespace

TEST_CASE("a user struct becomes a callback model; values at the published points") {
  const hs071 problem;
  const auto model = qualify::make_callback_model(problem, {"product", "sphere"});
  CHECK(qualify::validate_model(model).empty());
  CHECK(model.constraints() == 2);
  CHECK(bool(model.objective));
  CHECK(bool(model.objective_gradient));
  CHECK(bool(model.constraint_hessian));
  CHECK_FALSE(bool(model.objective_hessian));
  // Hock and Schittkowski (1981), problem 71: f(x0) = 16 at x0 = (1, 5, 5, 1), and
  // f* = 17.0140173 at x* = (1, 4.7429994, 3.8211503, 1.3794082), both constraints active.
  CHECK(model.objective(vec({1, 5, 5, 1})) == doctest::Approx(16));
  const VectorXd x_star = vec({1, 4.7429994, 3.8211503, 1.3794082});
  CHECK(model.objective(x_star) == doctest::Approx(17.0140173).epsilon(1e-7));
  const auto e = qualify::evaluate_model(model, x_star, {true, true});
  REQUIRE(e.ok());
  CHECK(std::abs(e.point.values(0)) < 1e-5);
  CHECK(std::abs(e.point.values(1)) < 1e-5);
  CHECK(e.point.jacobian.rows() == 2);
  CHECK(e.point.labels == std::vector<std::string>{"product", "sphere"});
  REQUIRE(e.point.hessians.size() == 2);
  CHECK(e.point.hessians[1]->isApprox(2 * MatrixXd::Identity(4, 4)));
  CHECK_FALSE(e.point.objective_hessian.has_value());
}

TEST_CASE("a model of lambdas; no constraints needs no constraint callbacks") {
  qualify::callback_model model;
  model.variables = 2;
  model.objective_gradient = [](const VectorXd& x) { return VectorXd(2 * x); };
  CHECK(qualify::validate_model(model).empty());
  const auto e = qualify::evaluate_model(model, vec({1, -2}));
  REQUIRE(e.ok());
  CHECK(e.point.values.size() == 0);
  CHECK(e.point.jacobian.rows() == 0);
  CHECK(e.point.jacobian.cols() == 2);
  CHECK(e.point.objective_gradient.isApprox(vec({2, -4})));
}

TEST_CASE("bad models are named by field") {
  qualify::callback_model model;
  CHECK(qualify::validate_model(model).find("variables") != std::string::npos);
  model.variables = 2;
  model.types = {constraint_type::inequality};
  CHECK(qualify::validate_model(model).find("kinds") != std::string::npos);
  model.kinds = {constraint_kind::affine};
  model.labels = {"a", "b"};
  CHECK(qualify::validate_model(model).find("labels") != std::string::npos);
  model.labels = {"a"};
  CHECK(qualify::validate_model(model).find("constraint_values") != std::string::npos);
  model.constraint_values = [](const VectorXd& x) { return VectorXd(x.head(1)); };
  CHECK(qualify::validate_model(model).find("constraint_jacobian") != std::string::npos);
  model.constraint_jacobian = [](const VectorXd&) { return MatrixXd(MatrixXd::Ones(1, 2)); };
  CHECK(qualify::validate_model(model).empty());
  // objective_gradient is asked for by default and the model has none
  const auto e = qualify::evaluate_model(model, vec({0, 0}));
  CHECK(e.code == "missing_callback");
  CHECK(qualify::evaluate_model(model, vec({0, 0}), {false, false}).ok());
}

TEST_CASE("faulty callbacks: a throw, NaN, a wrong size become messages") {
  qualify::callback_model model;
  model.variables = 2;
  model.types = {constraint_type::inequality, constraint_type::equality};
  model.kinds = {constraint_kind::convex, constraint_kind::affine};
  model.labels = {"cap", "balance"};
  model.objective_gradient = [](const VectorXd& x) { return x; };
  model.constraint_jacobian = [](const VectorXd&) { return MatrixXd(MatrixXd::Identity(2, 2)); };
  const VectorXd x = vec({1, 2});

  model.constraint_values = [](const VectorXd&) -> VectorXd {
    throw std::runtime_error("table lookup out of range");
  };
  auto e = qualify::evaluate_model(model, x);
  CHECK(e.code == "callback_failed");
  CHECK(e.error.find("table lookup out of range") != std::string::npos);

  model.constraint_values = [](const VectorXd&) -> VectorXd { throw 42; };
  e = qualify::evaluate_model(model, x);
  CHECK(e.code == "callback_failed");

  model.constraint_values = [](const VectorXd&) {
    return vec({0, std::numeric_limits<double>::quiet_NaN()});
  };
  e = qualify::evaluate_model(model, x);
  CHECK(e.code == "non_finite_entry");
  CHECK(e.error.find("balance") != std::string::npos);

  model.constraint_values = [](const VectorXd&) { return vec({0, 0, 0}); };
  e = qualify::evaluate_model(model, x);
  CHECK(e.code == "callback_size");
  CHECK(e.error.find("3 x 1") != std::string::npos);

  // a callback that changes size between calls is caught on the call where it does
  int calls = 0;
  model.constraint_values = [&calls](const VectorXd&) {
    return ++calls == 1 ? vec({0, 0}) : vec({0});
  };
  CHECK(qualify::evaluate_model(model, x).ok());
  CHECK(qualify::evaluate_model(model, x).code == "callback_size");

  model.constraint_values = [](const VectorXd&) { return vec({0, 0}); };
  model.constraint_jacobian = [](const VectorXd&) {
    MatrixXd j = MatrixXd::Identity(2, 2);
    j(0, 1) = std::numeric_limits<double>::infinity();
    return j;
  };
  e = qualify::evaluate_model(model, x);
  CHECK(e.code == "non_finite_entry");
  CHECK(e.error.find("cap, variable 1") != std::string::npos);

  model.constraint_jacobian = [](const VectorXd&) { return MatrixXd(MatrixXd::Identity(2, 2)); };
  model.constraint_hessian = [](const VectorXd&, Index i) {
    return MatrixXd(MatrixXd::Identity(2 + i, 2 + i));
  };
  e = qualify::evaluate_model(model, x, {true, true});
  CHECK(e.code == "callback_size");
  CHECK(e.error.find("balance") != std::string::npos);
}
