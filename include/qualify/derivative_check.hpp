// qualify: the derivative check: a model's gradient, Jacobian and Hessians against central
// differences with an error estimate, the worst entries named by row label and variable.
// SPDX-License-Identifier: MIT
#pragma once

#include <Eigen/Core>
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <functional>
#include <limits>
#include <optional>
#include <qualify/detail/dense.hpp>
#include <qualify/model.hpp>
#include <qualify/report.hpp>
#include <string>
#include <string_view>
#include <vector>

namespace qualify {

/// Whether the check compares one part of the model's derivatives.
enum class derivative_selection {
  if_provided,  ///< when the model has the callbacks it takes (see derivative_check_options)
  required,     ///< a model without them is `invalid_input` (code `missing_callback`)
  off
};

/// The parts of a model's derivatives, each compared with differences of another callback.
enum class derivative_part {
  objective_gradient,   ///< objective_gradient(x) vs differences of objective(x)
  constraint_jacobian,  ///< constraint_jacobian(x) vs differences of constraint_values(x)
  objective_hessian,    ///< objective_hessian(x) vs differences of objective_gradient(x)
  constraint_hessians   ///< constraint_hessian(x, i) vs differences of row i of
                        ///< constraint_jacobian(x)
};

/// Stable strings (JSON, logs); never renamed once released.
constexpr std::string_view to_string(derivative_part p) noexcept {
  switch (p) {
    case derivative_part::constraint_jacobian:
      return "constraint_jacobian";
    case derivative_part::objective_hessian:
      return "objective_hessian";
    case derivative_part::constraint_hessians:
      return "constraint_hessians";
    case derivative_part::objective_gradient:
      break;
  }
  return "objective_gradient";
}

/// How an entry is decided. For entry (q, j) — the derivative of the q-th differenced value
/// F_q with respect to x_j — let a be the model's value, f the finite difference, d = |a - f|,
/// e its error estimate and t = relative_tolerance * s its tolerance (below). The entry agrees
/// when d + e <= t (the model's error is at most t even if f is off by e), disagrees when
/// d - e > t (it exceeds t whatever f's error within e), and is undecided in between: the
/// difference lies within the noise of the finite difference.
struct derivative_check_options {
  /// Which parts are compared. The objective gradient needs `objective` and
  /// `objective_gradient`; the Jacobian needs constraints; the objective Hessian needs
  /// `objective_hessian` and `objective_gradient`; constraint Hessians need
  /// `constraint_hessian`. Hessians are differenced from the model's own first derivatives,
  /// so their check is only as good as those (a warning says when they disagree).
  derivative_selection objective_gradient = derivative_selection::if_provided;
  derivative_selection constraint_jacobian = derivative_selection::if_provided;
  derivative_selection objective_hessian = derivative_selection::if_provided;
  derivative_selection constraint_hessians = derivative_selection::if_provided;

  /// The first step for variable j is h_j = relative_step * max(|x_j|, typical_j), and the
  /// central differences D(h) = (F(x + h e_j) - F(x - h e_j)) / 2h are taken at h_j and h_j / 2.
  /// Automatic: cbrt(eps) = 6.06e-6, the step that balances the O(h^2) truncation error of
  /// central differences against the O(eps / h) rounding error (Nocedal and Wright, Numerical
  /// Optimization, 2nd ed., 2006, sec. 8.1; the scaling by max(|x_j|, typical_j) is Dennis and
  /// Schnabel, Numerical Methods for Unconstrained Optimization and Nonlinear Equations, 1983,
  /// sec. 5.6, from memory). Relative, in [1e-12, 1).
  std::optional<double> relative_step;
  /// typical_j > 0, the size of x_j where x_j is near 0 (it sets the step and, through xs_j
  /// below, the floor of the scale). Empty: 1 for every variable; else one per variable.
  Eigen::VectorXd typical_magnitude;
  /// While an entry of variable j is not yet shown to agree and its truncation estimate is at
  /// least its rounding estimate, or a callback fails at a displaced point, the step is
  /// divided by 16 and the differences taken again, up to this many times (16^6 = 1.7e7 in
  /// all). So a disagreement is only reported at a step where the estimate holds (a first
  /// step across a singularity can fool it), and a strongly curved function, or a variable
  /// much smaller than its typical_j (x_j ~ 1e-6 with typical_j = 1), is differenced on its
  /// own scale. Each entry keeps the step whose estimate e was smallest; steps below the
  /// resolution of x_j are not tried (common practice, no source).
  int step_reductions = 6;
  /// t = relative_tolerance * s, s = max(|a|, |f|, scale_floor * max(v / xs_j, c xs_j)),
  /// where xs_j = max(|x_j|, typical_j), v is the magnitude of F_q (below) and c the
  /// curvature |d2 F_q / dx_j^2| seen by the differences ((F(x+h) + F(x-h) - F(x+h/2) -
  /// F(x-h/2)) / (3h^2/4), its rounding noise taken off). So an entry is judged relative to
  /// itself, and a zero or tiny entry (a variable F_q does not depend on, a gradient at a
  /// stationary point) relative to what a relative change of relative_tolerance *
  /// scale_floor = 1e-8 in x_j does to F_q and to dF_q/dx_j. At the default step that floor
  /// is about 11 times the rounding estimate of an entry, so what it lets pass lies within
  /// ten times what central differences can resolve. Above the floor a correct derivative
  /// is found within about 1e-10 relative, so 1e-6 leaves room for the estimate (common
  /// practice, no source).
  double relative_tolerance = 1e-6;
  double scale_floor = 1e-2;  ///< see relative_tolerance; in [0, 1]
  /// ε_F: the relative accuracy of the callbacks' values. The rounding estimate of an entry
  /// is 3 max(ε_F v, δ) / h: the extrapolated value (4 D(h/2) - D(h)) / 3 carries
  /// (4 * 2 + 1) / 3 = 3 times the error of D(h), which is (noise of one value) / h. v is the
  /// larger of the largest |F_q| at the displaced points and Σ_j |a_qj x_j| (the size of the
  /// terms F_q is made of, which cancel where F_q ≈ 0, as at an active constraint). δ is the
  /// noise the values show themselves, which catches what ε_F v cannot see (terms constant
  /// in x that cancel, an inner solve's tolerance): a quarter of the largest fourth
  /// difference, F(x-h) - 4F(x-h/2) + 6F(x) - 4F(x+h/2) + F(x+h) of the entry's own values
  /// and five more along a short line through x (the noise of one value enters a fourth
  /// difference up to 16 times, typically about 5 times; noise from high differences: Moré
  /// and Wild, Estimating computational noise, SIAM J. Sci. Comput. 33, 2011, from memory).
  /// A value that does not move along x_j has no noise. Raise ε_F for callbacks known to lose
  /// digits.
  double value_precision = 4 * std::numeric_limits<double>::epsilon();
  /// e = estimate_safety * (truncation estimate + rounding estimate): the truncation
  /// estimate |D(h) - D(h/2)| / 3 is Richardson's estimate of the error of D(h/2), whose
  /// error is O(h^2) (L. F. Richardson, Phil. Trans. R. Soc. A 210, 1911, from memory), and
  /// an overestimate for the extrapolated value reported, whose error is O(h^4); the factor
  /// covers steps outside the asymptotic range (common practice, no source). At least 1.
  double estimate_safety = 2;
  /// How many of the worst entries the report lists (all are counted).
  int max_listed = 10;

