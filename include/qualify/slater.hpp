// qualify: Slater's condition, the strict interior and the implicit equalities: affine systems by
// LPs, convex callback models by a phase-one barrier method.
// SPDX-License-Identifier: MIT
#pragma once

#include <Eigen/Core>
#include <Eigen/SparseCore>
#include <algorithm>
#include <cmath>
#include <limits>
#include <optional>
#include <qualify/detail/phase_one.hpp>
#include <qualify/linear_cq.hpp>
#include <qualify/lp.hpp>
#include <qualify/model.hpp>
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
  double bound = 0;    ///< on the scaled row (slater_system::row_scale)
  double weight = 0;   ///< ||a_i||_2 + |b| on the scaled row (columns: 1 + |b|): rho = slack/weight
  double given = 0;    ///< the bound as the caller gave it, for reports
};

struct slater_system {
  lp_sparse A;                                               // column-major
  Eigen::SparseMatrix<double, Eigen::RowMajor, Index> rows;  // the same, by row
  Eigen::VectorXd rl, ru, cl, cu;
  Eigen::VectorXd row_scale;  // row i and its bounds as given = row_scale[i] times the above
  Eigen::VectorXd row_norm;   // ||a_i||_2 of the scaled rows
  std::vector<slater_side> sides;
  std::vector<Index> side_lower, side_upper;  // per row: side index or -1
  std::vector<Index> col_lower_side, col_upper_side;
  Index equality_rows = 0, fixed_columns = 0;
};

/// rho_k(x) for every side and the largest relative violation of any row or bound.
struct slater_point_check {
  Eigen::VectorXd rho;
  double min_rho = std::numeric_limits<double>::infinity();
  double violation = 0;
};

