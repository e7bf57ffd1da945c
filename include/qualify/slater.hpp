// qualify: Slater's condition, the strict interior and the implicit equalities of affine systems.
// SPDX-License-Identifier: MIT
#pragma once

#include <Eigen/Core>
#include <Eigen/SparseCore>
#include <algorithm>
#include <cmath>
#include <limits>
#include <optional>
#include <qualify/lp.hpp>
#include <qualify/report.hpp>
#include <string>
#include <string_view>
#include <vector>

namespace qualify {

/// Whether an affine system has a point at all (decided by an LP, within its tolerances).
enum class feasibility { not_checked, feasible, infeasible, undecided };

constexpr std::string_view to_string(feasibility f) noexcept {
  switch (f) {
    case feasibility::feasible:
      return "feasible";
    case feasibility::infeasible:
      return "infeasible";
    case feasibility::undecided:
      return "undecided";
    case feasibility::not_checked:
      break;
  }
  return "not_checked";
}

/// Which side of a row or column range an inequality is.
enum class bound_side { lower, upper };

constexpr std::string_view to_string(bound_side s) noexcept {
  return s == bound_side::upper ? "upper" : "lower";
}

/// Settings of `check_affine_slater`. The relative slack of an inequality side k at x is
///   rho_k(x) = (a_i x - l_i) / (||a_i||_2 + |l_i|)   for row_lower l_i <= a_i x,
///   rho_k(x) = (u_i - a_i x) / (||a_i||_2 + |u_i|)   for a_i x <= row_upper u_i,
/// and (x_j - l_j) / (1 + |l_j|), (u_j - x_j) / (1 + |u_j|) for finite column bounds: a
/// distance to the hyperplane in units of its row norm, relative to the size of its offset
/// (the same (1 + |b|) scaling as the LP engine's feasibility test), so that a row
/// multiplied by a positive constant gives the same answers.
struct affine_slater_options {
  /// A side is an implicit equality when no feasible x has rho_k(x) > slack_tolerance: the
  /// last LP of the sequence (maximise the sum of min(1, rho_k)) ends at a value
  /// <= slack_tolerance. Default 1e-7: ten times the LP engine's 1e-8 stopping tolerances
  /// (common practice, no source).
  double slack_tolerance = 1e-7;
  /// A side is strict when a verified point has rho_k >= undecided_band * slack_tolerance;
  /// the strict interior holds when one verified point does so for every side at once (the
  /// margin LP). Between the two bounds the answer is undecided (common practice, no source).
  double undecided_band = 10.0;
  /// A point is accepted as feasible when every row and column bound is met to within
  /// feasibility_tolerance * (||a_i||_2 + |a_i|^T |x| + |b_i|) (columns: * (1 + |x_j| +
  /// |b_j|)): the size of the terms summed. Default 1e-6: the LP engine stops at a residual
  /// of 1e-8 * (1 + ||b||_inf) on the scaled problem, which is larger per row (measured on
  /// Netlib's stair: 5.2e-7 on one row at the margin LP's optimum).
  double feasibility_tolerance = 1e-6;
  /// A Farkas certificate y is accepted when, with entries of A^T y below
  /// certificate_tolerance * ||y||_inf * ||a_j||_inf * sqrt(m + 1) taken as zero (a relative
  /// perturbation of A), its relative margin (see lp_result::certificate_margin) exceeds
  /// certificate_tolerance. Default 1e-7: interior-point multipliers are exact only to the
  /// LP's 1e-8 tolerances, and a margin-LP certificate is also confirmed by the feasibility
  /// LP finding no point (a system without a strict interior is arbitrarily close to
  /// infeasible ones).
  double certificate_tolerance = 1e-7;
  /// Largest number of LPs in the implicit-equality sequence. nullopt: the number of
  /// inequality sides + 1, always enough since each round settles at least one side.
  std::optional<int> max_rounds;
  /// The LP engine's settings for every LP solved; `lp.infinity_threshold` also decides which
  /// bounds count as absent.
  lp_options lp;

