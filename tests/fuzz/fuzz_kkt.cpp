// Fuzz target: check_kkt on a fuzzed model_at_point (multipliers estimated or given); a
// certified KKT point is checked on the data.
// SPDX-License-Identifier: MIT
#include <qualify/kkt.hpp>

#include <algorithm>
#include <cmath>

#include "fuzz_input.hpp"

using namespace qualify_fuzz;
using qualify::verdict;
using ld = long double;

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  byte_source in(data, size);
  const Index n = 1 + in.size(5), m = in.size(6);
  qualify::model_at_point p;
  p.x = in.vector(n);
  p.objective_gradient = in.vector(n);
  p.values = in.vector(m);
  p.jacobian = in.matrix(m, n);
  for (Index i = 0; i < m; ++i) {
    p.types.push_back(in.flag() ? qualify::constraint_type::equality
                                : qualify::constraint_type::inequality);
    p.kinds.push_back(static_cast<qualify::constraint_kind>(in.byte() % 4));
  }
  p.convex_model = in.flag();
  const norm_overflow big = row_norm_overflow(p.jacobian);
  bool bad = !p.x.allFinite() || !p.objective_gradient.allFinite() || !p.values.allFinite() ||
             !p.jacobian.allFinite() || big.overflows;
  if (in.flag()) {  // a symmetric Hessian of f
    const Eigen::MatrixXd h = in.matrix(n, n);
    p.objective_hessian = Eigen::MatrixXd((h + h.transpose()) / 2);
    bad = bad || !p.objective_hessian->allFinite();
  }
  const bool given = in.flag();
  const Eigen::VectorXd multipliers = in.vector(m);
  if (given) bad = bad || !multipliers.allFinite();

  const qualify::kkt_report rep =
      given ? qualify::check_kkt(p, multipliers) : qualify::check_kkt(p);
  QUALIFY_FUZZ_ASSERT(big.borderline || (rep.result == verdict::invalid_input) == bad);
  if (rep.result == verdict::invalid_input) return 0;
  QUALIFY_FUZZ_ASSERT(rep.result == verdict::holds || rep.result == verdict::fails ||
                      rep.result == verdict::undecided);
  QUALIFY_FUZZ_ASSERT(rep.multipliers.size() == m && rep.multipliers.allFinite());
  // Residual figures are never NaN; they overflow to +inf only for entries near the top of
  // double's range (found by this target: values of 3e307), and then nothing holds.
  const double largest = std::max({p.x.lpNorm<Eigen::Infinity>(),
                                   p.objective_gradient.lpNorm<Eigen::Infinity>(),
                                   m > 0 ? p.values.lpNorm<Eigen::Infinity>() : 0.0,
                                   m > 0 ? p.jacobian.lpNorm<Eigen::Infinity>() : 0.0,
                                   p.objective_hessian ? p.objective_hessian->lpNorm<Eigen::Infinity>()
                                                       : 0.0});
  bool overflowed = false;
  for (const auto* r : {&rep.stationarity, &rep.primal, &rep.dual, &rep.complementarity}) {
    QUALIFY_FUZZ_ASSERT(!std::isnan(r->scaled) && !std::isnan(r->raw) && r->scaled >= 0);
    overflowed = overflowed || std::isinf(r->scaled) || std::isinf(r->raw);
  }
  QUALIFY_FUZZ_ASSERT(!overflowed || largest > 1e300);
  if (rep.result != verdict::holds) return 0;
  QUALIFY_FUZZ_ASSERT(!overflowed);

  // A certified point: every part holds, and g + J^T y, recomputed in long double, meets the
  // documented rule ||g + J^T y||_inf / s_d <= tol * max(1, ||g||_inf), s_d = max(s_max,
  // ||y||_1 / m) / s_max (within a factor 10 and the rounding of the sum's terms).
  for (const auto* r : {&rep.stationarity, &rep.primal, &rep.dual, &rep.complementarity})
    QUALIFY_FUZZ_ASSERT(r->result == verdict::holds);
  const qualify::kkt_options defaults;
  const Eigen::Matrix<ld, Eigen::Dynamic, 1> y = rep.multipliers.cast<ld>();
  Eigen::Matrix<ld, Eigen::Dynamic, 1> r = p.objective_gradient.cast<ld>();
  ld terms = p.objective_gradient.cast<ld>().cwiseAbs().maxCoeff();
  for (Index i = 0; i < m; ++i) {
    r += y(i) * p.jacobian.row(i).cast<ld>().transpose();
    terms += std::abs(y(i)) * p.jacobian.row(i).cast<ld>().cwiseAbs().maxCoeff();
  }
  const ld cap = defaults.multiplier_scale_cap;
  const ld s_d = m > 0 ? std::max(cap, y.cwiseAbs().sum() / ld(m)) / cap : 1;
  const ld g_ref = std::max<ld>(1, p.objective_gradient.cast<ld>().cwiseAbs().maxCoeff());
  QUALIFY_FUZZ_ASSERT(r.cwiseAbs().maxCoeff() / s_d <=
                      10 * ld(defaults.stationarity_tolerance) * g_ref + 1e-12L * terms / s_d);
  return 0;
}
