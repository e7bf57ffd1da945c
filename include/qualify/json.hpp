// qualify: reports as JSON objects with stable snake_case keys (see the README's key table).
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

#include <cmath>
#include <cstdio>
#include <string>
#include <string_view>
#include <vector>

namespace qualify {

/// Bumped when a key changes meaning or disappears; new keys do not bump it.
inline constexpr int json_schema_version = 1;

namespace detail {

/// A minimal streaming JSON writer: commas and escaping handled, non-finite numbers as null.
class json_writer {
 public:
  json_writer& begin_object() { return open('{'); }
  json_writer& end_object() { return close('}'); }
  json_writer& begin_array() { return open('['); }
  json_writer& end_array() { return close(']'); }

  json_writer& key(std::string_view k) {
    separate();
    string(k);
    out_ += ':';
    after_key_ = true;
    return *this;
  }
  json_writer& value(std::string_view s) {
    separate();
    string(s);
    return *this;
  }
  json_writer& value(const char* s) { return value(std::string_view(s)); }
  json_writer& value(bool b) {
    separate();
    out_ += b ? "true" : "false";
    return *this;
  }
  json_writer& value(double v) {
    separate();
    if (!std::isfinite(v)) {
      out_ += "null";
    } else {
      char buffer[32];
      std::snprintf(buffer, sizeof buffer, "%.17g", v);
      out_ += buffer;
    }
    return *this;
  }
  json_writer& value(Index v) {
    separate();
    out_ += std::to_string(v);
    return *this;
  }
  json_writer& value(int v) { return value(Index(v)); }
  template <class T>
  json_writer& value(const std::vector<T>& list) {
    begin_array();
    for (const auto& item : list) value(item);
    return end_array();
  }
  template <class T>
  json_writer& field(std::string_view k, const T& v) {
    key(k);
    return value(v);
  }

  const std::string& str() const noexcept { return out_; }

 private:
  json_writer& open(char c) {
    separate();
    out_ += c;
    first_ = true;
    return *this;
  }
  json_writer& close(char c) {
    out_ += c;
    first_ = false;
    return *this;
  }
  void separate() {
    if (after_key_) {
      after_key_ = false;
      return;
    }
    if (!first_) out_ += ',';
    first_ = false;
  }
  void string(std::string_view s) {
    out_ += '"';
    for (unsigned char c : s) {
      switch (c) {
        case '"': out_ += "\\\""; break;
        case '\\': out_ += "\\\\"; break;
        case '\n': out_ += "\\n"; break;
        case '\r': out_ += "\\r"; break;
        case '\t': out_ += "\\t"; break;
        default:
          if (c < 0x20) {
            char buffer[8];
            std::snprintf(buffer, sizeof buffer, "\\u%04x", c);
            out_ += buffer;
          } else {
            out_ += char(c);
          }
      }
    }
    out_ += '"';
  }

