// Fuzz target: check_affine_slater on fuzzed systems row_lower <= A x <= row_upper,
// col_lower <= x <= col_upper; a strictly feasible point is checked on the data.
// SPDX-License-Identifier: MIT
#include <qualify/slater.hpp>

#include <cmath>

#include "fuzz_input.hpp"

using namespace qualify_fuzz;
using qualify::verdict;
using ld = long double;

namespace {

/// A bound: mostly a number from the decoder (NaN and +-Inf included), often absent.
double bound(byte_source& in, double absent) { return in.byte() % 4 == 0 ? absent : in.number(); }

/// Whether the documented validation refuses the bounds: NaN, an infinity on the wrong side,
/// lower above upper.
bool refused(const Eigen::VectorXd& lo, const Eigen::VectorXd& up) {
  const double inf = std::numeric_limits<double>::infinity();
  for (Index i = 0; i < lo.size(); ++i)
    if (std::isnan(lo(i)) || std::isnan(up(i)) || lo(i) == inf || up(i) == -inf || lo(i) > up(i))
      return true;
  return false;
}

/// The relative slack of one side at a value (the formula of affine_slater_options).
ld slack(ld value, double b, bool lower, ld scale) {
  const ld s = lower ? value - ld(b) : ld(b) - value;
  const ld weight = scale + std::abs(ld(b));
  return weight > 0 ? s / weight : (s > 0 ? 1 : s < 0 ? -1 : 0);
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  byte_source in(data, size);
  const double inf = std::numeric_limits<double>::infinity();
  const Index m = in.size(7), n = in.size(7);
  const Eigen::MatrixXd a = in.matrix(m, n);
  Eigen::VectorXd rl(m), ru(m), cl(n), cu(n);
  for (Index i = 0; i < m; ++i) {
    rl(i) = bound(in, -inf);
    ru(i) = in.byte() % 4 == 0 ? rl(i) : bound(in, inf);  // equalities now and then
  }
  for (Index j = 0; j < n; ++j) {
    cl(j) = bound(in, -inf);
    cu(j) = in.byte() % 8 == 0 ? cl(j) : bound(in, inf);
  }
  const bool bad = !a.allFinite() || refused(rl, ru) || refused(cl, cu);
  const qualify::affine_slater_options options;
  const qualify::affine_slater_report rep = qualify::check_affine_slater(a, rl, ru, cl, cu, options);
  QUALIFY_FUZZ_ASSERT((rep.result == verdict::invalid_input) == bad);
  if (bad) return 0;
  QUALIFY_FUZZ_ASSERT(rep.result == verdict::holds || rep.result == verdict::fails ||
                      rep.result == verdict::undecided);
  QUALIFY_FUZZ_ASSERT((rep.refined_slater == verdict::holds) ==
                      (rep.feasible == qualify::feasibility::feasible));
  if (rep.feasible == qualify::feasibility::infeasible) {
    QUALIFY_FUZZ_ASSERT(rep.result == verdict::fails && rep.refined_slater == verdict::fails);
    QUALIFY_FUZZ_ASSERT(rep.farkas.size() > 0 && rep.farkas.allFinite());
  }
  if (rep.result == verdict::fails && rep.feasible == qualify::feasibility::feasible)
    QUALIFY_FUZZ_ASSERT(!rep.implicit_equalities.empty() || !rep.implicit_fixed_columns.empty());
  if (rep.result != verdict::holds) return 0;

  // The strictly feasible point, evaluated here in long double: every inequality side has a
  // relative slack of at least tau (the library claims band * tau), every equality and fixed
  // column is met within ten times the feasibility tolerance.
  QUALIFY_FUZZ_ASSERT(rep.strict_interior);
  const Eigen::VectorXd& x = rep.strict_point;
  QUALIFY_FUZZ_ASSERT(x.size() == n && x.allFinite());
  const double threshold = options.lp.infinity_threshold;
  const ld tau = options.slack_tolerance, feas = 10 * options.feasibility_tolerance;
  const Eigen::Matrix<ld, Eigen::Dynamic, 1> xl = x.cast<ld>();
  for (Index i = 0; i < m; ++i) {
    ld value = 0, norm = 0, terms = 0;  // (row(i) of an empty row offsets a null pointer)
    if (n > 0) {
      value = a.row(i).cast<ld>().dot(xl);
      norm = a.row(i).cast<ld>().norm();
      terms = a.row(i).cast<ld>().cwiseAbs().dot(xl.cwiseAbs());
    }
    if (rl(i) == ru(i)) {
      const ld size = norm + terms + std::abs(ld(rl(i)));
      QUALIFY_FUZZ_ASSERT(std::abs(value - ld(rl(i))) <= feas * size);
      continue;
    }
    if (rl(i) > -threshold) QUALIFY_FUZZ_ASSERT(slack(value, rl(i), true, norm) >= tau);
    if (ru(i) < threshold) QUALIFY_FUZZ_ASSERT(slack(value, ru(i), false, norm) >= tau);
  }
  for (Index j = 0; j < n; ++j) {
    if (cl(j) == cu(j)) {
      QUALIFY_FUZZ_ASSERT(std::abs(xl(j) - ld(cl(j))) <= feas * (1 + std::abs(xl(j)) + std::abs(ld(cl(j)))));
      continue;
    }
    if (cl(j) > -threshold) QUALIFY_FUZZ_ASSERT(slack(xl(j), cl(j), true, 1) >= tau);
    if (cu(j) < threshold) QUALIFY_FUZZ_ASSERT(slack(xl(j), cu(j), false, 1) >= tau);
  }
  return 0;
}