  /// Empty when valid, else a message naming the field and the rule it breaks.
  std::string validate() const {
    auto unit = [](double v) { return std::isfinite(v) && v > 0 && v < 1; };
    if (!unit(slack_tolerance)) return "affine_slater_options.slack_tolerance must be in (0, 1)";
    if (!(std::isfinite(undecided_band) && undecided_band >= 1))
      return "affine_slater_options.undecided_band must be finite and >= 1";
    if (!(undecided_band * slack_tolerance < 1))
      return "affine_slater_options.undecided_band * slack_tolerance must be < 1 (slacks are "
             "capped at 1)";
    if (!unit(feasibility_tolerance))
      return "affine_slater_options.feasibility_tolerance must be in (0, 1)";
    if (!unit(certificate_tolerance))
      return "affine_slater_options.certificate_tolerance must be in (0, 1)";
    if (max_rounds && *max_rounds < 1) return "affine_slater_options.max_rounds must be >= 1";
    const std::string lp_problem = detail::lp_validate(detail::lp_general{}, lp);
    if (!lp_problem.empty()) return "affine_slater_options.lp: " + lp_problem;
    return {};
  }
};

/// An inequality side that holds with equality on the whole feasible set.
struct implicit_bound {
  Index index = 0;                      ///< the row (or column) as the caller numbered it
  bound_side side = bound_side::lower;  ///< which of its bounds is tight everywhere
  double value = 0;                     ///< that bound: a_i x (or x_j) equals it on the set
};

/// One LP that the check solved.
struct lp_step {
  std::string purpose;  ///< "margin", "feasibility", "implicit_equalities"
  lp_status status = lp_status::not_solved;
  int iterations = 0;
  double value = std::numeric_limits<double>::quiet_NaN();  ///< the maximised quantity
};

/// What `check_affine_slater` found for row_lower <= A x <= row_upper,
/// col_lower <= x <= col_upper. Rows and columns are numbered as the caller passed them.
struct affine_slater_report {
  /// The Slater condition with every inequality strict (rows and finite column bounds):
  /// holds (a verified point with margin >= band * tau), fails (implicit equalities, or no
  /// feasible point at all: see `feasible`), undecided, invalid_input.
  verdict result = verdict::not_checked;
  /// For an affine model the refined Slater condition (affine inequalities need only hold
  /// as <=) holds exactly when the model is feasible: holds, fails (infeasible), undecided.
  verdict refined_slater = verdict::not_checked;
  feasibility feasible = feasibility::not_checked;
  bool strict_interior = false;  ///< result == holds: `strict_point` is strictly feasible
  std::string message = "check_affine_slater was not called";
  Index rows = 0, cols = 0;
  Index equality_rows = 0;     ///< rows with row_lower == row_upper
  Index fixed_columns = 0;     ///< columns with col_lower == col_upper
  Index inequality_sides = 0;  ///< finite sides of inequality rows and of unfixed columns
  double slack_tolerance = 0, undecided_band = 0, feasibility_tolerance = 0;  ///< as used
  /// The largest achievable minimum relative slack, max over feasible x of min_k rho_k(x),
  /// from the margin LP (capped to [-1, 1]; negative: the sides cannot all be met); NaN
  /// when that LP did not end optimal. Strict interior needs it >= band * tau.
  double margin = std::numeric_limits<double>::quiet_NaN();
  /// A strictly feasible point, when strict_interior; checked by evaluating A x and the
  /// bounds directly: its smallest rho_k and its largest relative violation (equalities).
  Eigen::VectorXd strict_point;
  double point_min_slack = std::numeric_limits<double>::quiet_NaN();
  double point_violation = std::numeric_limits<double>::quiet_NaN();
  std::vector<implicit_bound> implicit_equalities;     ///< rows tight on the whole set
  std::vector<implicit_bound> implicit_fixed_columns;  ///< columns one bound pins
  /// Sides whose largest relative slack lies in the band (tau, band * tau]: not decided.
  std::vector<implicit_bound> undecided_rows, undecided_columns;
  /// Infeasible: the verified Farkas certificate y (see lp_result::farkas), its margin,
  /// and the rows with y_i != 0.
  Eigen::VectorXd farkas;
  double certificate_margin = 0;
  std::vector<Index> certificate_rows;
  std::vector<lp_step> lp_solves;  ///< in order
  int lp_iterations = 0;           ///< summed over lp_solves
  row_names names;                 ///< rows
  row_names column_names;          ///< columns ("row N" reads "column N": see column_name)
  std::vector<finding> findings;