  /// Empty when valid, else a message naming the field and its rule.
  std::string validate() const {
    if (relative_step &&
        !(std::isfinite(*relative_step) && *relative_step >= 1e-12 && *relative_step < 1))
      return "derivative_check_options.relative_step must be in [1e-12, 1)";
    for (Index j = 0; j < typical_magnitude.size(); ++j)
      if (!(std::isfinite(typical_magnitude(j)) && typical_magnitude(j) > 0))
        return "derivative_check_options.typical_magnitude(" + std::to_string(j) +
               ") must be finite and > 0";
    if (step_reductions < 0 || step_reductions > 12)
      return "derivative_check_options.step_reductions must be in 0..12";
    if (!(std::isfinite(relative_tolerance) && relative_tolerance > 0 && relative_tolerance < 1))
      return "derivative_check_options.relative_tolerance must be in (0, 1)";
    if (!(scale_floor >= 0 && scale_floor <= 1))
      return "derivative_check_options.scale_floor must be in [0, 1]";
    if (!(value_precision >= 0 && value_precision < 1))
      return "derivative_check_options.value_precision must be in [0, 1)";
    if (!(std::isfinite(estimate_safety) && estimate_safety >= 1))
      return "derivative_check_options.estimate_safety must be finite and >= 1";
    if (max_listed < 0) return "derivative_check_options.max_listed must be >= 0";
    return {};
  }
};

/// One compared entry: d(label)/dx[variable], or d2(label)/dx[hessian_row]dx[variable].
struct derivative_entry {
  derivative_part part = derivative_part::objective_gradient;
  Index row = -1;                  ///< constraint row; -1 for the objective
  std::string label;               ///< the row's label ("row N" without one), or "objective"
  Index variable = 0;              ///< j: the variable stepped (the Jacobian's or Hessian's column)
  Index hessian_row = -1;          ///< k of a Hessian entry H(k, j); -1 for first derivatives
  double analytic = 0;             ///< a, the model's value
  double finite_difference = 0;    ///< f, extrapolated from the central differences at h and h/2
  double error = 0;                ///< d = |a - f|
  double truncation_estimate = 0;  ///< |D(h) - D(h/2)| / 3
  double rounding_estimate = 0;    ///< 3 max(ε_F v, δ) / h
  double error_estimate = 0;       ///< e = estimate_safety * (truncation + rounding)
  double tolerance = 0;            ///< t = relative_tolerance * scale
  double scale = 0;                ///< s
  double step = 0;                 ///< h (the differences were taken at h and h/2)
  verdict result = verdict::not_checked;  ///< holds, fails or undecided for this entry