  std::string out_;
  bool first_ = true;
  bool after_key_ = false;
};

inline void write_findings(json_writer& w, const std::vector<finding>& findings) {
  w.key("findings").begin_array();
  for (const auto& f : findings) {
    w.begin_object()
        .field("severity", to_string(f.level))
        .field("code", f.code)
        .field("message", f.message)
        .field("rows", f.rows)
        .field("labels", f.labels)
        .end_object();
  }
  w.end_array();
}

inline void write_pairs(json_writer& w, std::string_view k, const std::vector<row_pair>& pairs) {
  w.key(k).begin_array();
  for (const auto& p : pairs)
    w.begin_object().field("first", p.first).field("second", p.second).field("ratio", p.ratio).end_object();
  w.end_array();
}

inline void write_body(json_writer& w, const licq_report& r) {
  w.field("check", "licq")
      .field("verdict", to_string(r.result))
      .field("message", r.message)
      .field("method", to_string(r.method))
      .field("rows", r.rows)
      .field("cols", r.cols)
      .field("rank", r.rank)
      .field("raw_rank", r.raw_rank)
      .key("relative_threshold_requested");
  if (r.relative_threshold_requested)
    w.value(*r.relative_threshold_requested);
  else
    w.value("automatic");
  w.field("relative_threshold", r.relative_threshold)
      .field("threshold", r.threshold)
      .field("raw_threshold", r.raw_threshold)
      .field("deciding_value", r.deciding_value)
      .field("margin", r.margin)
      .field("smallest_singular_value", r.smallest_singular_value)
      .field("largest_singular_value", r.largest_singular_value)
      .field("condition_number", r.condition_number)
      .field("independent_rows", r.independent_rows)
      .field("dependent_rows", r.dependent_rows())
      .key("dependencies")
      .begin_array();
  for (const auto& d : r.dependencies) {
    w.begin_object().field("row", d.row).field("label", r.names(d.row)).key("terms").begin_array();
    for (const auto& t : d.terms)
      w.begin_object().field("row", t.row).field("coefficient", t.coefficient).end_object();
    w.end_array().field("residual", d.residual).end_object();
  }
  w.end_array().field("zero_rows", r.zero_rows);
  write_pairs(w, "duplicate_rows", r.duplicate_rows);
  write_pairs(w, "parallel_rows", r.parallel_rows);
  write_pairs(w, "opposed_rows", r.opposed_rows);
  if (r.active) {
    w.key("active_set")
        .begin_object()
        .field("activity_tolerance", r.active->activity_tolerance)
        .field("active", r.active->active)
        .field("near_active", r.active->near_active)
        .field("violated", r.active->violated)
        .end_object();
  }
  w.field("labels", r.names.labels());
  write_findings(w, r.findings);
}

inline void write_body(json_writer& w, const linear_cq_report& r) {
  std::vector<std::string> kinds;
  for (auto k : r.kinds) kinds.emplace_back(to_string(k));
  w.field("check", "linear_cq")
      .field("verdict", to_string(r.result))
      .field("message", r.message)
      .field("checked_rows", r.checked_rows)
      .field("non_affine_rows", r.non_affine_rows)
      .field("kinds", kinds)
      .field("labels", r.names.labels());
  write_findings(w, r.findings);
}

inline void write_body(json_writer& w, const affine_check_report& r) {
  w.field("check", "declared_affine")
      .field("verdict", to_string(r.result))
      .field("message", r.message)
      .field("tolerance", r.tolerance)
      .field("samples", r.samples)
      .field("checked_rows", r.checked_rows)
      .field("deviation", r.deviation)
      .field("not_affine_rows", r.not_affine_rows)
      .field("labels", r.names.labels());
  write_findings(w, r.findings);
}

inline void write_vector(json_writer& w, std::string_view k, const Eigen::VectorXd& v) {
  w.key(k).begin_array();
  for (Index i = 0; i < v.size(); ++i) w.value(v(i));
  w.end_array();
}

inline void write_body(json_writer& w, const mfcq_report& r) {
  w.field("check", "mfcq")
      .field("verdict", to_string(r.result))
      .field("message", r.message)
      .field("ineq_count", r.ineq_rows)
      .field("eq_count", r.eq_rows)
      .field("cols", r.cols)
      .key("relative_threshold_requested");
  if (r.relative_threshold_requested)
    w.value(*r.relative_threshold_requested);
  else
    w.value("automatic");
  w.field("relative_threshold", r.relative_threshold)
      .field("undecided_band", r.undecided_band)
      .field("margin", r.margin)
      .field("deciding_value", r.deciding_value)
      .field("lp_status", to_string(r.lp))
      .field("lp_iterations", r.lp_iterations);
  write_vector(w, "direction", r.direction);
  w.field("direction_margin", r.direction_margin)
      .field("max_ineq_derivative", r.max_ineq_derivative)
      .field("equality_residual", r.equality_residual);
  if (r.certificate.kind != mfcq_certificate_kind::none) {
    w.key("certificate").begin_object().field("kind", to_string(r.certificate.kind));
    write_vector(w, "lambda", r.certificate.lambda);
    write_vector(w, "mu", r.certificate.mu);
    w.field("ineq_rows", r.certificate.ineq_rows)
        .field("eq_rows", r.certificate.eq_rows)
        .field("residual", r.certificate.residual)
        .field("margin_bound", r.certificate.margin_bound)
        .end_object();
  }
  if (r.equality_licq) {
    w.key("equality_licq").begin_object();
    write_body(w, *r.equality_licq);
    w.end_object();
  }
  if (r.licq) {
    w.key("licq").begin_object();
    write_body(w, *r.licq);
    w.end_object();
  }
  w.field("labels", r.names.labels());
  write_findings(w, r.findings);
}

inline void write_body(json_writer& w, const lp_result& r) {
  w.field("check", "lp")
      .field("status", to_string(r.status))
      .field("message", r.message)
      .field("objective", r.objective)
      .field("iterations", r.iterations)
      .field("primal_residual", r.primal_residual)
      .field("dual_residual", r.dual_residual)
      .field("gap", r.gap)
      .field("primal_violation", r.primal_violation)
      .field("dual_violation", r.dual_violation)
      .field("certificate_margin", r.certificate_margin)
      .field("presolve_removed_rows", r.presolve_removed_rows)
      .field("presolve_removed_cols", r.presolve_removed_cols)
      .field("linear_solver", r.linear_solver);
  write_vector(w, "x", r.x);
  if (r.status == lp_status::infeasible) write_vector(w, "farkas", r.farkas);
  if (r.status == lp_status::unbounded) write_vector(w, "ray", r.ray);
}

inline void write_body(json_writer& w, const affine_slater_report& r) {
  auto bounds = [&](std::string_view k, const std::vector<implicit_bound>& list, bool column) {
    w.key(k).begin_array();
    for (const auto& b : list)
      w.begin_object()
          .field("index", b.index)
          .field("name", column ? r.column_name(b.index) : r.names(b.index))
          .field("side", to_string(b.side))
          .field("value", b.value)
          .end_object();
    w.end_array();
  };
  std::vector<std::string> rows, cols;
  for (Index i : r.implicit_equality_rows()) rows.push_back(r.names(i));
  for (Index j : r.implicit_fixed_column_indices()) cols.push_back(r.column_name(j));
  w.field("check", "slater")
      .field("verdict", r.verdict_name())
      .field("message", r.message)
      .field("feasibility", to_string(r.feasible))
      .field("refined_slater", to_string(r.refined_slater))
      .field("strict_interior", r.strict_interior)
      .field("implicit_equalities", rows)
      .field("implicit_fixed_columns", cols)
      .field("margin", r.margin)
      .field("rows", r.rows)
      .field("cols", r.cols)
      .field("equality_rows", r.equality_rows)
      .field("fixed_columns", r.fixed_columns)
      .field("inequality_sides", r.inequality_sides)
      .field("slack_tolerance", r.slack_tolerance)
      .field("undecided_band", r.undecided_band)
      .field("feasibility_tolerance", r.feasibility_tolerance)
      .field("point_min_slack", r.point_min_slack)
      .field("point_violation", r.point_violation);
  write_vector(w, "strict_point", r.strict_point);
  bounds("implicit_equality_sides", r.implicit_equalities, false);
  bounds("implicit_fixed_column_sides", r.implicit_fixed_columns, true);
  bounds("undecided_rows", r.undecided_rows, false);
  bounds("undecided_columns", r.undecided_columns, true);
  w.field("certificate_rows", r.certificate_rows).field("certificate_margin", r.certificate_margin);
  write_vector(w, "farkas", r.farkas);
  w.key("lp_solves").begin_array();
  for (const auto& s : r.lp_solves)
    w.begin_object()
        .field("purpose", s.purpose)
        .field("status", to_string(s.status))
        .field("iterations", s.iterations)
        .field("value", s.value)
        .end_object();
  w.end_array().field("lp_iterations", r.lp_iterations);
  write_findings(w, r.findings);
}

inline void write_body(json_writer& w, const derivative_check_report& r) {
  w.field("check", "derivatives")
      .field("verdict", to_string(r.result))
      .field("message", r.message)
      .field("variables", r.variables)
      .field("constraints", r.constraints)
      .key("relative_step_requested");
  if (r.relative_step_requested)
    w.value(*r.relative_step_requested);
  else
    w.value("automatic");
  w.field("relative_step", r.relative_step)
      .field("relative_tolerance", r.relative_tolerance)
      .field("scale_floor", r.scale_floor)
      .field("value_precision", r.value_precision)
      .field("estimate_safety", r.estimate_safety)
      .field("step_reductions", r.step_reductions)
      .field("entries", r.entries)
      .field("agreeing", r.agreeing)
      .field("disagreeing", r.disagreeing)
      .field("undecided", r.undecided)
      .field("not_evaluated", r.not_evaluated)
      .field("max_bound_ratio", r.max_bound_ratio)
      .field("max_proven_ratio", r.max_proven_ratio)
      .field("evaluations", r.evaluations)
      .key("parts")
      .begin_array();
  for (const auto& p : r.parts)
    w.begin_object()
        .field("part", to_string(p.part))
        .field("entries", p.entries)
        .field("agreeing", p.agreeing)
        .field("disagreeing", p.disagreeing)
        .field("undecided", p.undecided)
        .field("not_evaluated", p.not_evaluated)
        .field("reduced_variables", p.reduced_variables)
        .field("max_bound_ratio", p.max_bound_ratio)
        .field("max_proven_ratio", p.max_proven_ratio)
        .end_object();
  w.end_array().key("worst").begin_array();
  for (const auto& e : r.worst)
    w.begin_object()
        .field("verdict", to_string(e.result))
        .field("part", to_string(e.part))
        .field("name", e.name())
        .field("row", e.row)
        .field("label", e.label)
        .field("variable", e.variable)
        .field("hessian_row", e.hessian_row)
        .field("analytic", e.analytic)
        .field("finite_difference", e.finite_difference)
        .field("error", e.error)
        .field("truncation_estimate", e.truncation_estimate)
        .field("rounding_estimate", e.rounding_estimate)
        .field("error_estimate", e.error_estimate)
        .field("tolerance", e.tolerance)
        .field("scale", e.scale)
        .field("step", e.step)
        .end_object();
  w.end_array().field("labels", r.names.labels());
  write_findings(w, r.findings);
}

inline void write_residual(json_writer& w, std::string_view k, const kkt_residual& r) {
  w.key(k)
      .begin_object()
      .field("verdict", to_string(r.result))
      .field("raw", r.raw)
      .field("scaled", r.scaled)
      .field("threshold", r.threshold)
      .field("margin", r.margin)
      .field("worst", r.worst)
      .field("over", r.over)
      .end_object();
}

inline void write_reduced_hessian(json_writer& w, std::string_view k, const reduced_hessian& h) {
  w.key(k)
      .begin_object()
      .field("computed", h.computed)
      .field("rows", h.rows)
      .field("constraint_rank", h.constraint_rank)
      .field("dimension", h.dimension)
      .field("positive", h.positive)
      .field("negative", h.negative)
      .field("zero", h.zero)
      .field("smallest_eigenvalue", h.smallest)
      .field("largest_eigenvalue", h.largest)
      .end_object();
}

inline void write_body(json_writer& w, const kkt_report& r) {
  const auto& names = r.names;
  const auto named = [&](const std::vector<Index>& rows) { return names(rows); };
  // Keys of `multipliers` are row names; a name met twice gets " (row i)" so keys stay unique.
  std::vector<std::string> keys;
  for (Index i = 0; i < r.multipliers.size(); ++i) {
    std::string key = names(i);
    if (std::find(keys.begin(), keys.end(), key) != keys.end())
      key += " (row " + std::to_string(i) + ")";
    keys.push_back(std::move(key));
  }
  w.field("check", "kkt")
      .field("verdict", to_string(r.result))
      .field("classification", to_string(r.classification))
      .field("message", r.message)
      .field("variables", r.variables)
      .field("constraints", r.constraints)
      .field("multiplier_source", to_string(r.source))
      .key("multipliers")
      .begin_object();
  for (Index i = 0; i < r.multipliers.size(); ++i) w.field(keys[std::size_t(i)], r.multipliers(i));
  w.end_object().key("residuals").begin_object();
  write_residual(w, "stationarity", r.stationarity);
  write_residual(w, "primal", r.primal);
  write_residual(w, "dual", r.dual);
  write_residual(w, "complementarity", r.complementarity);
  w.end_object()
      .field("multiplier_scale", r.multiplier_scale)
      .field("stationarity_norm", r.stationarity_norm)
      .field("estimate_iterations", r.estimate_iterations);
  write_vector(w, "row_violation", r.row_violation);
  w.field("activity_tolerance", r.active.activity_tolerance)
      .field("active", named(r.active.active))
      .field("near_active", named(r.active.near_active))
      .field("violated", named(r.active.violated))
      .field("strongly_active", named(r.strongly_active))
      .field("weakly_active", named(r.weakly_active))
      .field("complementarity_margin", r.complementarity_margin)
      .field("licq", to_string(r.licq.result))
      .field("linear_cq", to_string(r.linear_cq.result))
      .field("mfcq", to_string(r.mfcq_result))
      .field("mfcq_decided_by", r.mfcq_decided_by)
      .field("multipliers_unique", to_string(r.multipliers_unique))
      .field("multipliers_bounded", to_string(r.multipliers_bounded))
      .key("multiplier_ranges")
      .begin_array();
  for (const auto& range : r.ranges)
    w.begin_object()
        .field("row", range.row)
        .field("name", names(range.row))
        .field("lower", range.lower)
        .field("upper", range.upper)
        .end_object();
  const auto& so = r.second_order;
  w.end_array()
      .field("second_order", to_string(so.result))
      .key("second_order_detail")
      .begin_object()
      .field("reason", so.reason)
      .field("hessian_source", so.hessian_source)
      .field("hessian_norm", so.hessian_norm)
      .field("hessian_error_estimate", so.hessian_error_estimate)
      .field("eigenvalue_threshold", so.eigenvalue_threshold);
  write_reduced_hessian(w, "sufficient", so.sufficient);
  write_reduced_hessian(w, "necessary", so.necessary);
  w.end_object().field("premises", r.premises).key("licq_report").begin_object();
  write_body(w, r.licq);
  w.end_object().key("linear_cq_report").begin_object();
  write_body(w, r.linear_cq);
  w.end_object();
  if (r.mfcq) {
    w.key("mfcq_report").begin_object();
    write_body(w, *r.mfcq);
    w.end_object();
  }
  w.field("labels", names.labels());
  write_findings(w, r.findings);
}

inline void write_body(json_writer& w, const slater_report& r) {
  auto names = [&](const std::vector<Index>& rows) { return r.names(rows); };
  w.field("check", "slater_model")
      .field("verdict", r.verdict_name())
      .field("message", r.message)
      .field("method", r.method)
      .field("feasibility", to_string(r.feasible))
      .field("strict_interior", to_string(r.strict_interior))
      .field("variables", r.variables)
      .field("constraints", r.constraints)
      .field("convex_rows", r.convex_rows)
      .field("affine_rows", r.affine_rows)
      .field("equality_rows", r.equality_rows)
      .field("not_convex_rows", r.not_convex_rows)
      .field("margin_tolerance", r.margin_tolerance)
      .field("undecided_band", r.undecided_band)
      .field("feasibility_tolerance", r.feasibility_tolerance)
      .field("search_radius", r.search_radius);
  write_vector(w, "weights", r.weights);
  w.field("upper_bound", r.upper_bound).field("lower_bound", r.lower_bound);
  write_vector(w, "point", r.point);
  write_vector(w, "point_values", r.point_values);
  w.field("point_margin", r.point_margin).field("point_violation", r.point_violation);
  write_vector(w, "interior_point", r.interior_point);
  w.field("interior_slack", r.interior_slack);
  write_vector(w, "multipliers", r.multipliers);
  write_vector(w, "certificate_point", r.certificate_point);
  w.field("certificate_value", r.certificate_value)
      .field("certificate_gradient", r.certificate_gradient)
      .field("proof_radius", r.proof_radius)
      .field("pinching_rows", r.pinching)
      .field("pinching", names(r.pinching))
      .field("certificate_affine_rows", r.certificate_affine_rows)
      .field("implicit_equality_rows", r.implicit_equalities)
      .field("implicit_equalities", names(r.implicit_equalities));
  if (r.affine) {
    w.key("affine").begin_object();
    write_body(w, *r.affine);
    w.end_object();
  }
  w.field("newton_steps", r.newton_steps)
      .field("barrier_rounds", r.barrier_rounds)
      .field("barrier_parameter", r.barrier_parameter)
      .field("callback_evaluations", r.callback_evaluations)
      .field("domain_exits", r.domain_exits)
      .field("labels", r.names.labels());
  write_findings(w, r.findings);
}

template <class Report>
std::string report_json(const Report& r) {
  json_writer w;
  w.begin_object().field("schema_version", json_schema_version);
  write_body(w, r);
  w.end_object();
  return w.str();
}

}  // namespace detail

/// One JSON object per report; keys are listed in the README and never renamed.
inline std::string to_json(const licq_report& r) { return detail::report_json(r); }
inline std::string to_json(const linear_cq_report& r) { return detail::report_json(r); }
inline std::string to_json(const affine_check_report& r) { return detail::report_json(r); }
inline std::string to_json(const mfcq_report& r) { return detail::report_json(r); }
inline std::string to_json(const lp_result& r) { return detail::report_json(r); }
inline std::string to_json(const affine_slater_report& r) { return detail::report_json(r); }
inline std::string to_json(const derivative_check_report& r) { return detail::report_json(r); }
inline std::string to_json(const kkt_report& r) { return detail::report_json(r); }
inline std::string to_json(const slater_report& r) { return detail::report_json(r); }
inline std::string to_json(const qualification_report& r) {
  detail::json_writer w;
  w.begin_object().field("schema_version", json_schema_version).key("licq").begin_object();
  detail::write_body(w, r.licq);
  w.end_object().key("linear_cq").begin_object();
  detail::write_body(w, r.linear_cq);
  w.end_object().end_object();
  return w.str();
}

}  // namespace qualify