  /// The verdict as JSON and the command line print it: "infeasible" when there is no
  /// feasible point, else to_string(result).
  std::string_view verdict_name() const noexcept {
    return feasible == feasibility::infeasible ? std::string_view("infeasible") : to_string(result);
  }
  std::string column_name(Index j) const {
    const auto& l = column_names.labels();
    if (j >= 0 && static_cast<std::size_t>(j) < l.size() && !l[j].empty()) return l[j];
    return "column " + std::to_string(j);
  }
  std::vector<Index> implicit_equality_rows() const {
    std::vector<Index> out;
    for (const auto& b : implicit_equalities)
      if (out.empty() || out.back() != b.index) out.push_back(b.index);
    return out;
  }
  std::vector<Index> implicit_fixed_column_indices() const {
    std::vector<Index> out;
    for (const auto& b : implicit_fixed_columns)
      if (out.empty() || out.back() != b.index) out.push_back(b.index);
    return out;
  }
};

namespace detail {

/// One finite inequality side: a_i x >= b (lower) or a_i x <= b (upper), or a column bound.
struct slater_side {
  bool column = false;
  Index index = 0;
  bound_side side = bound_side::lower;
  double bound = 0;
  double weight = 0;  ///< ||a_i||_2 + |b| (columns: 1 + |b|): rho = slack / weight
};

struct slater_system {
  lp_sparse A;                                               // column-major
  Eigen::SparseMatrix<double, Eigen::RowMajor, Index> rows;  // the same, by row
  Eigen::VectorXd rl, ru, cl, cu;
  Eigen::VectorXd row_norm;  // ||a_i||_2
  std::vector<slater_side> sides;
  std::vector<Index> side_lower, side_upper;  // per row: side index or -1
  std::vector<Index> col_lower_side, col_upper_side;
};

/// rho_k(x) for every side and the largest relative violation of any row or bound.
struct slater_point_check {
  Eigen::VectorXd rho;
  double min_rho = std::numeric_limits<double>::infinity();
  double violation = 0;
};

inline slater_point_check slater_check_point(const slater_system& p, const Eigen::VectorXd& x) {
  slater_point_check out;
  const Eigen::VectorXd ax = p.A * x;
  const Eigen::VectorXd size = p.A.cwiseAbs() * x.cwiseAbs();
  auto violation = [&](double value, double lo, double up, double scale) {
    double v = 0;
    if (std::isfinite(lo)) v = std::max(v, lo - value);
    if (std::isfinite(up)) v = std::max(v, value - up);
    if (v == 0) return 0.0;
    double denom = scale + std::max(std::isfinite(lo) ? std::abs(lo) : 0.0,
                                    std::isfinite(up) ? std::abs(up) : 0.0);
    return denom > 0 ? v / denom : std::numeric_limits<double>::infinity();
  };
  for (Index i = 0; i < ax.size(); ++i)
    out.violation =
        std::max(out.violation, violation(ax[i], p.rl[i], p.ru[i], p.row_norm[i] + size[i]));
  for (Index j = 0; j < x.size(); ++j)
    out.violation = std::max(out.violation, violation(x[j], p.cl[j], p.cu[j], 1 + std::abs(x[j])));
  out.rho.resize(static_cast<Index>(p.sides.size()));
  for (std::size_t k = 0; k < p.sides.size(); ++k) {
    const auto& s = p.sides[k];
    const double value = s.column ? x[s.index] : ax[s.index];
    const double slack = s.side == bound_side::lower ? value - s.bound : s.bound - value;
    double rho = s.weight > 0 ? slack / s.weight : (slack > 0 ? 1.0 : slack < 0 ? -1.0 : 0.0);
    out.rho[static_cast<Index>(k)] = rho;
    out.min_rho = std::min(out.min_rho, rho);
  }
  return out;
}

/// Builds the LP over (x, extra columns): sides with var_of[k] >= 0 become
/// a_i x - weight * v >= b (lower) or a_i x + weight * v <= b (upper) on their own row, the
/// other sides and the equalities stay as given. Zero rows are left out (decided apart).
/// `origin`, when given, receives the original row of each LP row (-1: a column bound).
inline detail::lp_general slater_build(const slater_system& p, const std::vector<Index>& var_of,
                                       Index extra, double extra_lower, double extra_upper,
                                       std::vector<Index>* origin = nullptr) {
  const double inf = std::numeric_limits<double>::infinity();
  const Index m = p.A.rows(), n = p.A.cols();
  std::vector<Eigen::Triplet<double, Index>> t;
  std::vector<double> lo, up;
  auto add_row = [&](Index i, double l, double u, Index var, double coef) {
    const Index r = static_cast<Index>(lo.size());
    for (decltype(p.rows)::InnerIterator it(p.rows, i); it; ++it)
      t.emplace_back(r, it.col(), it.value());
    if (var >= 0) t.emplace_back(r, n + var, coef);
    if (origin) origin->push_back(i);
    lo.push_back(l);
    up.push_back(u);
  };
  auto var = [&](Index side) { return side >= 0 ? var_of[static_cast<std::size_t>(side)] : -1; };
  for (Index i = 0; i < m; ++i) {
    if (p.row_norm[i] == 0) continue;
    const Index kl = p.side_lower[static_cast<std::size_t>(i)],
                ku = p.side_upper[static_cast<std::size_t>(i)];
    if (kl < 0 && ku < 0) {  // an equality, or free (kept: it constrains nothing)
      if (std::isfinite(p.rl[i]) || std::isfinite(p.ru[i])) add_row(i, p.rl[i], p.ru[i], -1, 0);
      continue;
    }
    const bool lower_plain = std::isfinite(p.rl[i]) && var(kl) < 0;
    const bool upper_plain = std::isfinite(p.ru[i]) && var(ku) < 0;
    if (lower_plain || upper_plain)
      add_row(i, lower_plain ? p.rl[i] : -inf, upper_plain ? p.ru[i] : inf, -1, 0);
    if (var(kl) >= 0) add_row(i, p.rl[i], inf, var(kl), -p.sides[std::size_t(kl)].weight);
    if (var(ku) >= 0) add_row(i, -inf, p.ru[i], var(ku), p.sides[std::size_t(ku)].weight);
  }
  Eigen::VectorXd cl(n + extra), cu(n + extra);
  for (Index j = 0; j < n; ++j) {
    cl[j] = p.cl[j];
    cu[j] = p.cu[j];
    for (bool upper : {false, true}) {
      const Index k = upper ? p.col_upper_side[std::size_t(j)] : p.col_lower_side[std::size_t(j)];
      if (var(k) < 0) continue;
      const Index r = static_cast<Index>(lo.size());
      t.emplace_back(r, j, 1.0);
      t.emplace_back(r, n + var(k), (upper ? 1.0 : -1.0) * p.sides[std::size_t(k)].weight);
      if (origin) origin->push_back(-1);
      lo.push_back(upper ? -inf : p.cl[j]);
      up.push_back(upper ? p.cu[j] : inf);
      (upper ? cu[j] : cl[j]) = upper ? inf : -inf;  // the row carries the bound
    }
  }
  cl.tail(extra).setConstant(extra_lower);
  cu.tail(extra).setConstant(extra_upper);
  lp_general g;
  g.A.resize(static_cast<Index>(lo.size()), n + extra);
  g.A.setFromTriplets(t.begin(), t.end());
  g.A.makeCompressed();
  g.row_lower = Eigen::Map<Eigen::VectorXd>(lo.data(), static_cast<Index>(lo.size()));
  g.row_upper = Eigen::Map<Eigen::VectorXd>(up.data(), static_cast<Index>(up.size()));
  g.col_lower = cl;
  g.col_upper = cu;
  g.c = Eigen::VectorXd::Zero(n + extra);
  g.c.tail(extra).setConstant(-1.0);  // maximise the extra columns
  return g;
}

inline lp_result slater_solve(const lp_general& g, const lp_options& o) {
  return solve_lp(g.A, g.c, g.row_lower, g.row_upper, g.col_lower, g.col_upper, o);
}

inline affine_slater_report slater_invalid(affine_slater_report rep, std::string code,
                                           std::string message) {
  rep.result = verdict::invalid_input;
  rep.refined_slater = verdict::invalid_input;
  rep.message = "invalid input: " + message;
  add_finding(rep.findings, severity::error, std::move(code), std::move(message), {}, rep.names);
  return rep;
}

/// Sizes, values, bounds and labels; "" when valid. `code` gets the finding code.
inline std::string slater_validate(const lp_sparse& A, const Eigen::VectorXd& rl,
                                   const Eigen::VectorXd& ru, const Eigen::VectorXd& cl,
                                   const Eigen::VectorXd& cu, std::string& code) {
  const Index m = A.rows(), n = A.cols();
  code = "dimension_mismatch";
  struct sized {
    const char* name;
    Index got, want;
  };
  for (const sized& e : {sized{"row_lower", rl.size(), m}, sized{"row_upper", ru.size(), m},
                         sized{"col_lower", cl.size(), n}, sized{"col_upper", cu.size(), n}})
    if (e.got != e.want)
      return std::string(e.name) + " has " + std::to_string(e.got) + " entries, expected " +
             std::to_string(e.want);
  code = "non_finite_entry";
  for (Index j = 0; j < n; ++j)
    for (lp_sparse::InnerIterator it(A, j); it; ++it)
      if (!std::isfinite(it.value()))
        return "A(" + std::to_string(it.row()) + ", " + std::to_string(j) + ") is not finite";
  const double inf = std::numeric_limits<double>::infinity();
  struct valued {
    const char* name;
    const Eigen::VectorXd* v;
    double bad;  // the infinity this bound may not take
  };
  for (const valued& e : {valued{"row_lower", &rl, inf}, valued{"row_upper", &ru, -inf},
                          valued{"col_lower", &cl, inf}, valued{"col_upper", &cu, -inf}})
    for (Index i = 0; i < e.v->size(); ++i)
      if (std::isnan((*e.v)[i]) || (*e.v)[i] == e.bad)
        return std::string(e.name) + "[" + std::to_string(i) + "] is " +
               (std::isnan((*e.v)[i]) ? "NaN"
                : e.bad > 0           ? "+inf"
                                      : "-inf");
  code = "crossed_bounds";
  for (Index i = 0; i < m; ++i)
    if (rl[i] > ru[i])
      return "row " + std::to_string(i) + ": row_lower " + format_figure(rl[i]) + " > row_upper " +
             format_figure(ru[i]);
  for (Index j = 0; j < n; ++j)
    if (cl[j] > cu[j])
      return "column " + std::to_string(j) + ": col_lower " + format_figure(cl[j]) +
             " > col_upper " + format_figure(cu[j]);
  code.clear();
  return {};
}

inline affine_slater_report affine_slater_run(lp_sparse A, Eigen::VectorXd rl, Eigen::VectorXd ru,
                                              Eigen::VectorXd cl, Eigen::VectorXd cu,
                                              const affine_slater_options& o,
                                              std::vector<std::string> row_labels,
                                              std::vector<std::string> col_labels) {
  affine_slater_report rep;
  const Index m = A.rows(), n = A.cols();
  rep.rows = m;
  rep.cols = n;
  const std::size_t row_label_count = row_labels.size(), col_label_count = col_labels.size();
  rep.names = row_names(std::move(row_labels));
  rep.column_names = row_names(std::move(col_labels));
  rep.slack_tolerance = o.slack_tolerance;
  rep.undecided_band = o.undecided_band;
  rep.feasibility_tolerance = o.feasibility_tolerance;
  if (auto bad = o.validate(); !bad.empty()) return slater_invalid(rep, "bad_option", bad);
  if (row_label_count != 0 && row_label_count != static_cast<std::size_t>(m))
    return slater_invalid(
        rep, "label_count",
        std::to_string(row_label_count) + " row labels for " + std::to_string(m) + " rows");
  if (col_label_count != 0 && col_label_count != static_cast<std::size_t>(n))
    return slater_invalid(
        rep, "label_count",
        std::to_string(col_label_count) + " column labels for " + std::to_string(n) + " columns");
  std::string code;
  if (auto bad = slater_validate(A, rl, ru, cl, cu, code); !bad.empty())
    return slater_invalid(rep, code, bad);

  // Bounds beyond the infinity threshold are absent, as the LP engine reads them.
  const double inf = std::numeric_limits<double>::infinity(), big = o.lp.infinity_threshold;
  for (Eigen::VectorXd* v : {&rl, &cl})
    for (Index i = 0; i < v->size(); ++i)
      if ((*v)[i] <= -big) (*v)[i] = -inf;
  for (Eigen::VectorXd* v : {&ru, &cu})
    for (Index i = 0; i < v->size(); ++i)
      if ((*v)[i] >= big) (*v)[i] = inf;

  slater_system p;
  p.A = std::move(A);
  p.A.makeCompressed();
  p.rows = p.A;
  p.rl = rl;
  p.ru = ru;
  p.cl = cl;
  p.cu = cu;
  p.row_norm = Eigen::VectorXd::Zero(m);
  for (Index i = 0; i < m; ++i) p.row_norm[i] = p.rows.row(i).norm();
  p.side_lower.assign(std::size_t(m), -1);
  p.side_upper.assign(std::size_t(m), -1);
  p.col_lower_side.assign(std::size_t(n), -1);
  p.col_upper_side.assign(std::size_t(n), -1);
  auto add_side = [&](bool column, Index index, bound_side side, double bound, double norm) {
    p.sides.push_back({column, index, side, bound, norm + std::abs(bound)});
    return static_cast<Index>(p.sides.size()) - 1;
  };
  for (Index i = 0; i < m; ++i) {
    if (rl[i] == ru[i]) {
      ++rep.equality_rows;
      continue;
    }
    if (std::isfinite(rl[i]))
      p.side_lower[std::size_t(i)] = add_side(false, i, bound_side::lower, rl[i], p.row_norm[i]);
    if (std::isfinite(ru[i]))
      p.side_upper[std::size_t(i)] = add_side(false, i, bound_side::upper, ru[i], p.row_norm[i]);
  }
  for (Index j = 0; j < n; ++j) {
    if (cl[j] == cu[j]) {
      ++rep.fixed_columns;
      continue;
    }
    if (std::isfinite(cl[j]))
      p.col_lower_side[std::size_t(j)] = add_side(true, j, bound_side::lower, cl[j], 1.0);
    if (std::isfinite(cu[j]))
      p.col_upper_side[std::size_t(j)] = add_side(true, j, bound_side::upper, cu[j], 1.0);
  }
  const Index K = static_cast<Index>(p.sides.size());
  rep.inequality_sides = K;
  const double tau = o.slack_tolerance, strict = o.undecided_band * o.slack_tolerance;
  auto record = [&](std::string purpose, const lp_result& r, double value) {
    rep.lp_solves.push_back({std::move(purpose), r.status, r.iterations, value});
    rep.lp_iterations += r.iterations;
  };
  // The feasibility and sequence LPs have no strict interior themselves when implicit
  // equalities exist, which is hard on an interior-point method: on failure, retry with
  // 1000 times the regularisation, then also without scaling (common practice, no source).
  // Failed attempts stay in lp_solves.
  auto solve_retrying = [&](const char* purpose, const lp_general& g) {
    lp_result r = slater_solve(g, o.lp);
    for (int retry = 0; retry < 2 && r.status != lp_status::optimal &&
                        r.status != lp_status::infeasible && r.status != lp_status::invalid_input;
         ++retry) {
      record(purpose, r, std::numeric_limits<double>::quiet_NaN());
      lp_options again = o.lp;
      again.regularization = std::max(1e-9, o.lp.regularization * 1000);
      if (retry == 1) again.scaling_passes = 0;
      r = slater_solve(g, again);
    }
    return r;
  };
  auto side_name = [&](const slater_side& s) {
    return (s.column ? rep.column_name(s.index) : rep.names(s.index)) +
           (s.side == bound_side::lower ? " >= " : " <= ") + format_figure(s.bound);
  };

  // 1. The margin LP: max t s.t. rho_k(x) >= t for every side, -1 <= t <= 1. Zero rows
  // have a constant rho and stay out of the LP.
  double zero_row_rho = std::numeric_limits<double>::infinity();
  for (const auto& s : p.sides)
    if (!s.column && p.row_norm[s.index] == 0)
      zero_row_rho =
          std::min(zero_row_rho, (s.side == bound_side::lower ? -s.bound : s.bound) < 0 ? -1.0
                                 : s.bound == 0                                         ? 0.0
                                                                                        : 1.0);
  lp_general original;
  original.A = p.A;
  original.row_lower = p.rl;
  original.row_upper = p.ru;
  original.col_lower = p.cl;
  original.col_upper = p.cu;
  original.c = Eigen::VectorXd::Zero(n);
  // A Farkas vector y on the rows, accepted only when it checks on the original data (the
  // check of lp_result::farkas at options.certificate_tolerance).
  const double cert_tol = o.certificate_tolerance;
  auto certify_infeasible = [&](const Eigen::VectorXd& y) {
    if (y.size() != m || !y.allFinite() || y.lpNorm<Eigen::Infinity>() == 0) return false;
    for (double sign : {1.0, -1.0}) {
      // Interior-point multipliers carry noise of the LP's tolerance on every row: entries
      // of the sign that would need an absent bound, or below cert_tol * ||y||, go to zero
      // (the check below is made on the cleaned vector).
      Eigen::VectorXd ys = sign * y;
      const double size = ys.lpNorm<Eigen::Infinity>();
      for (Index i = 0; i < m; ++i)
        if (std::abs(ys[i]) <= cert_tol * size || (ys[i] > 0 && !std::isfinite(p.rl[i])) ||
            (ys[i] < 0 && !std::isfinite(p.ru[i])))
          ys[i] = 0;
      const double margin = lp_farkas_margin(original, ys, cert_tol);
      if (!(margin > cert_tol)) continue;
      rep.feasible = feasibility::infeasible;
      rep.result = rep.refined_slater = verdict::fails;
      rep.farkas = ys / ys.lpNorm<Eigen::Infinity>();
      rep.certificate_margin = margin;
      for (Index i = 0; i < m; ++i)
        if (rep.farkas[i] != 0) rep.certificate_rows.push_back(i);
      rep.message = "infeasible: no point meets the constraints (a Farkas certificate on " +
                    std::to_string(rep.certificate_rows.size()) +
                    " rows checks on the data, margin " + format_figure(margin) +
                    "), so Slater's condition fails in every form";
      std::string rows_text;
      for (std::size_t k = 0; k < rep.certificate_rows.size() && k < 8; ++k)
        rows_text += (k ? ", " : "") + format_figure(rep.farkas[rep.certificate_rows[k]]) + "*" +
                     rep.names(rep.certificate_rows[k]);
      if (rep.certificate_rows.size() > 8) rows_text += ", ...";
      add_finding(rep.findings, severity::error, "infeasible",
                  "no feasible point: the combination " + rows_text +
                      " of the rows cannot meet its bounds within the column bounds",
                  rep.certificate_rows, rep.names);
      return true;
    }
    return false;
  };
  std::optional<affine_slater_report> margin_candidate;  // an infeasibility claim to confirm
  Eigen::VectorXd margin_point;  // the margin LP's x when it meets the feasibility test
  if (K > 0 && !(zero_row_rho < 0)) {
    std::vector<Index> var_of(std::size_t(K), 0), origin;
    const lp_result r = slater_solve(slater_build(p, var_of, 1, -1.0, 1.0, &origin), o.lp);
    const double t =
        r.status == lp_status::optimal ? r.x[n] : std::numeric_limits<double>::quiet_NaN();
    record("margin", r, t);
    // The margin LP's multipliers on the original rows prove infeasibility when t* < 0
    // (or when even t = -1 is out of reach): try them before another LP.
    auto rows_of = [&](const Eigen::VectorXd& y_lp) {
      Eigen::VectorXd y = Eigen::VectorXd::Zero(m);
      for (std::size_t k = 0; k < origin.size() && Index(k) < y_lp.size(); ++k)
        if (origin[k] >= 0) y[origin[k]] += y_lp[Index(k)];
      return y;
    };
    // An optimal t* < 0 comes with dual multipliers, and an LP that ends infeasible with a
    // Farkas ray: either is a certificate when it checks on the data. A system without a
    // strict interior is arbitrarily close to infeasible systems, so such a claim is
    // confirmed by the feasibility LP below (a point that checks wins) before it is believed.
    if ((r.status == lp_status::optimal && t < -tau) || r.status == lp_status::infeasible) {
      affine_slater_report trial = rep;
      if (certify_infeasible(rows_of(r.status == lp_status::infeasible ? r.farkas : r.row_duals))) {
        std::swap(trial, rep);
        margin_candidate = std::move(trial);
        margin_candidate->margin = r.status == lp_status::optimal ? t : rep.margin;
      }
    }
    if (r.status == lp_status::optimal) {
      rep.margin = std::min(t, zero_row_rho);
      const Eigen::VectorXd x = r.x.head(n);
      const auto check = slater_check_point(p, x);
      if (check.violation <= o.feasibility_tolerance) margin_point = x;
      if (check.min_rho >= strict && check.violation <= o.feasibility_tolerance) {
        rep.result = rep.refined_slater = verdict::holds;
        rep.feasible = feasibility::feasible;
        rep.strict_interior = true;
        rep.strict_point = x;
        rep.point_min_slack = check.min_rho;
        rep.point_violation = check.violation;
        rep.message = "strict interior: a point meets every inequality strictly (margin " +
                      format_figure(rep.margin) + ", smallest relative slack " +
                      format_figure(check.min_rho) + " >= " + format_figure(strict) +
                      "); no implicit equalities";
        return rep;
      }
      if (check.violation > o.feasibility_tolerance)
        add_finding(rep.findings, severity::info, "point_not_verified",
                    "the margin LP's point has smallest relative slack " +
                        format_figure(check.min_rho) + " and largest relative violation " +
                        format_figure(check.violation) + " (feasibility_tolerance " +
                        format_figure(o.feasibility_tolerance) + "): not accepted",
                    {}, rep.names);
    }
  }

  // 2. Feasibility of the system as given (the Farkas certificate, when there is none). The
  // margin LP's point serves when it meets the feasibility test (a point that checks beats
  // a certificate that needs a tolerance).
  if (margin_point.size() == n && n > 0 && K > 0) {
    rep.feasible = feasibility::feasible;
    rep.refined_slater = verdict::holds;
    if (margin_candidate)
      add_finding(rep.findings, severity::info, "lp_disagreement",
                  "the margin LP's multipliers suggested infeasibility, but its point checks "
                  "on the data; the point is believed",
                  {}, rep.names);
  } else {
    const lp_result r = solve_retrying("feasibility", original);
    record("feasibility", r, 0.0);
    if (r.status == lp_status::infeasible && certify_infeasible(r.farkas)) return rep;
    const bool ok = r.status == lp_status::optimal &&
                    slater_check_point(p, r.x).violation <= o.feasibility_tolerance;
    if (!ok && margin_candidate) {
      margin_candidate->lp_solves = rep.lp_solves;
      margin_candidate->lp_iterations = rep.lp_iterations;
      return *margin_candidate;
    }
    if (ok && margin_candidate)
      add_finding(rep.findings, severity::info, "lp_disagreement",
                  "the margin LP's multipliers suggested infeasibility, but the feasibility LP "
                  "found a point that checks on the data; the point is believed",
                  {}, rep.names);
    if (!ok) {
      rep.feasible = feasibility::undecided;
      rep.result = rep.refined_slater = verdict::undecided;
      rep.message = "undecided: the feasibility LP ended " + std::string(to_string(r.status)) +
                    " (" + r.message + ")";
      add_finding(rep.findings, severity::warning, "lp_not_solved",
                  "the feasibility LP ended " + std::string(to_string(r.status)) + ": " + r.message,
                  {}, rep.names);
      return rep;
    }
    rep.feasible = feasibility::feasible;
    rep.refined_slater = verdict::holds;
    if (K == 0) {  // equalities and fixed columns only: nothing to make strict
      rep.result = verdict::holds;
      rep.strict_interior = true;
      rep.strict_point = r.x;
      const auto check = slater_check_point(p, r.x);
      rep.point_min_slack = check.min_rho;
      rep.point_violation = check.violation;
      rep.message = "strict interior: feasible, and there is no inequality to make strict";
      return rep;
    }
  }

  // 3. Implicit equalities: maximise sum s_k, 0 <= s_k <= 1, rho_k(x) >= s_k over the open
  // sides; sides a verified point makes strict are settled, the rest go round again until
  // the optimum is <= tau (they are implicit equalities) or nothing is left.
  std::vector<char> open(std::size_t(K), 1), undecided(std::size_t(K), 0),
      implicit(std::size_t(K), 0);
  for (Index k = 0; k < K; ++k) {  // zero rows: rho is a constant
    const auto& s = p.sides[std::size_t(k)];
    if (s.column || p.row_norm[s.index] != 0) continue;
    open[std::size_t(k)] = 0;
    const double slack = s.side == bound_side::lower ? -s.bound : s.bound;
    if (slack <= 0) implicit[std::size_t(k)] = 1;
  }
  bool lp_trouble = false;
  const int rounds = o.max_rounds ? *o.max_rounds : static_cast<int>(K) + 1;
  for (int round = 0; round < rounds; ++round) {
    std::vector<Index> var_of(std::size_t(K), -1);
    Index count = 0;
    for (Index k = 0; k < K; ++k)
      if (open[std::size_t(k)]) var_of[std::size_t(k)] = count++;
    if (count == 0) break;
    const lp_general g = slater_build(p, var_of, count, 0.0, 1.0);
    const lp_result r = solve_retrying("implicit_equalities", g);
    const double value =
        r.status == lp_status::optimal ? -(r.objective) : std::numeric_limits<double>::quiet_NaN();
    record("implicit_equalities", r, value);
    if (r.status != lp_status::optimal) {
      lp_trouble = true;
      add_finding(rep.findings, severity::warning, "lp_not_solved",
                  "an LP of the implicit-equality sequence ended " +
                      std::string(to_string(r.status)) + ": " + r.message,
                  {}, rep.names);
      break;
    }
    const Eigen::VectorXd x = r.x.head(n);
    const auto check = slater_check_point(p, x);
    if (value <= tau) {  // no open side can be raised above tau: all implicit
      for (Index k = 0; k < K; ++k)
        if (open[std::size_t(k)]) implicit[std::size_t(k)] = 1, open[std::size_t(k)] = 0;
      break;
    }
    Index settled = 0;
    if (check.violation <= o.feasibility_tolerance)
      for (Index k = 0; k < K; ++k)
        if (open[std::size_t(k)] && check.rho[k] >= strict) open[std::size_t(k)] = 0, ++settled;
    if (settled == 0) {
      // The optimum is above tau but no side reaches band * tau: the largest ones are in
      // the band (or the point missed the feasibility test); they stay undecided.
      for (Index k = 0; k < K; ++k)
        if (open[std::size_t(k)] && r.x[n + var_of[std::size_t(k)]] >= 0.5 * value / double(count))
          undecided[std::size_t(k)] = 1, open[std::size_t(k)] = 0, ++settled;
      if (settled == 0) {  // cannot happen with a sum above 0; stop rather than loop
        lp_trouble = true;
        break;
      }
    }
  }
  for (Index k = 0; k < K; ++k)
    if (open[std::size_t(k)]) undecided[std::size_t(k)] = 1;  // rounds ran out, or LP trouble

  for (Index k = 0; k < K; ++k) {
    const auto& s = p.sides[std::size_t(k)];
    const implicit_bound b{s.index, s.side, s.bound};
    if (implicit[std::size_t(k)]) {
      (s.column ? rep.implicit_fixed_columns : rep.implicit_equalities).push_back(b);
      if (s.column)
        add_finding(rep.findings, severity::warning, "implicit_fixed_column",
                    rep.column_name(s.index) + " is fixed at its " +
                        std::string(to_string(s.side)) + " bound " + format_figure(s.bound) +
                        " on the whole feasible set",
                    {}, rep.names);
      else
        add_finding(rep.findings, severity::warning, "implicit_equality",
                    rep.names(s.index) + " holds with equality at its " +
                        std::string(to_string(s.side)) + " bound " + format_figure(s.bound) +
                        " on the whole feasible set" +
                        (p.row_norm[s.index] == 0 ? " (the row has no nonzero entry)" : ""),
                    {s.index}, rep.names);
    } else if (undecided[std::size_t(k)]) {
      (s.column ? rep.undecided_columns : rep.undecided_rows).push_back(b);
      add_finding(rep.findings, severity::warning, "undecided_inequality",
                  side_name(s) + ": its largest relative slack was not shown to exceed " +
                      format_figure(strict) + " nor to stay below " + format_figure(tau),
                  s.column ? std::vector<Index>{} : std::vector<Index>{s.index}, rep.names);
    }
  }
  std::sort(rep.implicit_equalities.begin(), rep.implicit_equalities.end(),
            [](const auto& a, const auto& b) { return a.index < b.index; });

  const std::size_t found = rep.implicit_equalities.size() + rep.implicit_fixed_columns.size();
  const std::string margin_text =
      std::isnan(rep.margin) ? std::string("not computed") : format_figure(rep.margin);
  if (found > 0) {
    rep.result = verdict::fails;
    rep.message = "no strict interior: " + std::to_string(rep.implicit_equalities.size()) +
                  " inequality row side" + (rep.implicit_equalities.size() == 1 ? "" : "s") +
                  " and " + std::to_string(rep.implicit_fixed_columns.size()) + " column bound" +
                  (rep.implicit_fixed_columns.size() == 1 ? "" : "s") +
                  " hold with equality on the whole feasible set (margin " + margin_text +
                  "); the model is feasible, so the refined Slater condition holds";
  } else {
    rep.result = verdict::undecided;
    rep.message =
        lp_trouble || !rep.undecided_rows.empty() || !rep.undecided_columns.empty()
            ? "undecided: " +
                  std::to_string(rep.undecided_rows.size() + rep.undecided_columns.size()) +
                  " inequality sides could be neither shown strict nor shown tight "
                  "(margin " +
                  margin_text + ")"
            : "undecided: no implicit equality, but the margin " + margin_text + " is below " +
                  format_figure(strict) + " (within the tolerance band)";
  }
  return rep;
}

}  // namespace detail

/// Slater's condition for the affine system row_lower <= A x <= row_upper,
/// col_lower <= x <= col_upper (A dense): feasibility (with a verified Farkas certificate
/// when there is no point), the refined Slater condition (for an affine system it holds
/// exactly when the system is feasible), the strict interior (a point with every inequality
/// row side and every finite bound of an unfixed column strict, verified directly) and the
/// implicit equalities (inequalities tight on the whole feasible set, found by a short
/// sequence of LPs). Rows with row_lower == row_upper are equalities; bounds may be +-inf.
/// Labels name rows and columns in findings. Never throws for conditions of the data.
template <class Derived>
affine_slater_report check_affine_slater(
    const Eigen::MatrixBase<Derived>& A, const Eigen::VectorXd& row_lower,
    const Eigen::VectorXd& row_upper, const Eigen::VectorXd& col_lower,
    const Eigen::VectorXd& col_upper, const affine_slater_options& options = {},
    std::vector<std::string> row_labels = {}, std::vector<std::string> col_labels = {}) {
  for (Index j = 0; j < A.cols(); ++j)
    for (Index i = 0; i < A.rows(); ++i)
      if (!std::isfinite(static_cast<double>(A(i, j)))) {
        affine_slater_report rep;
        rep.rows = A.rows();
        rep.cols = A.cols();
        rep.names = row_names(std::move(row_labels));
        return detail::slater_invalid(
            rep, "non_finite_entry",
            "A(" + std::to_string(i) + ", " + std::to_string(j) + ") is not finite");
      }
  detail::lp_sparse S = A.template cast<double>().sparseView(0.0, 0.0);
  return detail::affine_slater_run(std::move(S), row_lower, row_upper, col_lower, col_upper,
                                   options, std::move(row_labels), std::move(col_labels));
}

/// The same with A sparse.
template <class Derived>
affine_slater_report check_affine_slater(
    const Eigen::SparseMatrixBase<Derived>& A, const Eigen::VectorXd& row_lower,
    const Eigen::VectorXd& row_upper, const Eigen::VectorXd& col_lower,
    const Eigen::VectorXd& col_upper, const affine_slater_options& options = {},
    std::vector<std::string> row_labels = {}, std::vector<std::string> col_labels = {}) {
  detail::lp_sparse S = A.derived().template cast<double>();
  return detail::affine_slater_run(std::move(S), row_lower, row_upper, col_lower, col_upper,
                                   options, std::move(row_labels), std::move(col_labels));
}

}  // namespace qualify
