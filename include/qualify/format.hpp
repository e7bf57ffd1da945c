// qualify: fmt formatting of reports: `{}` is a one-line brief, `{:f}` the full multi-line form.
// SPDX-License-Identifier: MIT
#pragma once

#include <qualify/derivative_check.hpp>
#include <qualify/kkt.hpp>
#include <qualify/licq.hpp>
#include <qualify/linear_cq.hpp>
#include <qualify/mfcq.hpp>
#include <qualify/lp.hpp>
#include <qualify/report.hpp>
#include <qualify/slater.hpp>

#include <fmt/format.h>
#include <string>
#include <vector>

namespace qualify {
namespace detail {

inline std::string join_rows(const std::vector<Index>& rows, const row_names& names) {
  if (rows.empty()) return "none";
  std::string out;
  for (std::size_t i = 0; i < rows.size(); ++i) out += (i ? ", " : "") + names(rows[i]);
  return out;
}

inline std::string render_findings(const std::vector<finding>& findings) {
  std::string out;
  if (findings.empty()) return "  findings: none\n";
  out += "  findings:\n";
  for (const auto& f : findings)
    out += fmt::format("    {:<7} {:<26} {}\n", to_string(f.level), f.code, f.message);
  return out;
}

inline std::string brief_suffix(const std::vector<finding>& findings) {
  if (findings.empty()) return {};
  return fmt::format(" [{} finding{}]", findings.size(), findings.size() == 1 ? "" : "s");
}

inline std::string render(const licq_report& r, bool full) {
  if (!full) return r.message + brief_suffix(r.findings);
  std::string out = r.message + "\n";
  out += fmt::format("  jacobian     {} rows x {} variables\n", r.rows, r.cols);
  if (r.result != verdict::invalid_input && r.result != verdict::not_checked) {
    out += fmt::format("  rank         {} on unit gradients, {} on gradients as given\n", r.rank,
                       r.raw_rank);
    out += fmt::format("  threshold    {:.3g} relative ({}), {:.3g} for the raw rank\n",
                       r.threshold, r.relative_threshold_requested ? "given" : "automatic",
                       r.raw_threshold);
    out += fmt::format("  decided by   {}: deciding value {:.3g}, margin {:.3g}\n",
                       to_string(r.method), r.deciding_value, r.margin);
    out += fmt::format("  singular     min {:.3g} (distance to degeneracy), max {:.3g}, condition {:.3g}\n",
                       r.smallest_singular_value, r.largest_singular_value, r.condition_number);
    out += "  independent  " + join_rows(r.independent_rows, r.names) + "\n";
    out += "  dependent    " + join_rows(r.dependent_rows(), r.names) + "\n";
  }
  if (r.active) {
    out += fmt::format("  activity     tolerance {:.3g}\n", r.active->activity_tolerance);
    out += "  active       " + join_rows(r.active->active, r.names) + "\n";
    out += "  near-active  " + join_rows(r.active->near_active, r.names) + "\n";
  }
  return out + render_findings(r.findings);
}

inline std::string render(const linear_cq_report& r, bool full) {
  if (!full) return r.message + brief_suffix(r.findings);
  std::string out = r.message + "\n";
  out += "  checked      " + join_rows(r.checked_rows, r.names) + "\n";
  out += "  not affine   " + join_rows(r.non_affine_rows, r.names) + "\n";
  return out + render_findings(r.findings);
}

inline std::string render(const affine_check_report& r, bool full) {
  if (!full) return r.message + brief_suffix(r.findings);
  std::string out = r.message + "\n";
  for (std::size_t i = 0; i < r.checked_rows.size(); ++i)
    out += fmt::format("  {:<12} deviation {:.3g}\n", r.names(r.checked_rows[i]), r.deviation[i]);
  return out + render_findings(r.findings);
}

inline std::string render(const mfcq_report& r, bool full) {
  if (!full) return r.message + brief_suffix(r.findings);
  std::string out = r.message + "\n";
  out += fmt::format("  jacobians    {} active inequalities, {} equalities, {} variables\n",
                     r.ineq_rows, r.eq_rows, r.cols);
  if (r.result != verdict::invalid_input && r.result != verdict::not_checked) {
    out += fmt::format("  threshold    {:.3g} relative ({}), band {:.3g}\n", r.relative_threshold,
                       r.relative_threshold_requested ? "given" : "automatic", r.undecided_band);
    out += fmt::format("  lp           t* = {:.3g} ({}, {} iterations)\n", r.margin,
                       to_string(r.lp), r.lp_iterations);
    if (r.direction.size() > 0)
      out += fmt::format("  direction    margin {:.3g} on unit gradients, max (A d)_i {:.3g}, "
                         "|E d| {:.3g} relative\n",
                         r.direction_margin, r.max_ineq_derivative, r.equality_residual);
    if (r.certificate.kind != mfcq_certificate_kind::none) {
      std::vector<Index> eq_rows;
      for (Index j : r.certificate.eq_rows) eq_rows.push_back(r.ineq_rows + j);
      out += fmt::format("  certificate  {}: residual {:.3g}", to_string(r.certificate.kind),
                         r.certificate.residual);
      if (r.certificate.kind == mfcq_certificate_kind::positive_dependence)
        out += fmt::format(", t* <= {:.3g}", r.certificate.margin_bound);
      out += "\n";
      out += "  lambda > 0   " + join_rows(r.certificate.ineq_rows, r.names) + "\n";
      out += "  mu != 0      " + join_rows(eq_rows, r.names) + "\n";
    }
    if (r.equality_licq)
      out += fmt::format("  equalities   rank {} of {} ({})\n", r.equality_licq->rank,
                         r.eq_rows, to_string(r.equality_licq->result));
    if (r.licq) out += fmt::format("  licq         {}\n", r.licq->message);
  }
  return out + render_findings(r.findings);
}

inline std::string render(const qualification_report& r, bool full) {
  if (!full) return render(r.licq, false) + "; " + render(r.linear_cq, false);
  return render(r.licq, true) + render(r.linear_cq, true);
}

inline std::string render(const lp_result& r, bool full) {
  std::string brief = fmt::format("LP {}: objective {:.10g}, {} iterations", to_string(r.status),
                                  r.objective, r.iterations);
  if (!full) return brief;
  std::string out = brief + "\n";
  out += "  message      " + r.message + "\n";
  out += fmt::format("  residuals    primal {:.3g}, dual {:.3g}, gap {:.3g} (relative, scaled)\n",
                     r.primal_residual, r.dual_residual, r.gap);
  out += fmt::format("  violations   primal {:.3g}, dual {:.3g} (on the data)\n",
                     r.primal_violation, r.dual_violation);
  if (r.status == lp_status::infeasible || r.status == lp_status::unbounded)
    out += fmt::format("  certificate  {} checked, margin {:.3g}\n",
                       r.status == lp_status::infeasible ? "Farkas vector" : "improving ray",
                       r.certificate_margin);
  out += fmt::format("  presolve     removed {} rows, {} columns\n", r.presolve_removed_rows,
                     r.presolve_removed_cols);
  out += "  factorised   " + (r.linear_solver.empty() ? std::string("-") : r.linear_solver) + "\n";
  return out;
}

inline std::string render(const affine_slater_report& r, bool full) {
  if (!full) return r.message + brief_suffix(r.findings);
  std::string out = r.message + "\n";
  out += fmt::format("  system       {} rows ({} equalities) x {} columns ({} fixed), {} "
                     "inequality sides\n",
                     r.rows, r.equality_rows, r.cols, r.fixed_columns, r.inequality_sides);
  if (r.result != verdict::invalid_input && r.result != verdict::not_checked) {
    out += fmt::format("  verdict      {}; feasibility {}; refined Slater {}; strict interior {}\n",
                       r.verdict_name(), to_string(r.feasible), to_string(r.refined_slater),
                       r.strict_interior ? "yes" : "no");
    out += fmt::format("  tolerances   slack {:.3g}, band {:.3g} (strict >= {:.3g}), feasibility "
                       "{:.3g} (relative)\n",
                       r.slack_tolerance, r.undecided_band, r.slack_tolerance * r.undecided_band,
                       r.feasibility_tolerance);
    out += fmt::format("  margin       {:.3g} (largest achievable minimum relative slack)\n",
                       r.margin);
    if (r.strict_point.size() || r.strict_interior)
      out += fmt::format("  point        smallest relative slack {:.3g}, largest violation {:.3g}\n",
                         r.point_min_slack, r.point_violation);
    std::vector<Index> rows = r.implicit_equality_rows();
    out += "  implicit eq  " + join_rows(rows, r.names) + "\n";
    std::string cols;
    for (Index j : r.implicit_fixed_column_indices()) cols += (cols.empty() ? "" : ", ") + r.column_name(j);
    out += "  fixed cols   " + (cols.empty() ? std::string("none") : cols) + "\n";
    if (!r.certificate_rows.empty())
      out += "  certificate  " + join_rows(r.certificate_rows, r.names) +
             fmt::format(" (margin {:.3g})\n", r.certificate_margin);
    std::string lps;
    for (const auto& s : r.lp_solves)
      lps += fmt::format("{}{} {} ({} it.)", lps.empty() ? "" : ", ", s.purpose, to_string(s.status),
                         s.iterations);
    out += fmt::format("  LPs          {} solved, {} iterations: {}\n", r.lp_solves.size(),
                       r.lp_iterations, lps.empty() ? std::string("none") : lps);
  }
  return out + render_findings(r.findings);
}

inline std::string render(const derivative_check_report& r, bool full) {
  if (!full) return r.message + brief_suffix(r.findings);
  std::string out = r.message + "\n";
  out += fmt::format("  model        {} variable{}, {} constraint{}\n", r.variables,
                     r.variables == 1 ? "" : "s", r.constraints, r.constraints == 1 ? "" : "s");
  if (r.result != verdict::invalid_input && r.result != verdict::not_checked) {
    out += fmt::format(
        "  steps        central differences at h_j = {:.3g} ({}) x max(|x_j|, "
        "typical_j) and h_j/2, extrapolated; up to {} reductions by 16\n",
        r.relative_step, r.relative_step_requested ? "given" : "automatic", r.step_reductions);
    out += fmt::format(
        "  tolerance    {:.3g} relative, floor {:.3g} of the row's scale, value "
        "precision {:.3g}, estimate safety {:.3g}\n",
        r.relative_tolerance, r.scale_floor, r.value_precision, r.estimate_safety);
    out += fmt::format(
        "  decided by   max (error + estimate)/tolerance {:.3g}, max (error - "
        "estimate)/tolerance {:.3g}\n",
        r.max_bound_ratio, r.max_proven_ratio);
    for (const auto& p : r.parts)
      out += fmt::format(
          "  {:<20} {} entries: {} agree, {} disagree, {} undecided, {} not "
          "evaluated; {} variables at a reduced step\n",
          to_string(p.part), p.entries, p.agreeing, p.disagreeing, p.undecided, p.not_evaluated,
          p.reduced_variables);
    out += fmt::format("  evaluations  {} at displaced points\n", r.evaluations);
    if (!r.worst.empty())
      out +=
          "  worst        verdict   entry                      analytic         finite "
          "difference  error     estimate  tolerance step\n";
    for (const auto& w : r.worst)
      out += fmt::format(
          "               {:<9} {:<26} {:<16.9g} {:<18.9g} {:<9.3g} {:<9.3g} {:<9.3g} "
          "{:.3g}\n",
          to_string(w.result), w.name(), w.analytic, w.finite_difference, w.error, w.error_estimate,
          w.tolerance, w.step);
  }
  return out + render_findings(r.findings);
}

inline std::string render(const slater_report& r, bool full) {
  if (!full) return r.message + brief_suffix(r.findings);
  std::string out = r.message + "\n";
  out += fmt::format(
      "  model        {} variables, {} constraints: {} convex, {} affine "
      "inequalities, {} equalities\n",
      r.variables, r.constraints, r.convex_rows.size(), r.affine_rows.size(),
      r.equality_rows.size());
  if (!r.not_convex_rows.empty())
    out += "  not convex   " + join_rows(r.not_convex_rows, r.names) + "\n";
  if (r.result != verdict::invalid_input && r.result != verdict::not_checked) {
    out += fmt::format("  verdict      {}; feasibility {}; strict interior {}; method {}\n",
                       r.verdict_name(), to_string(r.feasible), to_string(r.strict_interior),
                       r.method);
    const bool phase_one = r.method.rfind("phase_one", 0) == 0;
    out += fmt::format(
        "  tolerances   margin {:.3g}, band {:.3g} (strict <= {:.3g}), feasibility "
        "{:.3g} (relative)\n",
        r.margin_tolerance, r.undecided_band, -r.margin_tolerance * r.undecided_band,
        r.feasibility_tolerance);
    if (phase_one)
      out += fmt::format(
          "  s* bounds    [{:.3g}, {:.3g}] (max g_i/w_i over the convex rows), search radius "
          "{:.3g}\n",
          r.lower_bound, r.upper_bound, r.search_radius);
    if (r.point.size())
      out += fmt::format("  point        largest g_i/w_i {:.3g}, largest violation {:.3g}\n",
                         r.point_margin, r.point_violation);
    if (r.interior_point.size())
      out += fmt::format("  interior     smallest relative slack {:.3g}\n", r.interior_slack);
    if (r.certificate_point.size()) {
      out += fmt::format("  certificate  phi {:.3g}, |grad phi| {:.3g}, proof radius {:.3g}\n",
                         r.certificate_value, r.certificate_gradient, r.proof_radius);
      std::string pinch;
      for (Index i : r.pinching)
        pinch +=
            fmt::format("{}{} ({:.3g})", pinch.empty() ? "" : ", ", r.names(i), r.multipliers[i]);
      out += "  pinching     " + (pinch.empty() ? std::string("none") : pinch) + "\n";
      out += "  affine used  " + join_rows(r.certificate_affine_rows, r.names) + "\n";
    }
    out += "  implicit eq  " + join_rows(r.implicit_equalities, r.names) + "\n";
    if (phase_one)
      out += fmt::format(
          "  phase one    {} Newton steps, {} centrings, t = {:.3g}, {} callback "
          "calls, {} steps outside the domain\n",
          r.newton_steps, r.barrier_rounds, r.barrier_parameter, r.callback_evaluations,
          r.domain_exits);
    if (r.affine) out += "  affine part  " + r.affine->message + "\n";
  }
  return out + render_findings(r.findings);
}

inline std::string render(const kkt_report& r, bool full) {
  if (!full) return r.message + brief_suffix(r.findings);
  std::string out = r.message + "\n";
  if (r.result == verdict::invalid_input || r.result == verdict::not_checked)
    return out + render_findings(r.findings);
  const auto& names = r.names;
  out += fmt::format("  model        {} variables, {} constraints; multipliers {}", r.variables,
                     r.constraints, to_string(r.source));
  if (r.source == multiplier_source::estimated)
    out += fmt::format(" (bounded least squares, {} solves)", r.estimate_iterations);
  out += fmt::format("\n  activity     tolerance {:.3g}\n", r.active.activity_tolerance);
  out += "  active       " + join_rows(r.active.active, names) + "\n";
  out += "  near-active  " + join_rows(r.active.near_active, names) + "\n";
  out += "  violated     " + join_rows(r.active.violated, names) + "\n";
  out += fmt::format("  residuals    {:<16} {:>10} {:>10} {:>10}  verdict\n", "", "raw", "scaled",
                     "threshold");
  const std::pair<const char*, const kkt_residual*> rows[] = {
      {"stationarity", &r.stationarity},
      {"primal", &r.primal},
      {"dual", &r.dual},
      {"complementarity", &r.complementarity}};
  for (const auto& [label, res] : rows)
    out += fmt::format("               {:<16} {:>10.3g} {:>10.3g} {:>10.3g}  {}\n", label, res->raw,
                       res->scaled, res->threshold, to_string(res->result));
  out += fmt::format("  scaling      s_d = {:.3g} (divides stationarity and complementarity)\n",
                     r.multiplier_scale);
  std::string multipliers;
  Index shown = 0, nonzero = 0;
  for (Index i = 0; i < r.multipliers.size(); ++i) {
    if (r.multipliers(i) == 0) continue;
    ++nonzero;
    if (++shown <= 12)
      multipliers +=
          fmt::format("{}{} {:.6g}", multipliers.empty() ? "" : ", ", names(i), r.multipliers(i));
  }
  if (nonzero > 12) multipliers += fmt::format(" and {} more", nonzero - 12);
  out += "  multipliers  " + (multipliers.empty() ? std::string("all zero") : multipliers) + "\n";
  out += "  licq         " + r.licq.message + "\n";
  out += "  linear cq    " + r.linear_cq.message + "\n";
  out += "  mfcq         " +
         (r.mfcq_decided_by == "licq" ? std::string("holds (implied by LICQ)")
          : r.mfcq_decided_by == "multiplier_ranges"
              ? std::string(to_string(r.mfcq_result)) + " (the multiplier set is " +
                    (r.mfcq_result == verdict::holds ? "bounded" : "unbounded") + ": Gauvin 1977)"
          : r.mfcq ? r.mfcq->message
                   : std::string(to_string(r.mfcq_result))) +
         "\n";
  if (r.result != verdict::fails) {
    out += fmt::format("  uniqueness   unique {}, bounded {}\n", to_string(r.multipliers_unique),
                       to_string(r.multipliers_bounded));
    std::string ranges;
    for (const auto& range : r.ranges)
      ranges += fmt::format("{}{} in [{:.6g}, {:.6g}]", ranges.empty() ? "" : ", ",
                            names(range.row), range.lower, range.upper);
    if (!ranges.empty()) out += "  ranges       " + ranges + "\n";
    out += "  strongly     " + join_rows(r.strongly_active, names) + "\n";
    out += "  weakly       " + join_rows(r.weakly_active, names) +
           fmt::format(" (complementarity margin {:.3g})\n", r.complementarity_margin);
  }
  out += fmt::format("  second order {}: {}\n", to_string(r.second_order.result),
                     r.second_order.reason);
  for (const auto& premise : r.premises) out += "  premise      " + premise + "\n";
  return out + render_findings(r.findings);
}

/// Shared parser: an empty spec or `f`.
struct report_formatter {
  bool full = false;
  template <class ParseContext>
  constexpr auto parse(ParseContext& ctx) {
    auto it = ctx.begin();
    if (it != ctx.end() && *it == 'f') {
      full = true;
      ++it;
    }
    // fmt's own way to refuse a spec: a throw, or fmt's assertion without exceptions.
    if (it != ctx.end() && *it != '}')
      FMT_THROW(fmt::format_error("qualify reports take {} or {:f}"));
    return it;
  }
  template <class Report, class FormatContext>
  auto format(const Report& r, FormatContext& ctx) const {
    const std::string text = render(r, full);
    return std::copy(text.begin(), text.end(), ctx.out());
  }
};

}  // namespace detail
}  // namespace qualify