inline slater_point_check slater_check_point(const slater_system& p, const Eigen::VectorXd& x) {
  slater_point_check out;
  const double inf = std::numeric_limits<double>::infinity();
  if (!x.allFinite()) {  // an LP point beyond double's range (found by fuzzing: x <= -1.8e308)
    out.rho = Eigen::VectorXd::Constant(Index(p.sides.size()), -inf);
    out.min_rho = -inf;
    out.violation = inf;
    return out;
  }
  const Eigen::VectorXd ax = p.A * x;
  const Eigen::VectorXd size = p.A.cwiseAbs() * x.cwiseAbs();
  // A NaN (overflow on both sides of a ratio) counts as a violation, never as none.
  auto violation = [&](double value, double lo, double up, double scale) {
    double v = 0;
    if (std::isfinite(lo)) v = std::max(v, lo - value);
    if (std::isfinite(up)) v = std::max(v, value - up);
    if (v == 0) return 0.0;
    double denom = scale + std::max(std::isfinite(lo) ? std::abs(lo) : 0.0,
                                    std::isfinite(up) ? std::abs(up) : 0.0);
    const double r = denom > 0 ? v / denom : inf;
    return std::isnan(r) ? inf : r;
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
    if (std::isnan(rho)) rho = -inf;
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

/// The system with absent bounds normalised (beyond `infinity` they count as none), row norms
/// and its inequality sides (rows with row_lower == row_upper are equalities, columns with
/// equal bounds fixed). The caller has validated the data.
inline slater_system slater_prepare(lp_sparse A, Eigen::VectorXd rl, Eigen::VectorXd ru,
                                    Eigen::VectorXd cl, Eigen::VectorXd cu, double infinity) {
  const Index m = A.rows(), n = A.cols();
  const double inf = std::numeric_limits<double>::infinity();
  for (Eigen::VectorXd* v : {&rl, &cl})
    for (Index i = 0; i < v->size(); ++i)
      if ((*v)[i] <= -infinity) (*v)[i] = -inf;
  for (Eigen::VectorXd* v : {&ru, &cu})
    for (Index i = 0; i < v->size(); ++i)
      if ((*v)[i] >= infinity) (*v)[i] = inf;
  // Each row and its bounds divided by the largest of its entries and finite bounds: rho and
  // every verdict are unchanged, and the LPs see entries within [-1, 1], so that A x does not
  // overflow at entries near 1e308 and the LPs' absolute tolerances do not swallow rows of
  // size 1e-200 (found by fuzzing and tests/stress_test.cpp).
  slater_system p;
  p.row_scale = Eigen::VectorXd::Zero(m);
  for (Index j = 0; j < A.outerSize(); ++j)
    for (lp_sparse::InnerIterator it(A, j); it; ++it)
      p.row_scale[it.row()] = std::max(p.row_scale[it.row()], std::abs(it.value()));
  for (Index i = 0; i < m; ++i) {
    for (double b : {rl[i], ru[i]})
      if (std::isfinite(b)) p.row_scale[i] = std::max(p.row_scale[i], std::abs(b));
    if (p.row_scale[i] == 0) p.row_scale[i] = 1;
  }
  const Eigen::VectorXd given_lower = rl, given_upper = ru;
  rl = rl.cwiseQuotient(p.row_scale);
  ru = ru.cwiseQuotient(p.row_scale);
  p.A = p.row_scale.cwiseInverse().asDiagonal() * A;
  p.A.makeCompressed();
  p.rows = p.A;
  p.rl = rl;
  p.ru = ru;
  p.cl = cl;
  p.cu = cu;
  // Safe without columns (Eigen's sparse norm asserts on an empty row).
  std::vector<double> norms;
  std::vector<sparse_index> counts;
  sparse_row_norms(p.A, norms, counts);
  p.row_norm = Eigen::Map<const Eigen::VectorXd>(norms.data(), m);
  p.side_lower.assign(std::size_t(m), -1);
  p.side_upper.assign(std::size_t(m), -1);
  p.col_lower_side.assign(std::size_t(n), -1);
  p.col_upper_side.assign(std::size_t(n), -1);
  auto add_side = [&](bool column, Index index, bound_side side, double bound, double norm,
                      double given) {
    p.sides.push_back({column, index, side, bound, norm + std::abs(bound), given});
    return static_cast<Index>(p.sides.size()) - 1;
  };
  for (Index i = 0; i < m; ++i) {
    if (rl[i] == ru[i]) {
      ++p.equality_rows;
      continue;
    }
    if (std::isfinite(rl[i]))
      p.side_lower[std::size_t(i)] =
          add_side(false, i, bound_side::lower, rl[i], p.row_norm[i], given_lower[i]);
    if (std::isfinite(ru[i]))
      p.side_upper[std::size_t(i)] =
          add_side(false, i, bound_side::upper, ru[i], p.row_norm[i], given_upper[i]);
  }
  for (Index j = 0; j < n; ++j) {
    if (cl[j] == cu[j]) {
      ++p.fixed_columns;
      continue;
    }
    if (std::isfinite(cl[j]))
      p.col_lower_side[std::size_t(j)] = add_side(true, j, bound_side::lower, cl[j], 1.0, cl[j]);
    if (std::isfinite(cu[j]))
      p.col_upper_side[std::size_t(j)] = add_side(true, j, bound_side::upper, cu[j], 1.0, cu[j]);
  }
  return p;
}

/// The margin LP of check_affine_slater (max t s.t. rho_k(x) >= t on every side,
/// -1 <= t <= 1; t is the last column): the phase-one LP of an affine system.
inline lp_general slater_margin_lp(const slater_system& p) {
  return slater_build(p, std::vector<Index>(p.sides.size(), 0), 1, -1.0, 1.0);
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

  slater_system p = slater_prepare(std::move(A), rl, ru, cl, cu, o.lp.infinity_threshold);
  rep.equality_rows = p.equality_rows;
  rep.fixed_columns = p.fixed_columns;
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
           (s.side == bound_side::lower ? " >= " : " <= ") + format_figure(s.given);
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
      // of the sign that would need an absent bound, or whose term |y_i| (||a_i|| + |b_i|)
      // is below cert_tol times the largest, go to zero (the check below is made on the
      // cleaned vector). Terms, not |y_i|: a row multiplied by c divides its y_i by c.
      Eigen::VectorXd ys = sign * y, term(m);
      for (Index i = 0; i < m; ++i) {
        const double b = ys[i] > 0 ? p.rl[i] : p.ru[i];
        term[i] = std::abs(ys[i]) * (p.row_norm[i] + (std::isfinite(b) ? std::abs(b) : 0.0));
      }
      const double size = term.lpNorm<Eigen::Infinity>();
      for (Index i = 0; i < m; ++i)
        if (term[i] <= cert_tol * size || (ys[i] > 0 && !std::isfinite(p.rl[i])) ||
            (ys[i] < 0 && !std::isfinite(p.ru[i])))
          ys[i] = 0;
      const double margin = lp_farkas_margin(original, ys, cert_tol);
      if (!(margin > cert_tol)) continue;
      rep.feasible = feasibility::infeasible;
      rep.result = rep.refined_slater = verdict::fails;
      // On the rows as given: y_i / row_scale_i, in long double so that extreme scales
      // neither overflow nor vanish before the vector is normalised.
      using ld = long double;
      const Eigen::Matrix<ld, Eigen::Dynamic, 1> given =
          ys.cast<ld>().cwiseQuotient(p.row_scale.cast<ld>());
      rep.farkas = (given / given.cwiseAbs().maxCoeff()).cast<double>();
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
    const double violation = r.status == lp_status::optimal
                                 ? slater_check_point(p, r.x).violation
                                 : std::numeric_limits<double>::quiet_NaN();
    const bool ok = violation <= o.feasibility_tolerance;
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
      const std::string why =
          r.status == lp_status::optimal
              ? "the feasibility LP's point misses the data by a relative " +
                    format_figure(violation) + " (feasibility_tolerance " +
                    format_figure(o.feasibility_tolerance) + ")"
              : "the feasibility LP ended " + std::string(to_string(r.status)) + ": " + r.message;
      rep.message = "undecided: " + why;
      add_finding(rep.findings, severity::warning,
                  r.status == lp_status::optimal ? "point_not_verified" : "lp_not_solved", why, {},
                  rep.names);
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
    const implicit_bound b{s.index, s.side, s.given};
    if (implicit[std::size_t(k)]) {
      (s.column ? rep.implicit_fixed_columns : rep.implicit_equalities).push_back(b);
      if (s.column)
        add_finding(rep.findings, severity::warning, "implicit_fixed_column",
                    rep.column_name(s.index) + " is fixed at its " +
                        std::string(to_string(s.side)) + " bound " + format_figure(s.given) +
                        " on the whole feasible set",
                    {}, rep.names);
      else
        add_finding(rep.findings, severity::warning, "implicit_equality",
                    rep.names(s.index) + " holds with equality at its " +
                        std::string(to_string(s.side)) + " bound " + format_figure(s.given) +
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

/// Where check_slater takes the second derivatives of the convex rows from.
enum class hessian_source {
  automatic,    ///< exact when the model has constraint_hessian, else quasi_newton
  exact,        ///< constraint_hessian (required)
  quasi_newton  ///< a damped BFGS approximation from Jacobians (constraint_hessian unused)
};

constexpr std::string_view to_string(hessian_source h) noexcept {
  switch (h) {
    case hessian_source::exact:
      return "exact";
    case hessian_source::quasi_newton:
      return "quasi_newton";
    case hessian_source::automatic:
      break;
  }
  return "automatic";
}

/// Settings of `check_slater`. Constraint i is measured relative to its weight
///   w_i = ||grad c_i(x0)||_2 + |c_i(x0)|   (1 when that is 0)
/// taken at the start point x0, so that a constraint multiplied by a positive constant gives
/// the same answers (for an affine row at x0 = 0 this is the ||a_i|| + |b_i| of
/// affine_slater_options). The phase one bounds s* = min over the affine feasible set S of
/// max_i g_i(x)/w_i over the convex rows: Slater's condition holds iff s* < 0.
struct slater_options {
  /// x0: where the affine rows' coefficients and the weights are read, and where the phase
  /// one starts when x0 is strictly inside the affine rows. nullopt: the zero vector.
  std::optional<Eigen::VectorXd> start;
  /// tau. Fails needs a verified lower bound s* >= -tau; holds needs a point with every
  /// convex row at g_i/w_i <= -undecided_band * tau. Default 1e-7, as
  /// affine_slater_options::slack_tolerance (common practice, no source).
  double margin_tolerance = 1e-7;
  /// See margin_tolerance; between the two bounds the answer is undecided.
  double undecided_band = 10.0;
  /// A point meets an affine row or an equality when c_i(x) <= tol * (||a_i||_2 + |a_i|^T |x|
  /// + |b_i|) (equalities: |c_i(x)| <=), with a_i = grad c_i(x) and b_i = a_i x - c_i(x): the
  /// size of the terms summed, as affine_slater_options::feasibility_tolerance. The model is
  /// infeasible when the verified lower bound exceeds this tolerance.
  double feasibility_tolerance = 1e-6;
  /// The phase one searches the ball ||x - x_s|| <= R around its start x_s, with
  /// R = search_radius * (1 + ||x_s||_inf); "fails" and "infeasible" are proven for the points
  /// of that ball (and `proof_radius` says how far beyond). Default 1e6: far beyond the scale
  /// of the start, yet small enough that R * ||grad phi|| stays below tau when the centring
  /// is exact to rounding (common practice, no source).
  double search_radius = 1e6;
  /// Multipliers below support_threshold * (largest multiplier) do not count as pinching.
  double support_threshold = 1e-6;
  /// The barrier parameter t grows by this factor after each centring (Boyd and
  /// Vandenberghe, 2004, sec. 11.3.1, suggest 10 to 20).
  double barrier_factor = 10.0;
  /// The phase one stops, undecided, once (number of barrier terms) / t <= final_gap (the
  /// bound on s(t) - s* at the centre). Default 1e-11: 1e-4 * tau, beyond which rounding
  /// in the centring dominates (common practice, no source).
  double final_gap = 1e-11;
  /// Newton steps of the phase one, all centrings together.
  int max_newton_steps = 500;
  hessian_source hessians = hessian_source::automatic;
  /// The rows declared affine are compared between x0 and the point the answer rests on.
  affine_check_options affine_check;
  /// For the affine part (the LP sequence of check_affine_slater).
  affine_slater_options affine;

  /// Empty when valid, else a message naming the field and the rule it breaks.
  std::string validate() const {
    auto unit = [](double v) { return std::isfinite(v) && v > 0 && v < 1; };
    if (start && !start->allFinite()) return "slater_options.start has a non-finite entry";
    if (!unit(margin_tolerance)) return "slater_options.margin_tolerance must be in (0, 1)";
    if (!(std::isfinite(undecided_band) && undecided_band >= 1 &&
          undecided_band * margin_tolerance < 1))
      return "slater_options.undecided_band must be finite, >= 1 and below 1 / margin_tolerance";
    if (!unit(feasibility_tolerance))
      return "slater_options.feasibility_tolerance must be in (0, 1)";
    if (!(std::isfinite(search_radius) && search_radius > 0))
      return "slater_options.search_radius must be finite and > 0";
    if (!(support_threshold >= 0 && support_threshold < 1))
      return "slater_options.support_threshold must be in [0, 1)";
    if (!(std::isfinite(barrier_factor) && barrier_factor > 1))
      return "slater_options.barrier_factor must be finite and > 1";
    if (!(final_gap > 0 && final_gap < margin_tolerance))
      return "slater_options.final_gap must be in (0, margin_tolerance)";
    if (max_newton_steps < 1) return "slater_options.max_newton_steps must be >= 1";
    if (auto bad = affine_check.validate(); !bad.empty()) return "slater_options." + bad;
    if (auto bad = affine.validate(); !bad.empty()) return "slater_options.affine: " + bad;
    return {};
  }
};

/// What `check_slater` found for the callback model g_i(x) <= 0, h_j(x) = 0. Rows are the
/// model's constraints in its order.
struct slater_report {
  /// The refined Slater condition (convex rows strict, affine rows as <=): holds (a point,
  /// verified), fails (a verified dual certificate; also when the model is infeasible: see
  /// `feasible`), undecided, invalid_input (also when the model is not declared convex: see
  /// `not_convex_rows`).
  verdict result = verdict::not_checked;
  feasibility feasible = feasibility::not_checked;
  /// Every inequality strict, the affine ones too: holds (`interior_point`), fails (implicit
  /// equalities, or the refined condition fails), undecided.
  verdict strict_interior = verdict::not_checked;
  std::string message = "check_slater was not called";
  /// "vacuous" (no constraint), "affine_lp" (every row affine), "phase_one_exact" or
  /// "phase_one_quasi_newton" (the barrier method with that Hessian source); "" when refused.
  std::string method;
  Index variables = 0, constraints = 0;
  std::vector<Index> convex_rows, affine_rows, equality_rows;  ///< inequalities by kind; equalities
  std::vector<Index> not_convex_rows;  ///< rows whose declaration rules Slater's condition out
  double margin_tolerance = 0, undecided_band = 0, feasibility_tolerance = 0;  ///< as used
  double search_radius = 0;                                                    ///< R, absolute
  Eigen::VectorXd weights;  ///< w_i (see slater_options)
  /// Bounds on s* = min over S of max_i g_i(x)/w_i: the best point's value (upper) and the
  /// certificate's verified bound over S within the search ball (lower); NaN when not found.
  double upper_bound = std::numeric_limits<double>::quiet_NaN();
  double lower_bound = std::numeric_limits<double>::quiet_NaN();
  /// result == holds: a point meeting every affine row and equality and every convex row
  /// strictly, with the constraint values there (callbacks evaluated directly), its largest
  /// g_i/w_i over the convex rows (the margin, < 0) and its largest relative violation of an
  /// affine row or equality.
  Eigen::VectorXd point, point_values;
  double point_margin = std::numeric_limits<double>::quiet_NaN();
  double point_violation = std::numeric_limits<double>::quiet_NaN();
  /// strict_interior == holds: a point where every inequality is strict, and its smallest
  /// relative slack (convex rows: -g_i/w_i; affine rows as in affine_slater_options).
  Eigen::VectorXd interior_point;
  double interior_slack = std::numeric_limits<double>::quiet_NaN();
  /// The dual certificate (fails, infeasible, or the last one of an undecided run): per row,
  /// lambda_i >= 0 on the convex rows (summing to 1), nu_k >= 0 on the affine inequalities,
  /// mu_j on the equalities, all on rows divided by w_i; read at `certificate_point`, where
  /// phi = sum multipliers_i c_i/w_i has value `certificate_value` and gradient norm
  /// `certificate_gradient`. No point of S within `proof_radius` of certificate_point has
  /// every convex row at g_i/w_i < -tau (infinite when the gradient is 0).
  Eigen::VectorXd multipliers, certificate_point;
  double certificate_value = std::numeric_limits<double>::quiet_NaN();
  double certificate_gradient = std::numeric_limits<double>::quiet_NaN();
  double proof_radius = std::numeric_limits<double>::quiet_NaN();
  std::vector<Index> pinching;                 ///< convex rows with lambda > 0, largest first
  std::vector<Index> certificate_affine_rows;  ///< affine rows and equalities with nu, mu != 0
  /// Affine inequalities tight on the whole feasible set of the affine part (then also on
  /// the model's, which lies inside it).
  std::vector<Index> implicit_equalities;
  /// The affine part's own report (its rows are the model's; convex rows appear as free
  /// rows); it holds the Farkas certificate when the affine part is infeasible.
  std::optional<affine_slater_report> affine;
  int newton_steps = 0, barrier_rounds = 0, callback_evaluations = 0, domain_exits = 0;
  double barrier_parameter = 0;  ///< t at the end
  row_names names;
  std::vector<finding> findings;

  /// The verdict as JSON prints it: "not_convex" when refused, "infeasible" when the model
  /// has no feasible point, else to_string(result).
  std::string_view verdict_name() const noexcept {
    if (!not_convex_rows.empty()) return "not_convex";
    return feasible == feasibility::infeasible ? std::string_view("infeasible") : to_string(result);
  }
};

namespace detail {

/// The constraints at one point, evaluated by the callbacks: the largest g_i/w_i over the
/// convex rows, the smallest relative slack of the affine inequalities and the largest
/// relative violation of an affine row or equality.
struct slater_point_values {
  bool ok = false;
  Eigen::VectorXd values;
  double convex_max = -std::numeric_limits<double>::infinity();
  double affine_min_slack = std::numeric_limits<double>::infinity();
  double violation = 0;
};

inline slater_point_values slater_measure(model_probe& probe, const slater_report& rep,
                                          const Eigen::VectorXd& x) {
  slater_point_values out;
  Eigen::MatrixXd jac;
  if (!probe.values(x, out.values) || !probe.jacobian(x, jac)) return out;
  out.ok = true;
  for (Index i : rep.convex_rows)
    out.convex_max = std::max(out.convex_max, out.values[i] / rep.weights[i]);
  auto sizes = [&](Index i, double& norm, double& offset) {
    norm = jac.row(i).stableNorm();
    offset = std::abs(jac.row(i).dot(x) - out.values[i]);
    return norm + jac.row(i).cwiseAbs().dot(x.cwiseAbs()) + offset;
  };
  double norm = 0, offset = 0;
  for (Index i : rep.affine_rows) {
    const double size = sizes(i, norm, offset);
    if (out.values[i] > 0) out.violation = std::max(out.violation, out.values[i] / size);
    const double weight = norm + offset;
    const double slack = -out.values[i];
    out.affine_min_slack = std::min(out.affine_min_slack, weight > 0 ? slack / weight
                                                                     : (slack > 0   ? 1.0
                                                                        : slack < 0 ? -1.0
                                                                                    : 0.0));
  }
  for (Index j : rep.equality_rows) {
    const double size = sizes(j, norm, offset);
    const double v = std::abs(out.values[j]);
    if (v > 0) out.violation = std::max(out.violation, size > 0 ? v / size : 1.0);
  }
  return out;
}

inline slater_report slater_refuse(slater_report rep, std::string code, std::string message) {
  rep.result = verdict::invalid_input;
  rep.strict_interior = verdict::invalid_input;
  rep.message = "invalid input: " + message;
  add_finding(rep.findings, severity::error, std::move(code), std::move(message), {}, rep.names);
  return rep;
}

}  // namespace detail

/// Slater's condition for a callback model declared convex: the refined form (some x meets
/// every equality and affine inequality and has g_i(x) < 0 on every convex inequality), the
/// strict interior (every inequality strict) and the implicit equalities of the affine part.
/// Refuses (invalid_input, verdict_name "not_convex") when an equality is not declared affine
/// or an inequality is declared nonlinear or unknown; the objective plays no part. Rows
/// declared affine are read at the start point (a_i = grad c_i(x0), offset
/// b_i = a_i x0 - c_i(x0)) and decided by check_affine_slater; with convex rows a phase-one
/// barrier method (see detail::run_phase_one) bounds s* from both sides, and every figure
/// a verdict rests on is evaluated by the callbacks directly. Never throws for conditions of
/// the data or of the callbacks.
inline slater_report check_slater(const callback_model& model, const slater_options& options = {}) {
  using Eigen::MatrixXd;
  using Eigen::VectorXd;
  slater_report rep;
  const slater_options& o = options;
  rep.margin_tolerance = o.margin_tolerance;
  rep.undecided_band = o.undecided_band;
  rep.feasibility_tolerance = o.feasibility_tolerance;
  rep.variables = model.variables;
  rep.constraints = model.constraints();
  if (model.labels.size() == std::size_t(model.constraints())) rep.names = row_names(model.labels);
  if (auto bad = o.validate(); !bad.empty()) return detail::slater_refuse(rep, "bad_option", bad);
  if (auto bad = validate_model(model); !bad.empty())
    return detail::slater_refuse(rep, "invalid_model", bad);
  const Index n = model.variables, m = model.constraints();
  if (o.start && o.start->size() != n)
    return detail::slater_refuse(rep, "dimension_mismatch",
                                 "slater_options.start has " + std::to_string(o.start->size()) +
                                     " entries for " + std::to_string(n) + " variables");
  if (o.hessians == hessian_source::exact && !model.constraint_hessian)
    return detail::slater_refuse(rep, "missing_callback",
                                 "slater_options.hessians is exact but the model has no "
                                 "constraint_hessian");

  // 1. The declarations: equalities affine, inequalities affine or convex.
  for (Index i = 0; i < m; ++i) {
    const constraint_kind kind = model.kinds[std::size_t(i)];
    if (model.types[std::size_t(i)] == constraint_type::equality) {
      (kind == constraint_kind::affine ? rep.equality_rows : rep.not_convex_rows).push_back(i);
    } else if (kind == constraint_kind::affine) {
      rep.affine_rows.push_back(i);
    } else if (kind == constraint_kind::convex) {
      rep.convex_rows.push_back(i);
    } else {
      rep.not_convex_rows.push_back(i);
    }
  }
  if (!rep.not_convex_rows.empty()) {
    rep.result = rep.strict_interior = verdict::invalid_input;
    std::string list;
    for (Index i : rep.not_convex_rows) {
      const bool eq = model.types[std::size_t(i)] == constraint_type::equality;
      const std::string kind(to_string(model.kinds[std::size_t(i)]));
      list += (list.empty() ? "" : ", ") + rep.names(i) + " (" + (eq ? "equality" : "inequality") +
              " declared " + kind + ")";
      add_finding(rep.findings, severity::error, "not_convex",
                  rep.names(i) + " is " + (eq ? "an equality" : "an inequality") + " declared " +
                      kind +
                      (eq ? ": a convex model needs affine equalities"
                          : ": a convex model needs affine or convex inequalities"),
                  {i}, rep.names);
    }
    rep.message = "not a convex model as declared, so Slater's condition does not apply: " + list;
    return rep;
  }

  const VectorXd x0 = o.start ? *o.start : VectorXd::Zero(n);
  if (m == 0) {
    rep.result = rep.strict_interior = verdict::holds;
    rep.feasible = feasibility::feasible;
    rep.method = "vacuous";
    rep.point = rep.interior_point = x0;
    rep.point_values = VectorXd::Zero(0);
    rep.message = "Slater's condition holds vacuously: the model has no constraint";
    return rep;
  }
  const model_evaluation at_start = evaluate_model(model, x0, {false, false});
  if (!at_start.ok())
    return detail::slater_refuse(rep, at_start.code, at_start.error + " at the start point");
  const VectorXd& c0 = at_start.point.values;
  const MatrixXd& J0 = at_start.point.jacobian;
  rep.weights.resize(m);
  for (Index i = 0; i < m; ++i) {
    const double w = J0.row(i).stableNorm() + std::abs(c0[i]);  // (1e200 rows: no overflow)
    rep.weights[i] = w > 0 && std::isfinite(w) ? w : 1.0;
  }
  detail::model_probe probe(model, rep.names);
  // Every answer below ends here: a callback whose size changed on the way (probe.fatal())
  // makes the model invalid whatever was found.
  auto finish = [&]() {
    rep.callback_evaluations = probe.evaluations;
    if (probe.fatal()) return detail::slater_refuse(rep, probe.code(), probe.error());
    return rep;
  };
  // Why a point may have failed its direct check: the callbacks' last failure, if any.
  auto last_failure = [&]() {
    return probe.error().empty() ? std::string() : "; last callback failure: " + probe.error();
  };
  const double tau = o.margin_tolerance, strict = o.undecided_band * o.margin_tolerance;
  const double inf = std::numeric_limits<double>::infinity();

  // 2. The affine part: row i of A is grad c_i(x0) and its bound a_i x0 - c_i(x0); convex
  // rows stay in as free rows without entries, so that rows keep the model's numbering.
  VectorXd y;  // a point strictly inside the affine inequalities that are not implicit
  std::vector<char> implicit(std::size_t(m), 0);
  const bool has_affine = !rep.affine_rows.empty() || !rep.equality_rows.empty();
  if (has_affine) {
    MatrixXd A = MatrixXd::Zero(m, n);
    VectorXd rl = VectorXd::Constant(m, -inf), ru = VectorXd::Constant(m, inf);
    for (const auto* rows : {&rep.affine_rows, &rep.equality_rows})
      for (Index i : *rows) {
        A.row(i) = J0.row(i);
        ru[i] = J0.row(i).dot(x0) - c0[i];
        if (rows == &rep.equality_rows) rl[i] = ru[i];
      }
    const VectorXd free_lower = VectorXd::Constant(n, -inf),
                   free_upper = VectorXd::Constant(n, inf);
    rep.affine = check_affine_slater(A, rl, ru, free_lower, free_upper, o.affine, model.labels);
    const affine_slater_report& a = *rep.affine;
    if (a.result == verdict::invalid_input)
      return detail::slater_refuse(rep, "invalid_jacobian",
                                   "the affine part at the start point: " + a.message);
    if (a.feasible == feasibility::infeasible) {
      rep.method = "affine_lp";
      rep.feasible = feasibility::infeasible;
      rep.result = rep.strict_interior = verdict::fails;
      rep.message =
          "infeasible: the affine rows and equalities alone have no common point (a "
          "Farkas certificate on " +
          std::to_string(a.certificate_rows.size()) + " rows checks on the data, margin " +
          detail::format_figure(a.certificate_margin) +
          "), so Slater's condition fails in every form";
      for (const auto& f : a.findings)
        if (f.code == "infeasible") rep.findings.push_back(f);
      return rep;
    }
    for (const auto& b : a.implicit_equalities) {
      implicit[std::size_t(b.index)] = 1;
      rep.implicit_equalities.push_back(b.index);
      add_finding(rep.findings, severity::warning, "implicit_equality",
                  rep.names(b.index) +
                      " holds with equality on the whole feasible set of the affine part (and "
                      "of the model)",
                  {b.index}, rep.names);
    }
    if (a.result == verdict::holds) {
      y = a.strict_point;
    } else if (!rep.implicit_equalities.empty()) {
      for (Index i : rep.implicit_equalities) rl[i] = ru[i];  // held as equalities
      const auto again =
          check_affine_slater(A, rl, ru, free_lower, free_upper, o.affine, model.labels);
      if (again.result == verdict::holds) y = again.strict_point;
    }
    if (a.feasible == feasibility::undecided || (y.size() == 0 && a.result == verdict::undecided)) {
      for (const auto& f : a.findings)
        if (f.code == "lp_not_solved" || f.code == "undecided_inequality")
          rep.findings.push_back(f);
    }
  }

  auto verify_point = [&](const VectorXd& x) {
    const auto at = detail::slater_measure(probe, rep, x);
    if (!at.ok) return false;
    if (!(at.violation <= o.feasibility_tolerance) ||
        !(rep.convex_rows.empty() || at.convex_max <= -strict))
      return false;
    rep.point = x;
    rep.point_values = at.values;
    rep.point_margin = rep.convex_rows.empty() ? -inf : at.convex_max;
    rep.point_violation = at.violation;
    rep.upper_bound = rep.point_margin;
    return true;
  };
  auto verify_interior = [&](const VectorXd& x) {
    const auto at = detail::slater_measure(probe, rep, x);
    if (!at.ok || !(at.violation <= o.feasibility_tolerance)) return false;
    const double slack = std::min(-at.convex_max, at.affine_min_slack);
    if (!(slack >= strict)) return false;
    rep.interior_point = x;
    rep.interior_slack = slack;
    return true;
  };
  auto affine_interior = [&]() {
    if (!rep.affine) return verdict::holds;
    if (!rep.implicit_equalities.empty()) return verdict::fails;
    return rep.affine->result == verdict::holds ? verdict::holds : verdict::undecided;
  };
  // The declared-affine rows between x0 and the point an answer rests on: a row that is not
  // affine makes the affine part's coefficients wrong.
  auto check_affinity = [&](const VectorXd& x) {
    if (rep.affine_rows.empty() && rep.equality_rows.empty()) return true;
    VectorXd values;
    MatrixXd jac;  // through the probe, so that a wrong size reaches finish()
    if (!probe.values(x, values) || !probe.jacobian(x, jac)) return true;  // nothing to compare
    std::vector<point_sample<double>> samples{{x0, c0, J0}, {x, values, jac}};
    const auto check = check_declared_affine(model.kinds, samples, o.affine_check, model.labels);
    for (const auto& f : check.findings) rep.findings.push_back(f);
    return check.result != verdict::fails;
  };

  // 3. Every row affine: the refined condition is feasibility, decided by the LPs; the point
  // is checked again through the callbacks.
  if (rep.convex_rows.empty()) {
    rep.method = "affine_lp";
    const auto& a = *rep.affine;
    rep.feasible = a.feasible;
    if (y.size() == n && verify_point(y)) {
      rep.result = verdict::holds;
      rep.strict_interior = affine_interior();
      if (rep.strict_interior == verdict::holds && !verify_interior(y))
        rep.strict_interior = verdict::undecided;
      check_affinity(y);
      rep.message =
          "Slater's condition holds (every row affine: the model is feasible); strict "
          "interior " +
          std::string(to_string(rep.strict_interior)) + ": " + a.message;
    } else {
      rep.result = rep.strict_interior = verdict::undecided;
      rep.message =
          "undecided: the affine part's LPs gave no point that checks through the "
          "callbacks (" +
          a.message + ")" + last_failure();
    }
    return finish();
  }

  // 4. Convex rows: the phase one from a point strictly inside the affine rows, in the
  // callbacks' domain (x0 when it qualifies, else the affine part's point, else the first
  // point towards it from x0 where the callbacks answer).
  const bool exact = o.hessians == hessian_source::exact ||
                     (o.hessians == hessian_source::automatic && bool(model.constraint_hessian));
  rep.method = exact ? "phase_one_exact" : "phase_one_quasi_newton";
  detail::phase_one_setup setup;
  setup.convex_rows = rep.convex_rows;
  setup.equality_rows = rep.equality_rows;
  for (Index i : rep.affine_rows)
    (implicit[std::size_t(i)] ? setup.equality_rows : setup.affine_rows).push_back(i);
  std::sort(setup.equality_rows.begin(), setup.equality_rows.end());
  auto usable_start = [&](const VectorXd& x, bool strictly) {
    const auto at = detail::slater_measure(probe, rep, x);
    if (!at.ok || !(at.violation <= o.feasibility_tolerance)) return false;
    if (!strictly) return true;
    for (Index i : setup.affine_rows)
      if (!(at.values[i] < 0)) return false;
    for (Index i : setup.equality_rows)  // the implicit rows must hold as equalities here
      if (implicit[std::size_t(i)] &&
          !(std::abs(at.values[i]) <= o.feasibility_tolerance * rep.weights[i]))
        return false;
    return true;
  };
  VectorXd xs;
  if (usable_start(x0, true)) {
    xs = x0;
  } else if (y.size() == n && usable_start(y, true)) {
    xs = y;
  } else if (y.size() == n && usable_start(x0, false)) {
    for (int k = 1; k <= 40 && xs.size() == 0; ++k) {
      const VectorXd trial = x0 + std::ldexp(1.0, -k) * (y - x0);
      if (usable_start(trial, true)) xs = trial;
    }
  }
  if (probe.fatal()) return detail::slater_refuse(rep, probe.code(), probe.error());
  if (xs.size() == 0) {
    rep.result = rep.strict_interior = verdict::undecided;
    rep.feasible = feasibility::undecided;
    const std::string why =
        y.size() == n
            ? "the callbacks do not answer at the affine part's interior point" +
                  (probe.error().empty() ? std::string() : " (" + probe.error() + ")") +
                  "; give slater_options.start inside the affine rows and the callbacks' domain"
            : "the affine part's LPs gave no point strictly inside its inequalities";
    add_finding(rep.findings, severity::warning, "no_start_point", why, {}, rep.names);
    rep.message = "undecided: the phase one has no start: " + why;
    return rep;
  }
  setup.weight = rep.weights;
  setup.start = xs;
  setup.radius = o.search_radius * (1 + xs.lpNorm<Eigen::Infinity>());
  rep.search_radius = setup.radius;
  setup.exact_hessians = exact;
  setup.barrier_factor = o.barrier_factor;
  setup.max_newton_steps = o.max_newton_steps;
  setup.final_gap = o.final_gap;
  setup.target = -strict;
  const auto run = detail::run_phase_one(
      probe, setup, [&](const detail::phase_one_certificate& c) { return c.lower_bound >= -tau; });
  rep.newton_steps = run.newton_steps;
  rep.barrier_rounds = run.rounds;
  rep.domain_exits = run.domain_exits;
  rep.barrier_parameter = run.barrier_parameter;
  rep.upper_bound = run.best_max;
  if (run.end == detail::phase_one_end::callback_error)
    return detail::slater_refuse(rep, probe.code(), probe.error());
  if (run.certificate) {
    const auto& c = *run.certificate;
    rep.lower_bound = c.lower_bound;
    rep.multipliers = c.multipliers;
    rep.certificate_point = c.x;
    rep.certificate_value = c.value;
    rep.certificate_gradient = c.gradient_norm;
    rep.proof_radius = c.gradient_norm > 0 ? (c.value + tau) / c.gradient_norm : inf;
    double largest = 0;
    for (Index i : rep.convex_rows) largest = std::max(largest, c.multipliers[i]);
    for (Index i : rep.convex_rows)
      if (c.multipliers[i] > o.support_threshold * largest) rep.pinching.push_back(i);
    std::stable_sort(rep.pinching.begin(), rep.pinching.end(),
                     [&](Index a, Index b) { return c.multipliers[a] > c.multipliers[b]; });
    double affine_largest = 0;
    for (const auto* rows : {&rep.affine_rows, &rep.equality_rows})
      for (Index i : *rows) affine_largest = std::max(affine_largest, std::abs(c.multipliers[i]));
    for (Index i = 0; i < m; ++i)
      if (model.kinds[std::size_t(i)] == constraint_kind::affine &&
          std::abs(c.multipliers[i]) > o.support_threshold * std::max(largest, affine_largest))
        rep.certificate_affine_rows.push_back(i);
    if (c.distance > 0.1 * setup.radius)
      add_finding(rep.findings, severity::warning, "phase_one_unbounded",
                  "the phase one moved x to distance " + detail::format_figure(c.distance) +
                      " of its start (search radius " + detail::format_figure(setup.radius) +
                      "): some constraint keeps decreasing along a direction, and the lower "
                      "bound holds within the search ball",
                  {}, rep.names);
  }
  const std::string bounds = "s* in [" + detail::format_figure(rep.lower_bound) + ", " +
                             detail::format_figure(rep.upper_bound) + "]";

  if (run.end == detail::phase_one_end::found) {
    if (verify_point(run.best_x)) {
      rep.result = verdict::holds;
      rep.feasible = feasibility::feasible;
      rep.lower_bound = std::numeric_limits<double>::quiet_NaN();  // not needed: a point decides
      if (affine_interior() == verdict::fails) {
        rep.strict_interior = verdict::fails;
      } else if (affine_interior() == verdict::undecided) {
        rep.strict_interior = verdict::undecided;
      } else {
        // The barrier kept the affine rows strict; if one is too close, step towards the
        // affine part's interior point (the segment stays strict in both parts).
        rep.strict_interior = verdict::undecided;
        if (verify_interior(run.best_x)) rep.strict_interior = verdict::holds;
        for (int k = 1; k <= 30 && y.size() == n && rep.strict_interior != verdict::holds; ++k)
          if (verify_interior(run.best_x + std::ldexp(1.0, -k) * (y - run.best_x)))
            rep.strict_interior = verdict::holds;
      }
      rep.message =
          "Slater's condition holds: a point has every convex row strictly negative "
          "(largest g_i/w_i " +
          detail::format_figure(rep.point_margin) + " <= " + detail::format_figure(-strict) +
          ", affine rows met to " + detail::format_figure(rep.point_violation) +
          " relative); strict interior " + std::string(to_string(rep.strict_interior));
      check_affinity(rep.point);
    } else {
      rep.result = rep.strict_interior = verdict::undecided;
      add_finding(
          rep.findings, severity::info, "point_not_verified",
          "the phase one's point did not pass the direct check of the constraints" + last_failure(),
          {}, rep.names);
      rep.message = "undecided: the phase one's point did not pass the direct check (" + bounds +
                    ")" + last_failure();
    }
    return finish();
  }

  if (run.end == detail::phase_one_end::decided) {
    const auto& c = *run.certificate;
    const bool infeasible = c.lower_bound > o.feasibility_tolerance;
    rep.result = rep.strict_interior = verdict::fails;
    rep.feasible = infeasible ? feasibility::infeasible : feasibility::undecided;
    if (!infeasible) {  // feasible too when the best point meets every row within tolerance
      const auto at = detail::slater_measure(probe, rep, run.best_x);
      if (at.ok && at.violation <= o.feasibility_tolerance &&
          at.convex_max <= o.feasibility_tolerance)
        rep.feasible = feasibility::feasible;
    }
    std::string rows;
    for (std::size_t k = 0; k < rep.pinching.size() && k < 8; ++k)
      rows += (k ? ", " : "") + detail::format_figure(c.multipliers[rep.pinching[k]]) + "*" +
              rep.names(rep.pinching[k]);
    if (rep.pinching.size() > 8) rows += ", ...";
    const std::string where =
        "within distance " + detail::format_figure(setup.radius) + " of the start";
    if (infeasible) {
      rep.message = "infeasible: no point " + where +
                    " meets the convex rows (verified lower "
                    "bound " +
                    detail::format_figure(c.lower_bound) + " > " +
                    detail::format_figure(o.feasibility_tolerance) +
                    " on max g_i/w_i), so "
                    "Slater's condition fails in every form; multipliers " +
                    rows;
      add_finding(rep.findings, severity::error, "infeasible",
                  "the combination " + rows + " of the convex rows stays above " +
                      detail::format_figure(c.lower_bound) + " on the affine feasible set " + where,
                  rep.pinching, rep.names);
    } else {
      rep.message = "Slater's condition fails: no point " + where + " has every convex row below " +
                    detail::format_figure(-tau) + " (verified lower bound " +
                    detail::format_figure(c.lower_bound) + " on s*, best point " +
                    detail::format_figure(rep.upper_bound) + "); pinching: " + rows;
      add_finding(rep.findings, severity::error, "no_slater_point",
                  "the combination " + rows +
                      " of the convex rows (multipliers summing to 1) is "
                      ">= " +
                      detail::format_figure(c.lower_bound) + " on the affine feasible set " + where,
                  rep.pinching, rep.names);
    }
    if (!check_affinity(c.x)) {
      rep.result = rep.strict_interior = verdict::undecided;
      rep.feasible = feasibility::undecided;
      rep.message = "undecided: a row declared affine is not, so the certificate does not apply (" +
                    bounds + ")";
    }
    return finish();
  }

  rep.result = rep.strict_interior = verdict::undecided;
  rep.feasible = feasibility::undecided;
  std::string why;
  switch (run.end) {
    case detail::phase_one_end::gap_reached:
      why = "s* sits within the tolerance of 0 (" + bounds + ", tau " + detail::format_figure(tau) +
            ")";
      break;
    default:
      why = run.message + " (" + bounds + ")";
      add_finding(rep.findings, severity::warning, "phase_one_incomplete", run.message, {},
                  rep.names);
  }
  rep.message = "undecided: " + why;
  return finish();
}

}  // namespace qualify