  /// "d(cap)/dx[2]" or "d2(objective)/dx[0]dx[2]".
  std::string name() const {
    std::string out = hessian_row < 0 ? "d(" : "d2(";
    out += label + ")/";
    if (hessian_row >= 0) out += "dx[" + std::to_string(hessian_row) + "]";
    return out + "dx[" + std::to_string(variable) + "]";
  }
};

/// The entries of one part, counted.
struct derivative_part_summary {
  derivative_part part = derivative_part::objective_gradient;
  Index entries = 0;  ///< all, including those not evaluated
  Index agreeing = 0, disagreeing = 0, undecided = 0;
  Index not_evaluated = 0;      ///< entries of variables no displaced evaluation succeeded for
  Index reduced_variables = 0;  ///< variables differenced at a step below the first
  double max_bound_ratio = 0;   ///< max (d + e) / t: every entry agrees when <= 1
  double max_proven_ratio = 0;  ///< max (d - e) / t (0 when none is positive): fails when > 1
};

/// What check_derivatives found. `max_bound_ratio` <= 1 (and nothing undecided or not
/// evaluated) is the margin of `holds`; `max_proven_ratio` > 1 that of `fails`.
struct derivative_check_report {
  verdict result = verdict::not_checked;
  std::string message = "check_derivatives was not called";
  Index variables = 0;
  Index constraints = 0;
  std::optional<double> relative_step_requested;  ///< as given (empty: automatic)
  double relative_step = 0;                       ///< as used
  double relative_tolerance = 0, scale_floor = 0, value_precision = 0, estimate_safety = 0;
  int step_reductions = 0;
  std::vector<derivative_part_summary> parts;  ///< the parts compared, in the enum's order
  Index entries = 0, agreeing = 0, disagreeing = 0, undecided = 0, not_evaluated = 0;
  double max_bound_ratio = 0;
  double max_proven_ratio = 0;
  Index evaluations = 0;                ///< callback calls at displaced points
  std::vector<derivative_entry> worst;  ///< up to max_listed: disagreeing, then undecided, then
                                        ///< agreeing entries, each by (d + e) / t, worst first
  row_names names;
  std::vector<finding> findings;
};

namespace detail {

/// Nine significant digits, for the two values an entry compares.
inline std::string format_value(double v) {
  char buffer[32];
  std::snprintf(buffer, sizeof buffer, "%.9g", v);
  return buffer;
}

/// x / t, with 0 / 0 = 0 (an exact zero matches an exact zero) and x / 0 = inf.
inline double tolerance_ratio(double x, double t) {
  if (x <= 0) return 0;
  return t > 0 ? x / t : std::numeric_limits<double>::infinity();
}

/// One callback differenced at displaced points: its p values flattened (column-major for a
/// Jacobian), and the derivatives the model claims, analytic(q, j) = dF_q / dx_j.
struct differenced_callback {
  derivative_part part;
  const char* callback;
  Eigen::MatrixXd analytic;
  /// Fills `out` with the p values at `y`; on failure returns the code and sets `message`.
  std::function<std::string(const Eigen::VectorXd& y, Eigen::VectorXd& out, std::string& message)>
      evaluate;
  Eigen::VectorXd center;  ///< the p values at x itself
};

/// Where a flattened value q sits: its row (-1 for the objective) and Hessian row k (-1 for
/// first derivatives).
struct value_position {
  Index row, hessian_row;
};

inline value_position position_of(derivative_part part, Index q, Index m) {
  switch (part) {
    case derivative_part::constraint_jacobian:
      return {q, -1};
    case derivative_part::objective_hessian:
      return {-1, q};
    case derivative_part::constraint_hessians:
      return {q % m, q / m};
    case derivative_part::objective_gradient:
      break;
  }
  return {-1, -1};
}

/// The differences of all p values for one variable at one step h.
struct difference_try {
  Eigen::VectorXd value;       ///< (4 D(h/2) - D(h)) / 3
  Eigen::VectorXd truncation;  ///< |D(h) - D(h/2)| / 3
  Eigen::VectorXd rounding;    ///< 3 max(eps_F v, the line's noise) / h
  Eigen::VectorXd noise;       ///< 3 (the noise of the entry's own five values) / h
  Eigen::VectorXd magnitude;   ///< v
  Eigen::VectorXd curvature;   ///< |d2 F_q / dx_j^2|, its rounding noise taken off
  double step = 0;
  bool failed = false;
  std::string code, message, where;  ///< of a failed evaluation
};

/// One entry's comparison: d, e, s, t and the outcome.
struct entry_judgement {
  double d, e, s, t;
  verdict result;
};

/// Compares one part variable by variable: counts into the summary, listed entries into
/// `report.worst`, failed displaced evaluations into `report.findings`.
class part_checker {
 public:
  part_checker(const differenced_callback& target, const Eigen::VectorXd& x,
               const Eigen::VectorXd& scale_of_x, const derivative_check_options& options,
               double relative_step, derivative_check_report& report)
      : target_(target),
        x_(x),
        xs_(scale_of_x),
        options_(options),
        relative_step_(relative_step),
        report_(report),
        m_(report.constraints),
        // The size of the terms F_q is computed from: they cancel where F_q ~ 0 (an active
        // constraint), so |F_q| alone would understate its rounding error.
        term_scale_(target.analytic.cwiseAbs() * x.cwiseAbs()),
        row_failed_(std::size_t(report.constraints), false) {
    summary_.part = target.part;
    summary_.entries = target.analytic.rows() * x.size();
  }

