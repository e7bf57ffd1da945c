// qualify: fmt formatting of reports: `{}` is a one-line brief, `{:f}` the full multi-line form.
// SPDX-License-Identifier: MIT
#pragma once

#include <qualify/licq.hpp>
#include <qualify/linear_cq.hpp>
#include <qualify/mfcq.hpp>
#include <qualify/report.hpp>

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
    if (it != ctx.end() && *it != '}') throw fmt::format_error("qualify reports take {} or {:f}");
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
