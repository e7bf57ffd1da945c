// qualify tests: KKT test cases shared by the dense and the sparse KKT tests: the
// Hock-Schittkowski problems as callback models, degenerate vertices, quadratics at the origin,
// counter-examples, and the assertions on reports they share.
// SPDX-License-Identifier: MIT
#pragma once

#include <doctest/doctest.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <functional>
#include <memory>
#include <qualify/kkt.hpp>
#include <random>
#include <string>
#include <unsupported/Eigen/AutoDiff>
#include <utility>
#include <vector>

namespace qualify_test {

using namespace qualify;
using Eigen::MatrixXd;
using Eigen::VectorXd;

inline bool has_code(const kkt_report& r, const std::string& code) {
  return std::any_of(r.findings.begin(), r.findings.end(),
                     [&](const finding& f) { return f.code == code; });
}

inline bool contains(const std::string& text, const std::string& part) {
  return text.find(part) != std::string::npos;
}

/// Bad input: an invalid_input report whose last finding has `code` and whose message says
/// `words`.
inline void expect_invalid(const kkt_report& r, const std::string& code, const std::string& words) {
  CAPTURE(r.message);
  CHECK(r.result == verdict::invalid_input);
  CHECK(r.classification == kkt_classification::not_checked);
  REQUIRE(!r.findings.empty());
  CHECK(r.findings.back().code == code);
  CHECK(contains(r.message, words));
}

inline constexpr double pi = 3.14159265358979323846;

inline VectorXd vec(std::initializer_list<double> v) {
  VectorXd out(Index(v.size()));
  Index i = 0;
  for (double e : v) out(i++) = e;
  return out;
}

// ---- Hock-Schittkowski problems as callback models ------------------------------------------
//
// W. Hock and K. Schittkowski, Test Examples for Nonlinear Programming Codes, Springer, 1981
// (volume 187 of its series in economics and mathematical systems): each problem is written as
// in the book, with its inequalities g(x) >= 0 turned into -g(x) <= 0 and its bounds as affine
// inequalities (they are constraints: HS71's x1 >= 1 is active at x*). Gradients come from
// Eigen's forward automatic differentiation (unsupported/Eigen/AutoDiff), an independent
// reference for the derivatives; the Hessian of the Lagrangian is check_kkt's finite
// difference of gradients unless a problem gives its (constant) Hessians by hand.

using ad = Eigen::AutoDiffScalar<VectorXd>;
using ad_vector = Eigen::Matrix<ad, Eigen::Dynamic, 1>;
using ad_function = std::function<ad(const ad_vector&)>;

struct hs_constraint {
  std::string name;
  constraint_type type;
  constraint_kind kind;
  ad_function c;                  // c(x) <= 0 or c(x) = 0
  MatrixXd hessian = MatrixXd();  // constant Hessian, when given by hand
};

struct hs_problem {
  int number = 0;
  Index n = 0;
  ad_function f;
  std::vector<hs_constraint> constraints;
  VectorXd x_star;  // the published optimal point
  double f_star = 0;
  bool convex = false;  // f and every inequality convex, every equality affine
  kkt_classification expected = kkt_classification::not_checked;
  // The published x* of most problems here is exact (integers, fractions, closed forms); two
  // (HS65, HS71) are printed with 7 to 8 significant digits, so the residuals at them are of
  // order 1e-7 relative: they are checked with tolerance 1e-5, the exact ones with 1e-9.
  double tolerance = 1e-9;
  VectorXd perturbation;                    // x* + perturbation is not a KKT point ...
  std::string rejected_by;                  // ... and this residual says so
  MatrixXd objective_hessian = MatrixXd();  // constant, when given by hand
};

// Constraint builders in the book's words.
inline hs_constraint ge(std::string name, constraint_kind kind, ad_function g) {  // g(x) >= 0
  return {std::move(name), constraint_type::inequality, kind,
          [g](const ad_vector& x) { return ad(-g(x)); }};
}
inline hs_constraint le(std::string name, constraint_kind kind, ad_function g) {  // g(x) <= 0
  return {std::move(name), constraint_type::inequality, kind, std::move(g)};
}
inline hs_constraint eq(std::string name, constraint_kind kind, ad_function h) {  // h(x) = 0
  return {std::move(name), constraint_type::equality, kind, std::move(h)};
}
inline hs_constraint lower(Index j, double l) {  // l <= x_j
  return {"x" + std::to_string(j + 1) + ">=" + detail::format_figure(l),
          constraint_type::inequality, constraint_kind::affine,
          [j, l](const ad_vector& x) { return ad(l - x(j)); }};
}
inline hs_constraint upper(Index j, double u) {  // x_j <= u
  return {"x" + std::to_string(j + 1) + "<=" + detail::format_figure(u),
          constraint_type::inequality, constraint_kind::affine,
          [j, u](const ad_vector& x) { return ad(x(j) - u); }};
}
inline MatrixXd diagonal(std::initializer_list<double> d) { return MatrixXd(vec(d).asDiagonal()); }

inline ad_vector seeded(const VectorXd& x) {
  ad_vector s(x.size());
  for (Index i = 0; i < x.size(); ++i) s(i) = ad(x(i), x.size(), i);
  return s;
}

// A derivative vector of the right size (AutoDiff leaves it empty for a constant).
inline VectorXd gradient_of(const ad& v, Index n) {
  return v.derivatives().size() == n ? VectorXd(v.derivatives()) : VectorXd::Zero(n);
}

inline callback_model model_of(const hs_problem& p, bool hand_hessians = true) {
  auto shared = std::make_shared<hs_problem>(p);
  callback_model m;
  m.variables = p.n;
  for (const auto& c : p.constraints) {
    m.types.push_back(c.type);
    m.kinds.push_back(c.kind);
    m.labels.push_back(c.name);
  }
  m.convex_model = p.convex;
  m.objective = [shared](const VectorXd& x) { return shared->f(seeded(x)).value(); };
  m.objective_gradient = [shared](const VectorXd& x) {
    return gradient_of(shared->f(seeded(x)), shared->n);
  };
  m.constraint_values = [shared](const VectorXd& x) {
    VectorXd v(Index(shared->constraints.size()));
    const ad_vector s = seeded(x);
    for (Index i = 0; i < v.size(); ++i) v(i) = shared->constraints[std::size_t(i)].c(s).value();
    return v;
  };
  m.constraint_jacobian = [shared](const VectorXd& x) {
    MatrixXd j(Index(shared->constraints.size()), shared->n);
    const ad_vector s = seeded(x);
    for (Index i = 0; i < j.rows(); ++i)
      j.row(i) = gradient_of(shared->constraints[std::size_t(i)].c(s), shared->n).transpose();
    return j;
  };
  if (hand_hessians && p.objective_hessian.size() > 0) {
    m.objective_hessian = [shared](const VectorXd&) { return shared->objective_hessian; };
    m.constraint_hessian = [shared](const VectorXd&, Index i) {
      const MatrixXd& h = shared->constraints[std::size_t(i)].hessian;
      return h.size() > 0 ? h : MatrixXd(MatrixXd::Zero(shared->n, shared->n));
    };
  }
  return m;
}

inline kkt_options options_for(const hs_problem& p) {
  kkt_options o;
  o.activity.activity_tolerance = p.tolerance;
  o.stationarity_tolerance = o.dual_tolerance = o.complementarity_tolerance = p.tolerance;
  return o;
}

inline std::vector<hs_problem> hock_schittkowski() {
  using k = constraint_kind;
  const double s3 = std::sqrt(3.0), s7 = std::sqrt(7.0);
  const auto rosenbrock = [](const ad_vector& x) {
    return ad(100 * (x(1) - x(0) * x(0)) * (x(1) - x(0) * x(0)) + (1 - x(0)) * (1 - x(0)));
  };
  std::vector<hs_problem> list;
  hs_problem p;

  // HS6: min (1 - x1)^2 s.t. 10 (x2 - x1^2) = 0; x* = (1, 1), f* = 0.
  p = {};
  p.number = 6;
  p.n = 2;
  p.f = [](const ad_vector& x) { return ad((1 - x(0)) * (1 - x(0))); };
  p.constraints = {
      eq("h", k::nonlinear, [](const ad_vector& x) { return ad(10 * (x(1) - x(0) * x(0))); })};
  p.x_star = vec({1, 1});
  p.f_star = 0;
  // Hand-checked: mu = 0, the Hessian of L is diag(2, 0), and on null(grad h) = span(1, 2)
  // its value 2 > 0: second-order sufficient conditions.
  p.expected = kkt_classification::strict_local_min;
  p.perturbation = vec({1e-3, 0});  // h = -0.02: off the constraint
  p.rejected_by = "primal";
  list.push_back(p);

  // HS7: min ln(1 + x1^2) - x2 s.t. (1 + x1^2)^2 + x2^2 - 4 = 0; x* = (0, sqrt 3), f* = -sqrt 3.
  p = {};
  p.number = 7;
  p.n = 2;
  p.f = [](const ad_vector& x) { return ad(log(1 + x(0) * x(0)) - x(1)); };
  p.constraints = {eq("h", k::nonlinear, [](const ad_vector& x) {
    return ad((1 + x(0) * x(0)) * (1 + x(0) * x(0)) + x(1) * x(1) - 4);
  })};
  p.x_star = vec({0, s3});
  p.f_star = -s3;
  // Hand-checked: mu = 1/(2 sqrt 3); on null(grad h) = span(e1) the Hessian of L is 2 + 4 mu.
  p.expected = kkt_classification::strict_local_min;
  p.perturbation = vec({0, 1e-3});
  p.rejected_by = "primal";
  list.push_back(p);

  // HS8: min -1 s.t. x1^2 + x2^2 - 25 = 0, x1 x2 - 9 = 0: x* = ((sqrt 43 + sqrt 7)/2,
  // (sqrt 43 - sqrt 7)/2) (hand-derived: (x1 + x2)^2 = 43, (x1 - x2)^2 = 7), f* = -1. Two
  // independent equalities in two variables: an isolated feasible point, null space {0}.
  p = {};
  p.number = 8;
  p.n = 2;
  p.f = [](const ad_vector&) { return ad(-1.0); };
  p.constraints = {
      eq("circle", k::nonlinear,
         [](const ad_vector& x) { return ad(x(0) * x(0) + x(1) * x(1) - 25); }),
      eq("hyperbola", k::nonlinear, [](const ad_vector& x) { return ad(x(0) * x(1) - 9); })};
  p.x_star = vec({(std::sqrt(43.0) + s7) / 2, (std::sqrt(43.0) - s7) / 2});
  p.f_star = -1;
  p.expected = kkt_classification::strict_local_min;
  p.perturbation = vec({1e-3, 0});
  p.rejected_by = "primal";
  list.push_back(p);

  // HS9: min sin(pi x1/12) cos(pi x2/16) s.t. 4 x1 - 3 x2 = 0; x* = (-3, -4), f* = -0.5.
  p = {};
  p.number = 9;
  p.n = 2;
  p.f = [](const ad_vector& x) { return ad(sin(pi * x(0) / 12) * cos(pi * x(1) / 16)); };
  p.constraints = {
      eq("line", k::affine, [](const ad_vector& x) { return ad(4 * x(0) - 3 * x(1)); })};
  p.x_star = vec({-3, -4});
  p.f_star = -0.5;
  // Hand-checked: along the line d = (3, 4), d^T H d = pi^2/8 > 0.
  p.expected = kkt_classification::strict_local_min;
  p.perturbation = vec({3e-3, 4e-3});  // along the line: feasible, but no longer stationary
  p.rejected_by = "stationarity";
  list.push_back(p);

  // HS10: min x1 - x2 s.t. -3 x1^2 + 2 x1 x2 - x2^2 + 1 >= 0; x* = (0, 1), f* = -1. The
  // constraint function 3 x1^2 - 2 x1 x2 + x2^2 - 1 is convex (Hessian [6 -2; -2 2] > 0).
  p = {};
  p.number = 10;
  p.n = 2;
  p.f = [](const ad_vector& x) { return ad(x(0) - x(1)); };
  p.constraints = {ge("g", k::convex, [](const ad_vector& x) {
    return ad(-3 * x(0) * x(0) + 2 * x(0) * x(1) - x(1) * x(1) + 1);
  })};
  p.x_star = vec({0, 1});
  p.f_star = -1;
  p.convex = true;
  p.expected = kkt_classification::global_min;
  p.perturbation = vec({0, -1e-3});  // strictly inside: g inactive, grad f = (1, -1) remains
  p.rejected_by = "stationarity";
  list.push_back(p);

  // HS11: min (x1 - 5)^2 + x2^2 - 25 s.t. -x1^2 + x2 >= 0; f* = -8.498464223 (from memory).
  // x*: the KKT conditions give x2 = x1^2 and 2 x1^3 + x1 - 5 = 0 (hand-derived), solved here
  // by Newton's method; f at that point is compared with the published f*.
  p = {};
  p.number = 11;
  p.n = 2;
  p.f = [](const ad_vector& x) { return ad((x(0) - 5) * (x(0) - 5) + x(1) * x(1) - 25); };
  p.constraints = {ge("g", k::convex, [](const ad_vector& x) { return ad(-x(0) * x(0) + x(1)); })};
  double r = 1.2;
  for (int it = 0; it < 50; ++it) r -= (2 * r * r * r + r - 5) / (6 * r * r + 1);
  p.x_star = vec({r, r * r});
  p.f_star = -8.498464223;
  p.convex = true;
  p.expected = kkt_classification::global_min;
  p.perturbation = vec({0, 1e-3});  // inside: the constraint leaves, grad f does not vanish
  p.rejected_by = "stationarity";
  list.push_back(p);

  // HS12: min 0.5 x1^2 + x2^2 - x1 x2 - 7 x1 - 7 x2 s.t. 25 - 4 x1^2 - x2^2 >= 0;
  // x* = (2, 3), f* = -30. Hessians by hand: f [1 -1; -1 2], the constraint diag(8, 2).
  p = {};
  p.number = 12;
  p.n = 2;
  p.f = [](const ad_vector& x) {
    return ad(0.5 * x(0) * x(0) + x(1) * x(1) - x(0) * x(1) - 7 * x(0) - 7 * x(1));
  };
  p.constraints = {ge("ellipse", k::convex,
                      [](const ad_vector& x) { return ad(25 - 4 * x(0) * x(0) - x(1) * x(1)); })};
  p.constraints[0].hessian = diagonal({8, 2});
  p.objective_hessian = (MatrixXd(2, 2) << 1, -1, -1, 2).finished();
  p.x_star = vec({2, 3});
  p.f_star = -30;
  p.convex = true;
  p.expected = kkt_classification::global_min;
  p.perturbation = vec({-1e-3, 0});
  p.rejected_by = "stationarity";
  list.push_back(p);

  // HS14: min (x1 - 2)^2 + (x2 - 1)^2 s.t. -x1^2/4 - x2^2 + 1 >= 0, x1 - 2 x2 + 1 = 0;
  // x* = ((sqrt 7 - 1)/2, (sqrt 7 + 1)/4), f* = 9 - 23 sqrt(7)/8.
  p = {};
  p.number = 14;
  p.n = 2;
  p.f = [](const ad_vector& x) { return ad((x(0) - 2) * (x(0) - 2) + (x(1) - 1) * (x(1) - 1)); };
  p.constraints = {
      ge("ellipse", k::convex,
         [](const ad_vector& x) { return ad(-x(0) * x(0) / 4 - x(1) * x(1) + 1); }),
      eq("line", k::affine, [](const ad_vector& x) { return ad(x(0) - 2 * x(1) + 1); })};
  p.x_star = vec({(s7 - 1) / 2, (s7 + 1) / 4});
  p.f_star = 9 - 23 * s7 / 8;
  p.convex = true;
  p.expected = kkt_classification::global_min;
  p.perturbation = vec({-2e-3, -1e-3});  // along the line, into the ellipse
  p.rejected_by = "stationarity";
  list.push_back(p);

  // HS15: min 100 (x2 - x1^2)^2 + (1 - x1)^2 s.t. x1 x2 - 1 >= 0, x1 + x2^2 >= 0, x1 <= 0.5;
  // x* = (0.5, 2), f* = 306.5. Two active constraints in two variables: a vertex.
  p = {};
  p.number = 15;
  p.n = 2;
  p.f = rosenbrock;
  p.constraints = {
      ge("product", k::nonlinear, [](const ad_vector& x) { return ad(x(0) * x(1) - 1); }),
      ge("parabola", k::nonlinear, [](const ad_vector& x) { return ad(x(0) + x(1) * x(1)); }),
      upper(0, 0.5)};
  p.x_star = vec({0.5, 2});
  p.f_star = 306.5;
  p.expected = kkt_classification::strict_local_min;
  p.perturbation = vec({0, 1e-3});  // the product constraint leaves; df/dx2 = 350 remains
  p.rejected_by = "stationarity";
  list.push_back(p);

  // HS16: Rosenbrock s.t. x1 + x2^2 >= 0, x1^2 + x2 >= 0, -0.5 <= x1 <= 0.5, x2 <= 1;
  // x* = (0.5, 0.25), f* = 0.25.
  p = {};
  p.number = 16;
  p.n = 2;
  p.f = rosenbrock;
  p.constraints = {
      ge("g1", k::nonlinear, [](const ad_vector& x) { return ad(x(0) + x(1) * x(1)); }),
      ge("g2", k::nonlinear, [](const ad_vector& x) { return ad(x(0) * x(0) + x(1)); }),
      lower(0, -0.5), upper(0, 0.5), upper(1, 1)};
  p.x_star = vec({0.5, 0.25});
  p.f_star = 0.25;
  // Hand-checked: only x1 <= 0.5 is active (multiplier 1); on null(e1) = span(e2) the
  // Hessian of f is 200 > 0.
  p.expected = kkt_classification::strict_local_min;
  p.perturbation = vec({-1e-3, 0});
  p.rejected_by = "stationarity";
  list.push_back(p);

  // HS17: Rosenbrock s.t. x2^2 - x1 >= 0, x1^2 - x2 >= 0, -0.5 <= x1 <= 0.5, x2 <= 1;
  // x* = (0, 0), f* = 1. Hand-checked: multipliers (2, 0): the second constraint is weakly
  // active, yet the Hessian of L, diag(2, 196), is positive on null(grad g1) = span(e2), the
  // larger subspace: the sufficient test decides.
  p = {};
  p.number = 17;
  p.n = 2;
  p.f = rosenbrock;
  p.constraints = {
      ge("g1", k::nonlinear, [](const ad_vector& x) { return ad(x(1) * x(1) - x(0)); }),
      ge("g2", k::nonlinear, [](const ad_vector& x) { return ad(x(0) * x(0) - x(1)); }),
      lower(0, -0.5), upper(0, 0.5), upper(1, 1)};
  p.x_star = vec({0, 0});
  p.f_star = 1;
  p.expected = kkt_classification::strict_local_min;
  p.perturbation = vec({-1e-3, 0});
  p.rejected_by = "stationarity";
  list.push_back(p);

  // HS19: min (x1 - 10)^3 + (x2 - 20)^3 s.t. (x1 - 5)^2 + (x2 - 5)^2 - 100 >= 0,
  // -(x2 - 5)^2 - (x1 - 6)^2 + 82.81 >= 0, 13 <= x1 <= 100, 0 <= x2 <= 100;
  // x* = (14.095, 0.84296079), f* = -6961.81381 (from memory). Both circles are active:
  // subtracting them gives 2 x1 - 11 = 17.19, so x1 = 14.095 exactly and x2 = 5 -
  // sqrt(100 - 9.095^2) (hand-derived); the published x2 agrees to its 8 digits.
  p = {};
  p.number = 19;
  p.n = 2;
  p.f = [](const ad_vector& x) {
    return ad((x(0) - 10) * (x(0) - 10) * (x(0) - 10) + (x(1) - 20) * (x(1) - 20) * (x(1) - 20));
  };
  p.constraints = {ge("outside", k::nonlinear,
                      [](const ad_vector& x) {
                        return ad((x(0) - 5) * (x(0) - 5) + (x(1) - 5) * (x(1) - 5) - 100);
                      }),
                   ge("inside", k::convex,
                      [](const ad_vector& x) {
                        return ad(-(x(1) - 5) * (x(1) - 5) - (x(0) - 6) * (x(0) - 6) + 82.81);
                      }),
                   lower(0, 13),
                   upper(0, 100),
                   lower(1, 0),
                   upper(1, 100)};
  p.x_star = vec({14.095, 5 - std::sqrt(100 - 9.095 * 9.095)});
  p.f_star = -6961.81381;
  p.expected = kkt_classification::strict_local_min;
  p.perturbation = vec({1e-3, 0});  // leaves the inner circle
  p.rejected_by = "primal";
  list.push_back(p);

  // HS21: min 0.01 x1^2 + x2^2 - 100 s.t. 10 x1 - x2 - 10 >= 0, 2 <= x1 <= 50,
  // -50 <= x2 <= 50; x* = (2, 0), f* = -99.96. Hessian by hand: diag(0.02, 2).
  p = {};
  p.number = 21;
  p.n = 2;
  p.f = [](const ad_vector& x) { return ad(0.01 * x(0) * x(0) + x(1) * x(1) - 100); };
  p.constraints = {ge("g", k::affine, [](const ad_vector& x) { return ad(10 * x(0) - x(1) - 10); }),
                   lower(0, 2), upper(0, 50), lower(1, -50), upper(1, 50)};
  p.objective_hessian = diagonal({0.02, 2});
  p.x_star = vec({2, 0});
  p.f_star = -99.96;
  p.convex = true;
  p.expected = kkt_classification::global_min;
  p.perturbation = vec({-1e-3, 0});  // x1 below its bound
  p.rejected_by = "primal";
  list.push_back(p);

  // HS22: min (x1 - 2)^2 + (x2 - 1)^2 s.t. -x1 - x2 + 2 >= 0, -x1^2 + x2 >= 0;
  // x* = (1, 1), f* = 1.
  p = {};
  p.number = 22;
  p.n = 2;
  p.f = [](const ad_vector& x) { return ad((x(0) - 2) * (x(0) - 2) + (x(1) - 1) * (x(1) - 1)); };
  p.constraints = {
      ge("line", k::affine, [](const ad_vector& x) { return ad(-x(0) - x(1) + 2); }),
      ge("parabola", k::convex, [](const ad_vector& x) { return ad(-x(0) * x(0) + x(1)); })};
  p.x_star = vec({1, 1});
  p.f_star = 1;
  p.convex = true;
  p.expected = kkt_classification::global_min;
  p.perturbation = vec({1e-3, 1e-3});  // across the line
  p.rejected_by = "primal";
  list.push_back(p);

  // HS23: min x1^2 + x2^2 s.t. x1 + x2 - 1 >= 0, x1^2 + x2^2 - 1 >= 0, 9 x1^2 + x2^2 - 9 >= 0,
  // x1^2 - x2 >= 0, x2^2 - x1 >= 0, -50 <= x_i <= 50; x* = (1, 1), f* = 2 (a vertex of the
  // last two).
  p = {};
  p.number = 23;
  p.n = 2;
  p.f = [](const ad_vector& x) { return ad(x(0) * x(0) + x(1) * x(1)); };
  p.constraints = {
      ge("g1", k::affine, [](const ad_vector& x) { return ad(x(0) + x(1) - 1); }),
      ge("g2", k::nonlinear, [](const ad_vector& x) { return ad(x(0) * x(0) + x(1) * x(1) - 1); }),
      ge("g3", k::nonlinear,
         [](const ad_vector& x) { return ad(9 * x(0) * x(0) + x(1) * x(1) - 9); }),
      ge("g4", k::nonlinear, [](const ad_vector& x) { return ad(x(0) * x(0) - x(1)); }),
      ge("g5", k::nonlinear, [](const ad_vector& x) { return ad(x(1) * x(1) - x(0)); }),
      lower(0, -50),
      upper(0, 50),
      lower(1, -50),
      upper(1, 50)};
  p.x_star = vec({1, 1});
  p.f_star = 2;
  p.expected = kkt_classification::strict_local_min;
  p.perturbation = vec({1e-3, 1e-3});  // g4, g5 become inactive; grad f = (2, 2) remains
  p.rejected_by = "stationarity";
  list.push_back(p);

  // HS24: min ((x1 - 3)^2 - 9) x2^3 / (27 sqrt 3) s.t. x1/sqrt 3 - x2 >= 0,
  // x1 + sqrt(3) x2 >= 0, -x1 - sqrt(3) x2 + 6 >= 0, x1, x2 >= 0; x* = (3, sqrt 3), f* = -1.
  p = {};
  p.number = 24;
  p.n = 2;
  p.f = [s3](const ad_vector& x) {
    return ad(((x(0) - 3) * (x(0) - 3) - 9) * x(1) * x(1) * x(1) / (27 * s3));
  };
  p.constraints = {
      ge("g1", k::affine, [s3](const ad_vector& x) { return ad(x(0) / s3 - x(1)); }),
      ge("g2", k::affine, [s3](const ad_vector& x) { return ad(x(0) + s3 * x(1)); }),
      ge("g3", k::affine, [s3](const ad_vector& x) { return ad(-x(0) - s3 * x(1) + 6); }),
      lower(0, 0), lower(1, 0)};
  p.x_star = vec({3, s3});
  p.f_star = -1;
  p.expected = kkt_classification::strict_local_min;
  p.perturbation = vec({-1e-3, 0});  // x1/sqrt 3 - x2 < 0
  p.rejected_by = "primal";
  list.push_back(p);

  // HS26: min (x1 - x2)^2 + (x2 - x3)^4 s.t. (1 + x2^2) x1 + x3^4 - 3 = 0; x* = (1, 1, 1),
  // f* = 0. Hand-checked: mu = 0; on null(grad h) = null((2, 2, 4)) the Hessian of f,
  // [2 -2 0; -2 2 0; 0 0 0], is positive semidefinite and zero along (1, 1, -1) (the quartic
  // term's curvature vanishes at x*): the necessary conditions hold, the sufficient do not
  // decide.
  p = {};
  p.number = 26;
  p.n = 3;
  p.f = [](const ad_vector& x) {
    const ad d = x(1) - x(2);
    return ad((x(0) - x(1)) * (x(0) - x(1)) + d * d * d * d);
  };
  p.constraints = {eq("h", k::nonlinear, [](const ad_vector& x) {
    return ad((1 + x(1) * x(1)) * x(0) + x(2) * x(2) * x(2) * x(2) - 3);
  })};
  p.x_star = vec({1, 1, 1});
  p.f_star = 0;
  p.expected = kkt_classification::kkt_unique_multipliers;
  p.perturbation = vec({1e-3, 0, 0});
  p.rejected_by = "primal";
  list.push_back(p);

  // HS27: min 0.01 (x1 - 1)^2 + (x2 - x1^2)^2 s.t. x1 + x3^2 + 1 = 0; x* = (-1, 1, 0),
  // f* = 0.04. Hand-checked: mu = 0.04; on null(grad h) = span(e2, e3) the Hessian of L is
  // diag(2, 0.08).
  p = {};
  p.number = 27;
  p.n = 3;
  p.f = [](const ad_vector& x) {
    return ad(0.01 * (x(0) - 1) * (x(0) - 1) + (x(1) - x(0) * x(0)) * (x(1) - x(0) * x(0)));
  };
  p.constraints = {
      eq("h", k::nonlinear, [](const ad_vector& x) { return ad(x(0) + x(2) * x(2) + 1); })};
  p.x_star = vec({-1, 1, 0});
  p.f_star = 0.04;
  p.expected = kkt_classification::strict_local_min;
  p.perturbation = vec({1e-3, 0, 0});
  p.rejected_by = "primal";
  list.push_back(p);

  // HS28: min (x1 + x2)^2 + (x2 + x3)^2 s.t. x1 + 2 x2 + 3 x3 - 1 = 0; x* = (0.5, -0.5, 0.5),
  // f* = 0. Hessian by hand: 2 [1 1 0; 1 2 1; 0 1 1].
  p = {};
  p.number = 28;
  p.n = 3;
  p.f = [](const ad_vector& x) {
    return ad((x(0) + x(1)) * (x(0) + x(1)) + (x(1) + x(2)) * (x(1) + x(2)));
  };
  p.constraints = {eq("plane", k::affine,
                      [](const ad_vector& x) { return ad(x(0) + 2 * x(1) + 3 * x(2) - 1); })};
  p.objective_hessian = 2 * (MatrixXd(3, 3) << 1, 1, 0, 1, 2, 1, 0, 1, 1).finished();
  p.x_star = vec({0.5, -0.5, 0.5});
  p.f_star = 0;
  p.convex = true;
  p.expected = kkt_classification::global_min;
  p.perturbation = vec({1e-3, 1e-3, -1e-3});  // within the plane
  p.rejected_by = "stationarity";
  list.push_back(p);

  // HS32: min (x1 + 3 x2 + x3)^2 + 4 (x1 - x2)^2 s.t. 6 x2 + 4 x3 - x1^3 - 3 >= 0,
  // 1 - x1 - x2 - x3 = 0, x_i >= 0; x* = (0, 0, 1), f* = 1. Hand-checked: mu = 2 (on
  // 1 - sum x = 0), multiplier 4 on x2 >= 0 and 0 on x1 >= 0 (weakly active); on
  // null([grad h; e2]) = span(1, 0, -1) the Hessian of f gives 8 > 0.
  p = {};
  p.number = 32;
  p.n = 3;
  p.f = [](const ad_vector& x) {
    const ad s = x(0) + 3 * x(1) + x(2);
    return ad(s * s + 4 * (x(0) - x(1)) * (x(0) - x(1)));
  };
  p.constraints = {
      ge("g", k::nonlinear,
         [](const ad_vector& x) { return ad(6 * x(1) + 4 * x(2) - x(0) * x(0) * x(0) - 3); }),
      eq("sum", k::affine, [](const ad_vector& x) { return ad(1 - x(0) - x(1) - x(2)); }),
      lower(0, 0), lower(1, 0), lower(2, 0)};
  p.x_star = vec({0, 0, 1});
  p.f_star = 1;
  p.expected = kkt_classification::strict_local_min;
  p.perturbation = vec({1e-3, 0, -1e-3});  // keeps the sum, leaves x1 >= 0
  p.rejected_by = "stationarity";
  list.push_back(p);

  // HS35: min 9 - 8 x1 - 6 x2 - 4 x3 + 2 x1^2 + 2 x2^2 + x3^2 + 2 x1 x2 + 2 x1 x3 s.t.
  // 3 - x1 - x2 - 2 x3 >= 0, x_i >= 0; x* = (4/3, 7/9, 4/9), f* = 1/9. Hessian by hand.
  p = {};
  p.number = 35;
  p.n = 3;
  p.f = [](const ad_vector& x) {
    return ad(9 - 8 * x(0) - 6 * x(1) - 4 * x(2) + 2 * x(0) * x(0) + 2 * x(1) * x(1) + x(2) * x(2) +
              2 * x(0) * x(1) + 2 * x(0) * x(2));
  };
  p.constraints = {
      ge("g", k::affine, [](const ad_vector& x) { return ad(3 - x(0) - x(1) - 2 * x(2)); }),
      lower(0, 0), lower(1, 0), lower(2, 0)};
  p.objective_hessian = (MatrixXd(3, 3) << 4, 2, 2, 2, 4, 0, 2, 0, 2).finished();
  p.x_star = vec({4.0 / 3, 7.0 / 9, 4.0 / 9});
  p.f_star = 1.0 / 9;
  p.convex = true;
  p.expected = kkt_classification::global_min;
  p.perturbation = vec({-1e-3, 0, 0});
  p.rejected_by = "stationarity";
  list.push_back(p);

  // HS43 (Rosen and Suzuki): min x1^2 + x2^2 + 2 x3^2 + x4^2 - 5 x1 - 5 x2 - 21 x3 + 7 x4 s.t.
  // three convex quadratic inequalities; x* = (0, 1, 2, -1), f* = -44, multipliers (1, 0, 2)
  // (from memory: the second constraint is inactive at x*). Hessians by hand.
  p = {};
  p.number = 43;
  p.n = 4;
  p.f = [](const ad_vector& x) {
    return ad(x(0) * x(0) + x(1) * x(1) + 2 * x(2) * x(2) + x(3) * x(3) - 5 * x(0) - 5 * x(1) -
              21 * x(2) + 7 * x(3));
  };
  p.constraints = {
      ge("g1", k::convex,
         [](const ad_vector& x) {
           return ad(8 - x(0) * x(0) - x(1) * x(1) - x(2) * x(2) - x(3) * x(3) - x(0) + x(1) -
                     x(2) + x(3));
         }),
      ge("g2", k::convex,
         [](const ad_vector& x) {
           return ad(10 - x(0) * x(0) - 2 * x(1) * x(1) - x(2) * x(2) - 2 * x(3) * x(3) + x(0) +
                     x(3));
         }),
      ge("g3", k::convex, [](const ad_vector& x) {
        return ad(5 - 2 * x(0) * x(0) - x(1) * x(1) - x(2) * x(2) - 2 * x(0) + x(1) + x(3));
      })};
  p.constraints[0].hessian = diagonal({2, 2, 2, 2});
  p.constraints[1].hessian = diagonal({2, 4, 2, 4});
  p.constraints[2].hessian = diagonal({4, 2, 2, 0});
  p.objective_hessian = diagonal({2, 2, 4, 2});
  p.x_star = vec({0, 1, 2, -1});
  p.f_star = -44;
  p.convex = true;
  p.expected = kkt_classification::global_min;
  p.perturbation = vec({1e-3, 0, 0, 0});  // g1 grows: violated
  p.rejected_by = "primal";
  list.push_back(p);

  // HS48: min (x1 - 1)^2 + (x2 - x3)^2 + (x4 - x5)^2 s.t. sum x - 5 = 0,
  // x3 - 2 (x4 + x5) + 3 = 0; x* = (1, 1, 1, 1, 1), f* = 0.
  p = {};
  p.number = 48;
  p.n = 5;
  p.f = [](const ad_vector& x) {
    return ad((x(0) - 1) * (x(0) - 1) + (x(1) - x(2)) * (x(1) - x(2)) +
              (x(3) - x(4)) * (x(3) - x(4)));
  };
  p.constraints = {
      eq("sum", k::affine, [](const ad_vector& x) { return ad(x.sum() - 5); }),
      eq("h2", k::affine, [](const ad_vector& x) { return ad(x(2) - 2 * (x(3) + x(4)) + 3); })};
  p.x_star = vec({1, 1, 1, 1, 1});
  p.f_star = 0;
  p.convex = true;
  p.expected = kkt_classification::global_min;
  p.perturbation = vec({1e-3, 0, 0, 0, 0});
  p.rejected_by = "primal";
  list.push_back(p);

  // HS65: min (x1 - x2)^2 + (x1 + x2 - 10)^2/9 + (x3 - 5)^2 s.t. 48 - x1^2 - x2^2 - x3^2 >= 0,
  // -4.5 <= x1, x2 <= 4.5, -5 <= x3 <= 5; x* = (3.650461821, 3.65046168, 4.6204170507),
  // f* = 0.9535288567 (from memory; 7 to 8 digits: checked with tolerance 1e-5).
  p = {};
  p.number = 65;
  p.n = 3;
  p.f = [](const ad_vector& x) {
    return ad((x(0) - x(1)) * (x(0) - x(1)) + (x(0) + x(1) - 10) * (x(0) + x(1) - 10) / 9 +
              (x(2) - 5) * (x(2) - 5));
  };
  p.constraints = {
      ge("ball", k::convex, [](const ad_vector& x) { return ad(48 - x.squaredNorm()); }),
      lower(0, -4.5),
      upper(0, 4.5),
      lower(1, -4.5),
      upper(1, 4.5),
      lower(2, -5),
      upper(2, 5)};
  p.x_star = vec({3.650461821, 3.65046168, 4.6204170507});
  p.f_star = 0.9535288567;
  p.convex = true;
  p.tolerance = 1e-5;
  p.expected = kkt_classification::global_min;
  p.perturbation = vec({-1e-3, -1e-3, -1e-3});  // into the ball
  p.rejected_by = "stationarity";
  list.push_back(p);

  // HS71: min x1 x4 (x1 + x2 + x3) + x3 s.t. x1 x2 x3 x4 - 25 >= 0, sum x_i^2 - 40 = 0,
  // 1 <= x_i <= 5; x* = (1, 4.7429994, 3.8211503, 1.3794082), f* = 17.0140173 (from memory;
  // 8 digits: tolerance 1e-5). The reduced Hessian on the one-dimensional null space of the
  // three active gradients is 1.18 (computed independently with NumPy at a more accurate x*).
  p = {};
  p.number = 71;
  p.n = 4;
  p.f = [](const ad_vector& x) { return ad(x(0) * x(3) * (x(0) + x(1) + x(2)) + x(2)); };
  p.constraints = {
      ge("product", k::nonlinear,
         [](const ad_vector& x) { return ad(x(0) * x(1) * x(2) * x(3) - 25); }),
      eq("sphere", k::nonlinear, [](const ad_vector& x) { return ad(x.squaredNorm() - 40); })};
  for (Index j = 0; j < 4; ++j) {
    p.constraints.push_back(lower(j, 1));
    p.constraints.push_back(upper(j, 5));
  }
  p.x_star = vec({1, 4.7429994, 3.8211503, 1.3794082});
  p.f_star = 17.0140173;
  p.tolerance = 1e-5;
  p.expected = kkt_classification::strict_local_min;
  p.perturbation = vec({0, 0, 0, 1e-3});  // off the sphere
  p.rejected_by = "primal";
  list.push_back(p);

  // HS76: min x1^2 + 0.5 x2^2 + x3^2 + 0.5 x4^2 - x1 x3 + x3 x4 - x1 - 3 x2 + x3 - x4 s.t.
  // 5 - x1 - 2 x2 - x3 - x4 >= 0, 4 - 3 x1 - x2 - 2 x3 + x4 >= 0, x2 + 4 x3 - 1.5 >= 0,
  // x_i >= 0; published x* = (0.2727273, 2.090909, -0.26e-10, 0.5454545), f* = -4.681818181:
  // exactly (3/11, 23/11, 0, 6/11), f* = -103/22 (hand-derived from the KKT conditions with
  // the first constraint and x3 >= 0 active: multipliers 5/11 and 19/11).
  p = {};
  p.number = 76;
  p.n = 4;
  p.f = [](const ad_vector& x) {
    return ad(x(0) * x(0) + 0.5 * x(1) * x(1) + x(2) * x(2) + 0.5 * x(3) * x(3) - x(0) * x(2) +
              x(2) * x(3) - x(0) - 3 * x(1) + x(2) - x(3));
  };
  p.constraints = {
      ge("g1", k::affine, [](const ad_vector& x) { return ad(5 - x(0) - 2 * x(1) - x(2) - x(3)); }),
      ge("g2", k::affine,
         [](const ad_vector& x) { return ad(4 - 3 * x(0) - x(1) - 2 * x(2) + x(3)); }),
      ge("g3", k::affine, [](const ad_vector& x) { return ad(x(1) + 4 * x(2) - 1.5); }),
      lower(0, 0),
      lower(1, 0),
      lower(2, 0),
      lower(3, 0)};
  p.objective_hessian =
      (MatrixXd(4, 4) << 2, 0, -1, 0, 0, 1, 0, 0, -1, 0, 2, 1, 0, 0, 1, 1).finished();
  p.x_star = vec({3.0 / 11, 23.0 / 11, 0, 6.0 / 11});
  p.f_star = -103.0 / 22;
  p.convex = true;
  p.expected = kkt_classification::global_min;
  p.perturbation = vec({-1e-3, 0, 0, 0});
  p.rejected_by = "stationarity";
  list.push_back(p);
  return list;
}

/// A point where every row is active (x = 0, values 0) and grad f = -G^T lambda_star.
inline model_at_point vertex(const MatrixXd& g, const VectorXd& lambda_star,
                             const std::vector<constraint_type>& types) {
  model_at_point p;
  p.x = VectorXd::Zero(g.cols());
  p.objective_gradient = -g.transpose() * lambda_star;
  p.objective_hessian = MatrixXd::Zero(g.cols(), g.cols());
  p.values = VectorXd::Zero(g.rows());
  p.jacobian = g;
  p.types = types;
  p.kinds.assign(std::size_t(g.rows()), constraint_kind::affine);
  p.convex_model = true;
  return p;
}

/// f with the given gradient and Hessian at x = 0 and optionally the constraint -x2 <= 0.
inline model_at_point quadratic_at_origin(const MatrixXd& hessian, bool floor) {
  model_at_point p;
  p.x = VectorXd::Zero(2);
  p.objective_gradient = VectorXd::Zero(2);
  p.objective_hessian = hessian;
  p.jacobian.resize(floor ? 1 : 0, 2);
  p.values = VectorXd::Zero(floor ? 1 : 0);
  if (floor) {
    p.jacobian << 0, -1;
    p.types = {constraint_type::inequality};
    p.kinds = {constraint_kind::affine};
  }
  return p;
}

/// H. W. Kuhn and A. W. Tucker, "Nonlinear programming", Proc. Second Berkeley Symposium on
/// Mathematical Statistics and Probability, 1951: min -x1 s.t. x2 - (1 - x1)^3 <= 0, -x2 <= 0;
/// (1, 0) is the minimiser, and the active gradients (0, 1) and (0, -1) cannot balance
/// grad f = (-1, 0): no CQ holds and no multipliers exist.
inline hs_problem kuhn_tucker_cusp() {
  hs_problem cusp;
  cusp.n = 2;
  cusp.f = [](const ad_vector& x) { return ad(-x(0)); };
  cusp.constraints = {
      le("cusp", constraint_kind::nonlinear,
         [](const ad_vector& x) { return ad(x(1) - (1 - x(0)) * (1 - x(0)) * (1 - x(0))); }),
      le("floor", constraint_kind::affine, [](const ad_vector& x) { return ad(-x(1)); })};
  return cusp;
}

/// min x s.t. x^2 <= 0 at its only feasible point (DESIGN.md, section 2): a convex model
/// without a Slater point; the gradient of x^2 vanishes at 0, so no multiplier balances f' = 1
/// (hand-checked).
inline model_at_point square_at_zero() {
  model_at_point p;
  p.x = vec({0});
  p.objective_gradient = vec({1});
  p.objective_hessian = MatrixXd::Zero(1, 1);
  p.values = vec({0});
  p.jacobian = MatrixXd::Zero(1, 1);
  p.types = {constraint_type::inequality};
  p.kinds = {constraint_kind::convex};
  p.labels = {"square"};
  p.hessians = {MatrixXd::Constant(1, 1, 2.0)};
  p.convex_model = true;
  return p;
}

/// The apex of a square pyramid, x3 >= |x1|, x3 >= |x2|: four planes through the apex of R^3
/// whose gradients (+-1, 0, -1), (0, +-1, -1) are dependent (g4 = g1 + g2 - g3), and
/// d = (0, 0, 1) decreases all four (MFCQ). With grad f = -(1 g1 + 2 g2 + 3 g3 + 1 g4) =
/// (1, -2, 7) the multipliers solve l1 - l2 = -1, l3 - l4 = 2, l1 + l2 + l3 + l4 = 7, l >= 0
/// (hand-derived): the segment l1 in [0, 2], l2 = l1 + 1 in [1, 3], l4 = 2 - l1 in [0, 2],
/// l3 = l4 + 2 in [2, 4].
inline model_at_point square_pyramid() {
  MatrixXd g(4, 3);
  g << 1, 0, -1, -1, 0, -1, 0, 1, -1, 0, -1, -1;
  model_at_point p =
      vertex(g, vec({1, 2, 3, 1}), std::vector<constraint_type>(4, constraint_type::inequality));
  p.labels = {"east", "west", "north", "south"};
  return p;
}

/// Seven planes through a point of R^4: random integer gradients whose last entry is -1, so
/// that d = (0, 0, 0, 1) decreases them all (MFCQ); grad f from a positive combination; a
/// three-dimensional multiplier polytope. Seeded: the same data every run.
inline model_at_point seven_planes() {
  std::mt19937 rng(20261207);
  std::uniform_int_distribution<int> entry(-3, 3), weight(1, 5);
  MatrixXd g(7, 4);
  VectorXd lambda(7);
  for (Index i = 0; i < 7; ++i) {
    for (Index j = 0; j < 3; ++j) g(i, j) = entry(rng);
    g(i, 3) = -1;
    lambda(i) = weight(rng);
  }
  return vertex(g, lambda, std::vector<constraint_type>(7, constraint_type::inequality));
}

/// min x1 + x2^2 s.t. x1 = 0 (twice) at 0: mu1 + mu2 = -1 is all that is fixed, so both
/// multipliers are unbounded (hand-checked).
inline model_at_point equality_twice() {
  MatrixXd g(2, 2);
  g << 1, 0, 1, 0;
  model_at_point p =
      vertex(g, vec({-0.5, -0.5}), std::vector<constraint_type>(2, constraint_type::equality));
  p.objective_hessian = MatrixXd(vec({0, 2}).asDiagonal());
  p.convex_model = false;
  return p;
}

/// The README's farm tank with two rows: grad f = (8, 8) = 8 (1, 1), only `demand` active
/// (hand-checked: multiplier 8).
inline model_at_point tank_point() {
  model_at_point p;
  p.x = vec({4, 2});
  p.objective_gradient = vec({8, 8});
  p.objective_hessian = MatrixXd(vec({2, 4}).asDiagonal());
  p.values = vec({0, -3});
  p.jacobian = (MatrixXd(2, 2) << -1, -1, 0, 1).finished();
  p.types.assign(2, constraint_type::inequality);
  p.kinds.assign(2, constraint_kind::affine);
  p.labels = {"demand", "roof"};
  return p;
}

}  // namespace qualify_test