  derivative_part_summary run() {
    line_noise_ = line_noise();
    for (Index j = 0; j < x_.size(); ++j) check_variable(j);
    const auto unlisted = [&](std::size_t count, severity level, const char* code) {
      const std::size_t limit = std::size_t(options_.max_listed);
      if (count > limit)
        add_finding(report_.findings, level, code,
                    std::string(target_.callback) + ": " + std::to_string(count - limit) +
                        " more variables like the above (not listed)",
                    {}, report_.names);
    };
    unlisted(failed_findings_, severity::error, "displaced_point_failed");
    unlisted(reduced_findings_, severity::info, "step_reduced");
    return summary_;
  }

  /// Rows with an entry that disagrees (first derivatives: the reference of the Hessians).
  std::vector<Index> failing_rows() const {
    std::vector<Index> rows;
    for (std::size_t i = 0; i < row_failed_.size(); ++i)
      if (row_failed_[i]) rows.push_back(Index(i));
    return rows;
  }

 private:
  static constexpr double reduction = 16;

  /// The values' noise as a line through x shows it (the idea of Moré and Wild, Estimating
  /// computational noise, SIAM J. Sci. Comput. 33, 2011, from memory): F at x + k s,
  /// k = -4..4, s_j = sqrt(eps) |x_j| (typical_j where x_j = 0), gives five fourth
  /// differences per value; a quarter of the largest. Several samples, so that one chance
  /// cancellation does not hide the noise; a step so short that a smooth function's own
  /// fourth difference, s^4 F^(4), stays far below rounding while the values still move by
  /// many units in the last place. Zero when an evaluation fails (then each entry's own five
  /// values and eps_F v remain).
  Eigen::VectorXd line_noise() {
    const Index p = target_.analytic.rows();
    Eigen::VectorXd s(x_.size());
    for (Index j = 0; j < x_.size(); ++j)
      s(j) = std::sqrt(std::numeric_limits<double>::epsilon()) *
             (x_(j) != 0 ? std::abs(x_(j)) : xs_(j));
    std::vector<Eigen::VectorXd> f(9);
    f[4] = target_.center;
    std::string message;
    for (int k = -4; k <= 4; ++k) {
      if (k == 0) continue;
      ++report_.evaluations;
      if (!target_.evaluate(x_ + double(k) * s, f[std::size_t(k + 4)], message).empty())
        return Eigen::VectorXd::Zero(p);
    }
    Eigen::VectorXd noise = Eigen::VectorXd::Zero(p);
    for (std::size_t c = 2; c <= 6; ++c)
      noise = noise.cwiseMax(
          (f[c - 2] - 4 * f[c - 1] + 6 * f[c] - 4 * f[c + 1] + f[c + 2]).cwiseAbs() / 4);
    return noise;
  }

  difference_try differences(Index j, double h) {
    difference_try out;
    out.step = h;
    Eigen::VectorXd y = x_, plus, minus, half_plus, half_minus;
    const auto at = [&](double offset, Eigen::VectorXd& values) {
      y(j) = x_(j) + offset;
      ++report_.evaluations;
      out.code = target_.evaluate(y, values, out.message);
      if (out.code.empty()) return true;
      out.failed = true;
      out.where = "x[" + std::to_string(j) + "] " + (offset > 0 ? "+ " : "- ") +
                  format_figure(std::abs(offset));
      return false;
    };
    if (!(at(h, plus) && at(-h, minus) && at(h / 2, half_plus) && at(-h / 2, half_minus)))
      return out;
    // The steps as represented: x_j + h rounds, so divide by the distance actually taken.
    const double wide = (x_(j) + h) - (x_(j) - h), narrow = (x_(j) + h / 2) - (x_(j) - h / 2);
    const Eigen::VectorXd d1 = (plus - minus) / wide, d2 = (half_plus - half_minus) / narrow;
    out.value = (4 * d2 - d1) / 3;
    out.truncation = (d1 - d2).cwiseAbs() / 3;
    out.magnitude = plus.cwiseAbs()
                        .cwiseMax(minus.cwiseAbs())
                        .cwiseMax(half_plus.cwiseAbs())
                        .cwiseMax(half_minus.cwiseAbs())
                        .cwiseMax(term_scale_);
    // Noise enters only values that change: one that stays put along x_j differences exactly.
    const Eigen::VectorXd& center = target_.center;
    const Eigen::ArrayXd moved = (plus - center).cwiseAbs() + (minus - center).cwiseAbs() +
                                 (half_plus - center).cwiseAbs() + (half_minus - center).cwiseAbs();
    const Eigen::VectorXd value_noise =
        (options_.value_precision * out.magnitude)
            .cwiseMax((moved > 0).select(line_noise_.array(), 0.0).matrix());
    out.rounding = 3 * value_noise / (wide / 2);
    // The entry's own five values: their fourth difference F(x-h) - 4 F(x-h/2) + 6 F(x)
    // - 4 F(x+h/2) + F(x+h) is (h/2)^4 F^(4) plus the noise of one value times at most 16,
    // typically about 5 (weights 1, 4, 6, 4, 1); a quarter of it. It enters the estimate but
    // not the choice of a smaller step, since at a large step it is mostly F^(4).
    const Eigen::VectorXd own =
        ((plus + minus) + 6 * center - 4 * (half_plus + half_minus)).cwiseAbs() / 4;
    out.noise = 3 * own / (wide / 2);
    // F(x+h) + F(x-h) - F(x+h/2) - F(x-h/2) = (3/4) h^2 F'' + O(h^4), with 4 values' noise.
    const Eigen::ArrayXd second = ((plus + minus) - (half_plus + half_minus)).array().abs() -
                                  4 * value_noise.cwiseMax(own).array();
    out.curvature = second.max(0) / (0.75 * (wide / 2) * (wide / 2));
    return out;
  }