template <>
struct fmt::formatter<qualify::verdict> : fmt::formatter<fmt::string_view> {
  template <class FormatContext>
  auto format(qualify::verdict v, FormatContext& ctx) const {
    const auto s = qualify::to_string(v);
    return fmt::formatter<fmt::string_view>::format(fmt::string_view(s.data(), s.size()), ctx);
  }
};

template <>
struct fmt::formatter<qualify::licq_report> : qualify::detail::report_formatter {};
template <>
struct fmt::formatter<qualify::linear_cq_report> : qualify::detail::report_formatter {};
template <>
struct fmt::formatter<qualify::affine_check_report> : qualify::detail::report_formatter {};
template <>
struct fmt::formatter<qualify::mfcq_report> : qualify::detail::report_formatter {};
template <>
struct fmt::formatter<qualify::qualification_report> : qualify::detail::report_formatter {};
template <>
struct fmt::formatter<qualify::lp_result> : qualify::detail::report_formatter {};
template <>
struct fmt::formatter<qualify::affine_slater_report> : qualify::detail::report_formatter {};
template <>
struct fmt::formatter<qualify::derivative_check_report> : qualify::detail::report_formatter {};
template <>
struct fmt::formatter<qualify::kkt_report> : qualify::detail::report_formatter {};
template <>
struct fmt::formatter<qualify::slater_report> : qualify::detail::report_formatter {};