  entry_judgement judge(Index j, double a, double f, double e, double magnitude,
                        double curvature) const {
    entry_judgement out;
    out.d = std::abs(a - f);
    out.e = e;
    const double natural = std::max(magnitude / xs_(j), curvature * xs_(j));
    out.s = std::max({std::abs(a), std::abs(f), options_.scale_floor * natural});
    out.t = options_.relative_tolerance * out.s;
    out.result = out.d + out.e <= out.t  ? verdict::holds
                 : out.d - out.e > out.t ? verdict::fails
                                         : verdict::undecided;
    return out;
  }

  void check_variable(Index j) {
    const Index p = target_.analytic.rows();
    // Per entry, the try with the smallest estimate so far.
    difference_try best;
    Eigen::VectorXd best_estimate, best_step(p);
    std::vector<difference_try> failures;
    const double first_step = relative_step_ * xs_(j);
    double h = first_step;
    for (int attempt = 0; attempt <= options_.step_reductions; ++attempt, h /= reduction) {
      if (!((x_(j) + h / 2) - (x_(j) - h / 2) > 0)) break;  // below the resolution of x_j
      difference_try t = differences(j, h);
      if (t.failed) {
        failures.push_back(std::move(t));
        continue;
      }
      const Eigen::VectorXd e =
          options_.estimate_safety * (t.truncation + t.rounding.cwiseMax(t.noise));
      if (best_estimate.size() == 0) {
        best = t;
        best_estimate = e;
        best_step.setConstant(h);
      } else {
        for (Index q = 0; q < p; ++q)
          if (e(q) < best_estimate(q)) {
            best.value(q) = t.value(q);
            best.truncation(q) = t.truncation(q);
            best.rounding(q) = t.rounding(q);
            best.noise(q) = t.noise(q);
            best.magnitude(q) = t.magnitude(q);
            best.curvature(q) = t.curvature(q);
            best_estimate(q) = e(q);
            best_step(q) = h;
          }
      }
      // An entry not yet shown to agree, whose estimate a smaller step would shrink: look
      // again, so that a disagreement is only reported at an accurate step.
      bool smaller_step_helps = false;
      for (Index q = 0; q < p && !smaller_step_helps; ++q)
        smaller_step_helps = best.truncation(q) >= best.rounding(q) &&
                             judge(j, target_.analytic(q, j), best.value(q), best_estimate(q),
                                   best.magnitude(q), best.curvature(q))
                                     .result != verdict::holds;
      if (!smaller_step_helps) break;
    }
    const bool evaluated = best_estimate.size() > 0;
    report_failures(j, failures, evaluated, first_step);
    if (!evaluated) {
      summary_.not_evaluated += p;
      return;
    }
    if ((best_step.array() < first_step).any()) ++summary_.reduced_variables;
    for (Index q = 0; q < p; ++q) {
      const double a = target_.analytic(q, j);
      const entry_judgement k =
          judge(j, a, best.value(q), best_estimate(q), best.magnitude(q), best.curvature(q));
      const double bound = tolerance_ratio(k.d + k.e, k.t);
      summary_.max_bound_ratio = std::max(summary_.max_bound_ratio, bound);
      summary_.max_proven_ratio =
          std::max(summary_.max_proven_ratio, tolerance_ratio(k.d - k.e, k.t));
      const auto at = position_of(target_.part, q, m_);
      if (k.result == verdict::holds) ++summary_.agreeing;
      if (k.result == verdict::undecided) ++summary_.undecided;
      if (k.result == verdict::fails) {
        ++summary_.disagreeing;
        if (at.row >= 0) row_failed_[std::size_t(at.row)] = true;
      }
      list(k.result, bound, [&] {
        derivative_entry entry;
        entry.part = target_.part;
        entry.row = at.row;
        entry.label = at.row < 0 ? "objective" : report_.names(at.row);
        entry.variable = j;
        entry.hessian_row = at.hessian_row;
        entry.analytic = a;
        entry.finite_difference = best.value(q);
        entry.error = k.d;
        entry.truncation_estimate = best.truncation(q);
        entry.rounding_estimate = std::max(best.rounding(q), best.noise(q));
        entry.error_estimate = k.e;
        entry.tolerance = k.t;
        entry.scale = k.s;
        entry.step = best_step(q);
        entry.result = k.result;
        return entry;
      });
    }
  }

  static int rank(verdict v) { return v == verdict::fails ? 2 : v == verdict::undecided ? 1 : 0; }

  /// Keeps `report.worst` sorted worst first and at most max_listed long; `make` builds the
  /// entry only when it gets in.
  template <class Make>
  void list(verdict result, double bound, Make&& make) {
    auto& worst = report_.worst;
    const std::size_t limit = std::size_t(options_.max_listed);
    const auto at_least_as_bad = [&](const derivative_entry& u) {
      if (rank(u.result) != rank(result)) return rank(u.result) > rank(result);
      return tolerance_ratio(u.error + u.error_estimate, u.tolerance) >= bound;
    };
    if (limit == 0 || (worst.size() == limit && at_least_as_bad(worst.back()))) return;
    worst.insert(std::partition_point(worst.begin(), worst.end(), at_least_as_bad), make());
    if (worst.size() > limit) worst.pop_back();
  }

  void report_failures(Index j, const std::vector<difference_try>& failures, bool evaluated,
                       double first_step) {
    if (failures.empty()) return;
    std::size_t& listed = evaluated ? reduced_findings_ : failed_findings_;
    if (++listed > std::size_t(options_.max_listed)) return;
    const difference_try &first = failures.front(), &last = failures.back();
    const std::string what = std::string(target_.callback) + " failed at " + first.where + " (" +
                             first.code + ": " + first.message + ")";
    if (evaluated)
      add_finding(report_.findings, severity::info, "step_reduced",
                  what + "; x[" + std::to_string(j) + "] differenced with a step below " +
                      format_figure(first_step) + " instead",
                  {}, report_.names);
    else
      add_finding(report_.findings, severity::error, "displaced_point_failed",
                  what + "; the " + std::to_string(failures.size()) + " steps from " +
                      format_figure(first_step) + " down to " + format_figure(last.step) +
                      " all failed, so the " + std::string(to_string(target_.part)) +
                      " entries of x[" + std::to_string(j) + "] are not checked",
                  {}, report_.names);
  }

  const differenced_callback& target_;
  const Eigen::VectorXd& x_;
  const Eigen::VectorXd& xs_;
  const derivative_check_options& options_;
  double relative_step_;
  derivative_check_report& report_;
  Index m_;
  Eigen::VectorXd term_scale_;  ///< sum_j |a_qj x_j|
  Eigen::VectorXd line_noise_;  ///< the values' noise along a line through x
  std::vector<bool> row_failed_;
  derivative_part_summary summary_;
  std::size_t failed_findings_ = 0, reduced_findings_ = 0;
};

/// Runs one callback and checks its size and entries; returns the finding code on failure.
template <class Fn>
std::string checked_call(const char* name, Fn&& fn, Eigen::MatrixXd& out, Index rows, Index cols,
                         const row_names& names, bool rows_are_named, std::string& message) {
  if (!run_callback(
          name, [&] { out = fn(); }, message))
    return "callback_failed";
  std::string code;
  message = check_callback_result(name, out, rows, cols, names, rows_are_named, code);
  return code;
}

inline derivative_check_report invalid_derivative_check(derivative_check_report rep,
                                                        std::string code, std::string message) {
  rep.result = verdict::invalid_input;
  rep.message = "invalid input: " + message;
  add_finding(rep.findings, severity::error, std::move(code), std::move(message), {}, rep.names);
  return rep;
}

}  // namespace detail

/// Compares the derivatives `model` gives at `x` with central differences of its own values
/// (see derivative_check_options for the step, the estimate and the decision). holds: every
/// entry agrees; fails: some entry disagrees beyond its tolerance and error estimate (the
/// worst are listed and named); undecided: otherwise (entries within the noise, or not
/// evaluated). Bad input (the model, x, the options, or a callback that fails at x itself)
/// is `invalid_input`. A callback that fails at a displaced point x ± h e_j is retried with a
/// smaller step; when every step fails, a `displaced_point_failed` finding names the
/// callback, the variable, the steps and the callback's message, and that variable's entries
/// count as not evaluated (so the verdict is at best undecided). Costs 4 evaluations of each
/// differenced callback per variable and step tried, plus 9 (x and the noise line); holds the
/// model's derivatives of each part (constraint Hessians as one (m n) x n matrix).
inline derivative_check_report check_derivatives(const callback_model& model,
                                                 const Eigen::VectorXd& x,
                                                 const derivative_check_options& options = {}) {
  derivative_check_report rep;
  rep.variables = model.variables;
  rep.constraints = model.constraints();
  rep.relative_step_requested = options.relative_step;
  rep.relative_step =
      options.relative_step.value_or(std::cbrt(std::numeric_limits<double>::epsilon()));
  rep.relative_tolerance = options.relative_tolerance;
  rep.scale_floor = options.scale_floor;
  rep.value_precision = options.value_precision;
  rep.estimate_safety = options.estimate_safety;
  rep.step_reductions = options.step_reductions;
  rep.names = row_names(model.labels);
  using detail::invalid_derivative_check;

  if (auto bad = options.validate(); !bad.empty())
    return invalid_derivative_check(rep, "bad_option", bad);
  if (auto bad = validate_model(model); !bad.empty())
    return invalid_derivative_check(rep, "invalid_model", bad);
  const Index n = model.variables, m = model.constraints();
  if (x.size() != n)
    return invalid_derivative_check(
        rep, "dimension_mismatch",
        "x has " + std::to_string(x.size()) + " entries for " + std::to_string(n) + " variables");
  if (auto bad = detail::first_non_finite(x))
    return invalid_derivative_check(
        rep, "non_finite_entry",
        "x[" + std::to_string(bad->row) + "] is " +
            detail::describe_non_finite(static_cast<long double>(x(bad->row))));
  if (options.typical_magnitude.size() != 0 && options.typical_magnitude.size() != n)
    return invalid_derivative_check(rep, "dimension_mismatch",
                                    "derivative_check_options.typical_magnitude has " +
                                        std::to_string(options.typical_magnitude.size()) +
                                        " entries for " + std::to_string(n) + " variables");

  // Which parts: each needs its callbacks; `required` without them is bad input.
  struct wanted {
    derivative_part part;
    derivative_selection selection;
    bool provided;
    const char* needs;
  };
  const wanted parts[] = {
      {derivative_part::objective_gradient, options.objective_gradient,
       bool(model.objective) && bool(model.objective_gradient),
       "the callbacks objective and objective_gradient"},
      {derivative_part::constraint_jacobian, options.constraint_jacobian, m > 0,
       "constraints (the model has none)"},
      {derivative_part::objective_hessian, options.objective_hessian,
       bool(model.objective_hessian) && bool(model.objective_gradient),
       "the callbacks objective_hessian and objective_gradient"},
      {derivative_part::constraint_hessians, options.constraint_hessians,
       m > 0 && bool(model.constraint_hessian), "constraints and the callback constraint_hessian"}};
  bool check[4] = {};
  for (int k = 0; k < 4; ++k) {
    const wanted& w = parts[k];
    if (w.selection == derivative_selection::off) continue;
    if (!w.provided && w.selection == derivative_selection::required)
      return invalid_derivative_check(
          rep, "missing_callback",
          std::string(to_string(w.part)) +
              " is required but the model lacks what it needs: " + w.needs);
    check[k] = w.provided;
    if (!w.provided)
      add_finding(rep.findings, severity::info, "part_not_checked",
                  std::string(to_string(w.part)) + " not checked: it needs " + w.needs, {},
                  rep.names);
  }
  if (!(check[0] || check[1] || check[2] || check[3]))
    return invalid_derivative_check(rep, "missing_callback",
                                    "nothing to check: the model provides none of the parts "
                                    "derivative_check_options selects");

  // The model's derivatives at x; a failure here is bad input.
  const bool need_gradient = check[0] || check[2];
  const model_evaluation at_x = evaluate_model(model, x, {need_gradient, false});
  if (!at_x.ok()) return invalid_derivative_check(rep, at_x.code, at_x.error);
  std::string message;
  Eigen::MatrixXd objective_hessian;
  if (check[2]) {
    auto code = detail::checked_call(
        "objective_hessian", [&] { return model.objective_hessian(x); }, objective_hessian, n, n,
        rep.names, false, message);
    if (!code.empty()) return invalid_derivative_check(rep, code, message);
  }
  Eigen::MatrixXd constraint_hessians;  // (i + m k, j) = H_i(k, j)
  if (check[3]) {
    constraint_hessians.resize(m * n, n);
    Eigen::MatrixXd h;
    for (Index i = 0; i < m; ++i) {
      auto code = detail::checked_call(
          "constraint_hessian", [&] { return model.constraint_hessian(x, i); }, h, n, n, rep.names,
          false, message);
      if (!code.empty())
        return invalid_derivative_check(rep, code, message + " (for " + rep.names(i) + ")");
      for (Index k = 0; k < n; ++k) constraint_hessians.row(i + m * k) = h.row(k);
    }
  }

  Eigen::VectorXd xs = x.cwiseAbs();
  for (Index j = 0; j < n; ++j)
    xs(j) = std::max(xs(j), options.typical_magnitude.size() ? options.typical_magnitude(j) : 1.0);

  // The callbacks differenced, each evaluated and checked at displaced points.
  std::vector<detail::differenced_callback> targets;
  const auto difference = [&](derivative_part part, const char* name, Eigen::MatrixXd analytic,
                              Index rows, Index cols, bool rows_are_named, auto call) {
    auto evaluate = [&rep, name, rows, cols, rows_are_named, call](
                        const Eigen::VectorXd& y, Eigen::VectorXd& out, std::string& error) {
      Eigen::MatrixXd values;
      std::string code = detail::checked_call(
          name, [&] { return call(y); }, values, rows, cols, rep.names, rows_are_named, error);
      if (code.empty()) out = Eigen::Map<const Eigen::VectorXd>(values.data(), values.size());
      return code;
    };
    targets.push_back({part, name, std::move(analytic), std::move(evaluate), {}});
  };
  if (check[0])
    difference(derivative_part::objective_gradient, "objective",
               at_x.point.objective_gradient.transpose(), 1, 1, false,
               [&model](const Eigen::VectorXd& y) {
                 return Eigen::MatrixXd::Constant(1, 1, model.objective(y)).eval();
               });
  if (check[1])
    difference(
        derivative_part::constraint_jacobian, "constraint_values", at_x.point.jacobian, m, 1, true,
        [&model](const Eigen::VectorXd& y) { return Eigen::MatrixXd(model.constraint_values(y)); });
  if (check[2])
    difference(derivative_part::objective_hessian, "objective_gradient", objective_hessian, n, 1,
               false, [&model](const Eigen::VectorXd& y) {
                 return Eigen::MatrixXd(model.objective_gradient(y));
               });
  if (check[3])
    difference(derivative_part::constraint_hessians, "constraint_jacobian",
               std::move(constraint_hessians), m, n, true, [&model](const Eigen::VectorXd& y) {
                 return Eigen::MatrixXd(model.constraint_jacobian(y));
               });

  // The values at x itself, the fifth point of the noise estimate; a failure is bad input.
  for (auto& target : targets) {
    const std::string code = target.evaluate(x, target.center, message);
    if (!code.empty()) return invalid_derivative_check(rep, code, message);
  }

  const auto labels_of = [&](const std::vector<Index>& rows) {
    std::string out;
    for (Index i : rows) out += (out.empty() ? "" : ", ") + rep.names(i);
    return out;
  };
  std::vector<Index> failing_gradient_rows;  // rows of the first derivatives that disagree
  bool gradient_failed = false;
  for (const auto& target : targets) {
    detail::part_checker checker(target, x, xs, options, rep.relative_step, rep);
    derivative_part_summary s = checker.run();
    if (target.part == derivative_part::objective_gradient) gradient_failed = s.disagreeing > 0;
    if (target.part == derivative_part::constraint_jacobian)
      failing_gradient_rows = checker.failing_rows();
    if (target.part == derivative_part::objective_hessian && gradient_failed && s.disagreeing > 0)
      add_finding(rep.findings, severity::warning, "hessian_reference_suspect",
                  "the objective Hessian is compared with differences of objective_gradient, "
                  "which itself disagrees with the objective: its mismatches may be the gradient's",
                  {}, rep.names);
    if (target.part == derivative_part::constraint_hessians && !failing_gradient_rows.empty() &&
        s.disagreeing > 0)
      add_finding(rep.findings, severity::warning, "hessian_reference_suspect",
                  "constraint Hessians are compared with differences of constraint_jacobian, "
                  "whose rows " +
                      labels_of(failing_gradient_rows) +
                      " disagree with constraint_values: their Hessian mismatches may be the "
                      "Jacobian's",
                  failing_gradient_rows, rep.names);
    rep.entries += s.entries;
    rep.agreeing += s.agreeing;
    rep.disagreeing += s.disagreeing;
    rep.undecided += s.undecided;
    rep.not_evaluated += s.not_evaluated;
    rep.max_bound_ratio = std::max(rep.max_bound_ratio, s.max_bound_ratio);
    rep.max_proven_ratio = std::max(rep.max_proven_ratio, s.max_proven_ratio);
    rep.parts.push_back(s);
  }

  for (const auto& w : rep.worst) {
    if (w.result == verdict::holds) continue;
    const bool fails = w.result == verdict::fails;
    std::vector<Index> rows;
    if (w.row >= 0) rows.push_back(w.row);
    add_finding(rep.findings, fails ? severity::error : severity::warning,
                fails ? "derivative_mismatch" : "derivative_within_noise",
                w.name() + ": analytic " + detail::format_value(w.analytic) +
                    ", finite difference " + detail::format_value(w.finite_difference) +
                    ", error " + detail::format_figure(w.error) + ", estimate " +
                    detail::format_figure(w.error_estimate) + ", tolerance " +
                    detail::format_figure(w.tolerance) + " (step " + detail::format_figure(w.step) +
                    ")",
                std::move(rows), rep.names);
  }

  const std::string counted =
      std::to_string(rep.entries) + " entr" + (rep.entries == 1 ? "y" : "ies");
  const auto worst_text = [&] {
    if (rep.worst.empty()) return std::string();
    const auto& w = rep.worst.front();
    return "; worst " + w.name() + ": analytic " + detail::format_value(w.analytic) +
           ", finite difference " + detail::format_value(w.finite_difference);
  };
  if (rep.disagreeing > 0) {
    rep.result = verdict::fails;
    rep.message = "derivatives disagree: " + std::to_string(rep.disagreeing) + " of " + counted +
                  " beyond tolerance and error estimate ((error - estimate)/tolerance up to " +
                  detail::format_figure(rep.max_proven_ratio) + ")" + worst_text();
  } else if (rep.undecided > 0 || rep.not_evaluated > 0) {
    rep.result = verdict::undecided;
    rep.message = "derivatives undecided: " + std::to_string(rep.undecided) + " of " + counted +
                  " within the error estimate of the tolerance, " +
                  std::to_string(rep.not_evaluated) + " not evaluated" + worst_text();
  } else {
    rep.result = verdict::holds;
    rep.message = "derivatives agree: " + counted +
                  " within tolerance and error estimate ((error + estimate)/tolerance up to " +
                  detail::format_figure(rep.max_bound_ratio) + ")";
  }
  return rep;
}

}  // namespace qualify
