// qualify: the linear independence constraint qualification (LICQ) on dense Jacobians.
// SPDX-License-Identifier: MIT
#pragma once

#include <qualify/constraints.hpp>
#include <qualify/detail/dense.hpp>
#include <qualify/report.hpp>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <cstddef>
#include <limits>
#include <optional>
#include <string>
#include <type_traits>
#include <vector>

namespace qualify {

/// How a rank decision was reached.
enum class rank_method {
  none,               ///< nothing was decided (bad input, or not run)
  householder_bound,  ///< unpivoted Householder QR of J^T and a bound on sigma_min from R^{-1}
  deflated_qr,        ///< R with its rounding-level columns moved last, confirmed by bounds
  pivoted_qr,         ///< column-pivoted QR, confirmed by bounds on both sides of the gap
  svd,                ///< singular values, used when the pivoted QR left the gap unclear
  sparse_qr,          ///< SPQR's sparse QR of J^T (sparse_licq.hpp), confirmed by estimates
};

constexpr std::string_view to_string(rank_method m) noexcept {
  switch (m) {
    case rank_method::householder_bound: return "householder_bound";
    case rank_method::deflated_qr: return "deflated_qr";
    case rank_method::pivoted_qr: return "pivoted_qr";
    case rank_method::svd: return "svd";
    case rank_method::sparse_qr: return "sparse_qr";
    case rank_method::none: break;
  }
  return "none";
}

/// Settings of `check_licq`. Every threshold below applies to row-normalised gradients
/// (each row divided by its 2-norm), so a constraint multiplied by a positive constant
/// gives the same verdict.
struct licq_options {
  /// Rank threshold tau relative to the largest row norm (1 after normalisation): a direction
  /// counts when its singular value exceeds tau. Automatic (nullopt): max(m, n) * eps, the
  /// usual choice of rank-revealing codes (Golub and Van Loan, Matrix Computations, 4th ed.,
  /// 2013, sec. 5.4.1).
  std::optional<double> relative_threshold;
  /// The verdict holds when sigma_min >= band * tau, fails when sigma_min <= tau (below tau a
  /// direction is indistinguishable from rounding) and is undecided in between, so a matrix
  /// that is singular to working precision is never certified (common practice, no source).
  double undecided_band = 10.0;
  /// Rows with ||row||_2 <= zero_row_norm are zero gradients (absolute; 0: only exact zeros,
  /// since any non-zero row is a direction once normalised).
  double zero_row_norm = 0.0;
  /// Two rows are parallel when their unit directions u, v satisfy min(||u - v||, ||u + v||)
  /// <= tolerance. Automatic (nullopt): band * tau.
  std::optional<double> parallel_tolerance;
  /// When the pivoted QR leaves the gap unclear, singular values of the triangular factor
  /// decide if its smaller side is at most this (cost about 4 k^3 flops); larger ones are
  /// reported undecided.
  Index svd_limit = 2000;
  /// A holding verdict carries an `ill_conditioned` warning when sigma_min of the normalised
  /// rows is below this. Automatic (nullopt): sqrt(eps) (common practice, no source).
  std::optional<double> ill_conditioned_below;
  /// Sparse Jacobians (sparse_licq.hpp): the dense core checks the matrix when rows * cols
  /// <= this (16M entries, 128 MiB of doubles): without SPQR always, with SPQR only when the
  /// sparse decision is unclear. Larger unclear cases are reported undecided.
  std::size_t sparse_dense_limit = std::size_t(1) << 24;
  /// Used by the overload that picks active rows from constraint values.
  activity_options activity;

  /// Empty when valid, else a message naming the field and the rule it breaks.
  std::string validate() const {
    if (relative_threshold &&
        !(std::isfinite(*relative_threshold) && *relative_threshold > 0 && *relative_threshold < 1))
      return "licq_options.relative_threshold must be finite and in (0, 1)";
    if (!(std::isfinite(undecided_band) && undecided_band >= 1))
      return "licq_options.undecided_band must be finite and >= 1";
    if (!(std::isfinite(zero_row_norm) && zero_row_norm >= 0))
      return "licq_options.zero_row_norm must be finite and >= 0";
    if (parallel_tolerance && !(std::isfinite(*parallel_tolerance) && *parallel_tolerance >= 0))
      return "licq_options.parallel_tolerance must be finite and >= 0";
    if (svd_limit < 0) return "licq_options.svd_limit must be >= 0";
    if (ill_conditioned_below &&
        !(std::isfinite(*ill_conditioned_below) && *ill_conditioned_below >= 0))
      return "licq_options.ill_conditioned_below must be finite and >= 0";
    return activity.validate();
  }
};

/// A row that depends on others: g_row ~ sum of coefficient * g_term (gradients as given).
struct row_dependence {
  struct term {
    Index row = 0;
    double coefficient = 0;
  };
  Index row = 0;
  std::vector<term> terms;  ///< by decreasing |coefficient|; terms below the threshold omitted
  double residual = 0;      ///< ||g_row - sum||_2 / ||g_row||_2 with the listed terms
};

/// g_second ~ ratio * g_first.
struct row_pair {
  Index first = 0, second = 0;
  double ratio = 0;
};

/// What `check_licq` found. Rows are numbered as in the Jacobian the caller passed.
struct licq_report {
  verdict result = verdict::not_checked;
  rank_method method = rank_method::none;
  std::string message = "check_licq was not called";
  Index rows = 0, cols = 0;  ///< size of the Jacobian checked (the active rows)
  Index rank = 0;            ///< numerical rank of the row-normalised gradients
  Index raw_rank = 0;        ///< the same decision on the gradients as given
  std::optional<double> relative_threshold_requested;  ///< as given in the options
  double relative_threshold = 0;  ///< as used
  double threshold = 0;           ///< tau on normalised rows (equal to the relative one)
  double raw_threshold = 0;       ///< tau * largest row norm, for raw_rank
  /// The figure the verdict rests on (a bound on the smallest singular value when it holds,
  /// on the first neglected one when it fails) and margin = deciding_value / threshold.
  double deciding_value = 0;
  double margin = 0;
  /// Distance to degeneracy: an estimate of sigma_min of the normalised rows, the smallest
  /// 2-norm perturbation of the unit gradients that makes them dependent (Eckart-Young).
  double smallest_singular_value = 0;
  double largest_singular_value = 0;
  double condition_number = std::numeric_limits<double>::infinity();
  std::vector<Index> independent_rows;
  std::vector<row_dependence> dependencies;  ///< every dependent row, zero rows included
  std::vector<Index> zero_rows;
  std::vector<row_pair> duplicate_rows;  ///< same gradient
  std::vector<row_pair> parallel_rows;   ///< positive multiple other than 1
  std::vector<row_pair> opposed_rows;    ///< negative multiple (an equality split in two?)
  std::optional<active_set> active;      ///< when the rows were picked from values
  row_names names;
  std::vector<finding> findings;

  std::vector<Index> dependent_rows() const {
    std::vector<Index> rows_out;
    for (const auto& d : dependencies) rows_out.push_back(d.row);
    return rows_out;
  }
};

namespace detail {

template <class Scalar>
struct triangle_bound {
  Scalar lower = 0;     ///< rigorous lower bound on sigma_min (0 when it cannot be given)
  Scalar estimate = 0;  ///< power-iteration estimate of sigma_min
};

/// Bounds sigma_min of a square upper-triangular T (zeros below the diagonal) from an explicit inverse X:
/// ||X||_2 <= min(||X||_F, sqrt(||X||_1 ||X||_inf)), discounted by the first-order error of
/// the computed inverse, |X^ - X| <~ n u |X||T||X| (Higham, Accuracy and Stability of
/// Numerical Algorithms, 2nd ed., 2002, ch. 14; from memory).
template <class Scalar>
triangle_bound<Scalar> bound_smallest_singular_value(const Eigen::Ref<const matrix<Scalar>>& t) {
  triangle_bound<Scalar> out;
  const Index n = t.rows();
  if (n == 0) return out;
  if ((t.diagonal().array() == Scalar(0)).any()) return out;
  matrix<Scalar> x = t.template triangularView<Eigen::Upper>();
  invert_upper_in_place<Scalar>(x);
  if (!x.allFinite()) return out;
  const Scalar frob = x.norm();
  const Scalar one = x.cwiseAbs().colwise().sum().maxCoeff();
  const Scalar inf = x.cwiseAbs().rowwise().sum().maxCoeff();
  const Scalar bound_on_inverse = std::min(frob, std::sqrt(one * inf));
  const Scalar error = Scalar(n) * std::numeric_limits<Scalar>::epsilon() * t.norm() * frob;
  if (error <= Scalar(0.5)) out.lower = (Scalar(1) - error) / bound_on_inverse;
  const Scalar inverse_norm = upper_two_norm_estimate<Scalar>(x);
  out.estimate = inverse_norm > 0 ? Scalar(1) / inverse_norm : Scalar(0);
  return out;
}

/// A rank decision on an upper-trapezoidal factor T (p x k) of unit-column data.
template <class Scalar>
struct rank_decision {
  Index rank = 0;
  rank_method method = rank_method::none;
  bool clear = false;           ///< sigma_rank >= band * tau and sigma_{rank+1} <= tau, proven
  Scalar kept_lower = 0;        ///< lower bound on sigma_rank (0 when rank == 0)
  Scalar dropped_upper = 0;     ///< upper bound on sigma_{rank+1} (0 when rank == k)
  Scalar smallest_estimate = 0; ///< estimate of sigma_min(T) when rank == k, else of sigma_{rank+1}
  std::vector<Index> order;     ///< column order: the first `rank` are kept
  matrix<Scalar> factor;        ///< R of the pivoted QR (upper part valid), for explanations
};

/// Column-pivoted QR of T, confirmed on both sides of the gap; singular values decide
/// when the bounds leave the gap unclear and T is small enough.
template <class Scalar>
rank_decision<Scalar> decide_rank_pivoted(const matrix<Scalar>& t, Scalar tau, Scalar band,
                                          Index svd_limit) {
  rank_decision<Scalar> out;
  const Index p = t.rows(), k = t.cols(), q = std::min(p, k);
  Eigen::ColPivHouseholderQR<matrix<Scalar>> qr(t);
  out.factor = qr.matrixQR().template triangularView<Eigen::Upper>();
  const auto& perm = qr.colsPermutation().indices();
  out.order.assign(perm.data(), perm.data() + k);
  Index r = 0;
  while (r < q && std::abs(out.factor(r, r)) > tau) ++r;
  out.rank = r;
  out.method = rank_method::pivoted_qr;
  if (r > 0) {
    const auto b = bound_smallest_singular_value<Scalar>(out.factor.topLeftCorner(r, r));
    out.kept_lower = b.lower;
    out.smallest_estimate = b.estimate;
  }
  if (r < k) {
    out.dropped_upper = r < p ? out.factor.bottomRightCorner(p - r, k - r).norm() : Scalar(0);
    out.smallest_estimate = out.dropped_upper;
  }
  out.clear = (r == 0 || out.kept_lower >= band * tau) && out.dropped_upper <= tau;
  if (out.clear || q > svd_limit || q == 0) return out;

  // Kahan-type matrices hide a small singular value behind healthy pivots: ask the SVD.
  Eigen::BDCSVD<matrix<Scalar>> svd(t);
  const auto& s = svd.singularValues();
  Index rs = 0;
  while (rs < q && s(rs) > tau) ++rs;
  out.rank = rs;
  out.method = rank_method::svd;
  out.kept_lower = rs > 0 ? s(rs - 1) : Scalar(0);
  out.dropped_upper = rs < q ? s(rs) : Scalar(0);
  out.smallest_estimate = rs == k ? s(q - 1) : out.dropped_upper;
  out.clear = (rs == 0 || out.kept_lower >= band * tau) && out.dropped_upper <= tau;
  return out;
}

/// The cheap decision for the common failure: a few rows that are exact combinations of
/// earlier ones leave diagonal entries of the unpivoted R at rounding level. Those columns
/// move to the end and the staircase they leave is re-triangularised by short Householder
/// reflections (about 4 (d + 1) k^2 flops for d candidates), giving a column-permuted QR that
/// is accepted only when proven as in the pivoted path. Empty `order` when it does not apply.
template <class Scalar>
rank_decision<Scalar> decide_rank_deflated(const matrix<Scalar>& t, Scalar tau, Scalar band) {
  rank_decision<Scalar> out;
  const Index k = t.cols();
  std::vector<Index> candidates;
  for (Index j = 0; j < k; ++j)
    if (std::abs(t(j, j)) <= band * tau) candidates.push_back(j);
  const Index d = Index(candidates.size());
  if (d == 0 || 4 * d > k) return out;  // many candidates: the pivoted QR is the better tool
  for (Index j = 0, c = 0; j < k; ++j) {
    if (c < d && candidates[c] == j)
      ++c;
    else
      out.order.push_back(j);
  }
  out.order.insert(out.order.end(), candidates.begin(), candidates.end());
  out.factor = t(Eigen::all, out.order);
  Scalar tau_h(0), beta(0);
  vector<Scalar> essential(d + 1), workspace(k);
  for (Index p = 0; p < k; ++p) {
    // Column p held original column order[p], non-zero down to that row (fill from earlier
    // reflections stays above it); the moved columns are full below row p.
    const Index len = p < k - d ? out.order[p] + 1 - p : k - p;
    if (len <= 1) continue;
    auto column = out.factor.col(p).segment(p, len);
    auto tail = essential.head(len - 1);
    column.makeHouseholder(tail, tau_h, beta);
    column(0) = beta;
    column.tail(len - 1).setZero();
    out.factor.block(p, p + 1, len, k - p - 1)
        .applyHouseholderOnTheLeft(tail, tau_h, workspace.data());
  }
  const Index r = k - d;
  out.rank = r;
  out.method = rank_method::deflated_qr;
  const auto b = bound_smallest_singular_value<Scalar>(out.factor.topLeftCorner(r, r));
  out.kept_lower = b.lower;
  out.dropped_upper = out.factor.bottomRightCorner(d, d).norm();  // zero below its diagonal
  out.smallest_estimate = out.dropped_upper;
  out.clear = out.kept_lower >= band * tau && out.dropped_upper <= tau;
  return out;
}

/// The verdict from a rank decision on k non-zero unit rows in n variables: full rank needs
/// every row, zero rows included, to be independent, with sigma_min proven >= band * tau; one
/// neglected direction proven <= tau suffices to fail.
template <class Scalar>
void set_verdict(licq_report& rep, Index k, Index n, const rank_decision<Scalar>& decision,
                 Scalar tau, Scalar band) {
  const Index r = decision.rank;
  const bool structural = !rep.zero_rows.empty() || k > n;
  if (!structural && r == k && (k == 0 || decision.kept_lower >= band * tau)) {
    rep.result = verdict::holds;
    rep.deciding_value = double(decision.kept_lower);
  } else if (structural || (r < k && decision.dropped_upper <= tau)) {
    rep.result = verdict::fails;
    rep.deciding_value = structural ? 0.0 : double(decision.dropped_upper);
  } else {
    rep.result = verdict::undecided;
    rep.deciding_value = double(r == k ? decision.kept_lower : decision.dropped_upper);
  }
  rep.margin = rep.deciding_value / double(tau);
}

/// Names the latest row of every dependence as the dependent one: the choice a person expects
/// (a constraint imported again, a later row restating earlier ones), and the same whichever
/// order the factorisation pivoted in, dense or sparse. When an explanation g_d = sum c_t g_t
/// has a term row L > d, d and L exchange roles (g_L = (g_d - sum_{t != L} c_t g_t) / c_L, and
/// the other explanations that use g_L are rewritten on the new basis), but only when the
/// results check out, with residuals recomputed from the gradients by `residual(row, terms)`
/// (relative to ||g_row||):
/// - the new explanation of L: residual <= max(band * tau, the old one of d). An exchange on a
///   small c_L divides the old residual by it and fails this, so a row is not named dependent
///   on rows it is barely related to. (Not tau itself: an explanation of T terms rounds at
///   about T * eps * sum |c_t| ||g_t|| / ||g_d||, above tau = max(m, n) * eps on dense rows.)
/// - each rewritten explanation: its backward error residual / (1 + sum |c_t| ||g_t|| /
///   ||g_row||) <= max(band * tau, the old one's). A rewrite adds a_L times the new residual
///   of L, which its own coefficients magnify; the backward error measures it against them.
/// Each exchange puts an earlier row in the basis in place of a later one, so the loop ends;
/// when no exchange is left, every dependent row comes after the rows that explain it, which
/// makes the independent rows the greedy basis (row i is dependent exactly when it is a
/// combination of rows before it; the basis exchange property of linear independence).
/// `norm(row)` is ||g_row||_2: terms whose coefficient on unit gradients falls to <= tau are
/// omitted, as the factorisations omit them. Zero rows (no terms) stay as they are.
template <class Residual, class Norm>
void orient_dependencies(licq_report& rep, double tau, double band, Residual&& residual,
                         Norm&& norm) {
  using term = row_dependence::term;
  // sum of weight * terms, merged by row, tiny terms (on unit gradients, relative to
  // g_owner) dropped.
  const auto combine = [&](Index owner,
                           std::vector<std::pair<double, const std::vector<term>*>> parts) {
    std::vector<term> all, out;
    for (const auto& [weight, list] : parts)
      for (const auto& t : *list) all.push_back({t.row, weight * t.coefficient});
    std::stable_sort(all.begin(), all.end(),
                     [](const term& a, const term& b) { return a.row < b.row; });
    for (const term& t : all) {
      if (!out.empty() && out.back().row == t.row)
        out.back().coefficient += t.coefficient;
      else
        out.push_back(t);
    }
    const double owner_norm = double(norm(owner));
    out.erase(
        std::remove_if(out.begin(), out.end(),
                       [&](const term& t) {
                         return t.row == owner ||
                                !(std::abs(t.coefficient) * double(norm(t.row)) > tau * owner_norm);
                       }),
        out.end());
    std::sort(out.begin(), out.end(), [](const term& a, const term& b) {
      return std::abs(a.coefficient) > std::abs(b.coefficient);
    });
    return out;
  };
  const auto backward_error = [&](const row_dependence& dep) {
    double size = 1;
    const double own = double(norm(dep.row));
    for (const term& t : dep.terms) size += std::abs(t.coefficient) * double(norm(t.row)) / own;
    return dep.residual / size;
  };
  const std::size_t limit = 4 * rep.dependencies.size() * (rep.dependencies.size() + 1) + 16;
  for (std::size_t round = 0, changed = 1; changed && round < limit; ++round) {
    changed = 0;
    for (std::size_t a = 0; a < rep.dependencies.size(); ++a) {
      row_dependence& dep = rep.dependencies[a];
      const auto latest =
          std::max_element(dep.terms.begin(), dep.terms.end(),
                           [](const term& x, const term& y) { return x.row < y.row; });
      if (latest == dep.terms.end() || latest->row < dep.row || latest->coefficient == 0) continue;
      const Index l = latest->row;
      const double c = latest->coefficient;
      // g_l = (1 / c) g_d - sum_{t != l} (c_t / c) g_t
      const std::vector<term> own{{dep.row, 1.0}}, single{{l, 1.0}};
      row_dependence swapped{l, combine(l, {{1.0 / c, &own}, {-1.0 / c, &dep.terms}}), 0.0};
      swapped.residual = double(residual(l, swapped.terms));
      if (!(swapped.residual <= std::max(band * tau, dep.residual))) continue;
      std::vector<std::pair<std::size_t, row_dependence>> rewritten;
      bool valid = true;
      for (std::size_t e = 0; e < rep.dependencies.size() && valid; ++e) {
        const row_dependence& other = rep.dependencies[e];
        if (e == a) continue;
        const auto uses = std::find_if(other.terms.begin(), other.terms.end(),
                                       [&](const term& t) { return t.row == l; });
        if (uses == other.terms.end()) continue;
        // g_e = sum_t a_t g_t with a_l g_l replaced by a_l (sum of swapped's terms)
        const double weight = uses->coefficient;
        row_dependence next{
            other.row,
            combine(other.row, {{1.0, &other.terms}, {-weight, &single}, {weight, &swapped.terms}}),
            0.0};
        next.residual = double(residual(next.row, next.terms));
        valid = backward_error(next) <= std::max(band * tau, backward_error(other));
        rewritten.push_back({e, std::move(next)});
      }
      if (!valid) continue;
      std::replace(rep.independent_rows.begin(), rep.independent_rows.end(), l, dep.row);
      dep = std::move(swapped);
      for (auto& [e, next] : rewritten) rep.dependencies[e] = std::move(next);
      changed = 1;
    }
  }
}

/// Files rows a, b (caller's numbering, row norms norm_a, norm_b) as duplicated, parallel or
/// opposed when the chord of their unit directions is within parallel_tol.
template <class Scalar>
void record_pair(licq_report& rep, Index a, Index b, Scalar cosine, Scalar chord, Scalar norm_a,
                 Scalar norm_b, Scalar parallel_tol) {
  using std::abs;
  if (chord > parallel_tol) return;
  // Pairs are listed with the lower row first: g_second ~ ratio * g_first.
  const bool a_first = a < b;
  const Scalar ratio = (cosine > 0 ? 1 : -1) * (a_first ? norm_b / norm_a : norm_a / norm_b);
  row_pair pair{a_first ? a : b, a_first ? b : a, double(ratio)};
  if (cosine < 0)
    rep.opposed_rows.push_back(pair);
  else if (abs(ratio - Scalar(1)) <= parallel_tol)
    rep.duplicate_rows.push_back(pair);
  else
    rep.parallel_rows.push_back(pair);
}

/// Row lists in the report in increasing row order.
inline void sort_rows(licq_report& rep) {
  const auto by_rows = [](const row_pair& x, const row_pair& y) {
    return x.first != y.first ? x.first < y.first : x.second < y.second;
  };
  for (auto* list : {&rep.duplicate_rows, &rep.parallel_rows, &rep.opposed_rows})
    std::sort(list->begin(), list->end(), by_rows);
  std::sort(rep.independent_rows.begin(), rep.independent_rows.end());
  std::sort(rep.dependencies.begin(), rep.dependencies.end(),
            [](const row_dependence& x, const row_dependence& y) { return x.row < y.row; });
}

/// The LICQ analysis of the rows of `jac`; `global` maps its rows to the caller's numbering
/// (empty: the identity). Inputs have been validated.
template <class Scalar>
void analyze_rows(const Eigen::Ref<const matrix<Scalar>>& jac, const licq_options& options,
                  const std::vector<Index>& global, licq_report& rep) {
  using std::abs;
  const Index m = jac.rows(), n = jac.cols();
  const auto to_global = [&](Index i) { return global.empty() ? i : global[i]; };
  const Scalar eps = std::numeric_limits<Scalar>::epsilon();
  const Scalar band = Scalar(options.undecided_band);
  const Scalar tau =
      Scalar(options.relative_threshold.value_or(double(std::max(m, n)) * double(eps)));
  const Scalar parallel_tol = Scalar(options.parallel_tolerance.value_or(double(band * tau)));
  rep.relative_threshold = rep.threshold = double(tau);

  // Gradients as columns, read once; norms and the QR then work on contiguous columns.
  matrix<Scalar> unit;
  transpose_into<Scalar>(jac, unit);
  vector<Scalar> norms(m);
  std::vector<Index> kept;  // local rows with a non-zero gradient
  for (Index i = 0; i < m; ++i) {
    norms(i) = unit.col(i).stableNorm();
    if (double(norms(i)) <= options.zero_row_norm) {
      rep.zero_rows.push_back(to_global(i));
      rep.dependencies.push_back({to_global(i), {}, 0.0});
    } else {
      kept.push_back(i);
    }
  }
  const Index k = Index(kept.size());
  Scalar largest_norm = 0, smallest_norm = std::numeric_limits<Scalar>::infinity();
  for (Index i : kept) {
    largest_norm = std::max(largest_norm, norms(i));
    smallest_norm = std::min(smallest_norm, norms(i));
  }
  rep.raw_threshold = double(tau * largest_norm);
  if (!rep.zero_rows.empty())
    add_finding(rep.findings, severity::error, "zero_gradient",
                "gradient is zero: the row can never be independent", rep.zero_rows, rep.names);

  // Unit gradients of the kept rows, packed to the left (c <= kept[c], so in place); only R of
  // their QR is needed, so the factorisation runs in place and the Householder vectors are
  // dropped with the storage.
  const Index p = std::min(n, k);
  matrix<Scalar> r_factor;
  {
    for (Index c = 0; c < k; ++c) unit.col(c) = unit.col(kept[c]) / norms(kept[c]);
    Eigen::Ref<matrix<Scalar>> packed = unit.leftCols(k);
    Eigen::HouseholderQR<Eigen::Ref<matrix<Scalar>>> qr(packed);
    r_factor = packed.topRows(p).template triangularView<Eigen::Upper>();
    unit.resize(0, 0);
  }

  rank_decision<Scalar> decision;
  decision.clear = k == 0;  // nothing to decide
  bool certified = false;
  // sigma_min of a triangle never exceeds its smallest diagonal entry: skip a bound that
  // cannot certify.
  const bool may_certify =
      k > 0 && k <= n && r_factor.diagonal().cwiseAbs().minCoeff() >= band * tau;
  if (may_certify) {
    // Most Jacobians a user checks have full rank: R has the singular values of J, and a
    // lower bound from R^{-1} certifies that at matrix-multiply speed, with no pivoting.
    const auto b = bound_smallest_singular_value<Scalar>(r_factor);
    if (b.lower >= band * tau) {
      certified = true;
      decision.rank = k;
      decision.method = rank_method::householder_bound;
      decision.clear = true;
      decision.kept_lower = b.lower;
      decision.smallest_estimate = b.estimate;
      decision.order.resize(k);
      for (Index c = 0; c < k; ++c) decision.order[c] = c;
    }
  }
  if (!certified && k > 0 && k <= n) decision = decide_rank_deflated<Scalar>(r_factor, tau, band);
  if (!certified && k > 0 && !decision.clear)
    decision = decide_rank_pivoted<Scalar>(r_factor, tau, band, options.svd_limit);

  const Index r = decision.rank;
  rep.method = decision.method;
  rep.rank = r;
  rep.largest_singular_value = double(upper_two_norm_estimate<Scalar>(r_factor));
  // Zero rows and more rows than variables are dependent by structure: distance 0.
  rep.smallest_singular_value =
      rep.zero_rows.empty() && k <= n ? double(decision.smallest_estimate) : 0.0;
  rep.condition_number = rep.smallest_singular_value > 0
                             ? rep.largest_singular_value / rep.smallest_singular_value
                             : std::numeric_limits<double>::infinity();

  set_verdict<Scalar>(rep, k, n, decision, tau, band);

  // Independent rows and the explanation of every dependent one on them.
  for (Index c = 0; c < r; ++c) rep.independent_rows.push_back(to_global(kept[decision.order[c]]));
  const Index d = k - r;
  if (d > 0) {
    const auto& f = decision.factor;
    matrix<Scalar> coef = f.topLeftCorner(r, r).template triangularView<Eigen::Upper>().solve(
        f.topRightCorner(r, d));
    coef = (coef.array().abs() > tau).select(coef, Scalar(0));  // below-threshold terms omitted
    // Rows are read from the caller's Jacobian through weights, so nothing of size r x n is
    // copied: residual = unit_dep - W jac, with W holding coef / norm on the kept rows.
    matrix<Scalar> unit_dep(d, n), weights = matrix<Scalar>::Zero(d, m);
    for (Index c = 0; c < d; ++c) {
      const Index row = kept[decision.order[r + c]];
      unit_dep.row(c) = jac.row(row) / norms(row);
      for (Index t = 0; t < r; ++t) {
        const Index base = kept[decision.order[t]];
        weights(c, base) = coef(t, c) / norms(base);
      }
    }
    matrix<Scalar> residual = unit_dep;
    if (r > 0 && weights.allFinite()) {
      residual.noalias() -= weights * jac;
    } else if (r > 0) {
      // coef / norm overflows for a row of denormal entries (norm below 1 / max): subtract
      // the unit rows one by one instead (found by fuzzing: rows 7e-323 and 2e-323 gave a
      // NaN residual).
      for (Index c = 0; c < d; ++c)
        for (Index t = 0; t < r; ++t) {
          const Index base = kept[decision.order[t]];
          if (coef(t, c) != Scalar(0)) residual.row(c) -= coef(t, c) * (jac.row(base) / norms(base));
        }
    }
    for (Index c = 0; c < d; ++c) {
      const Index row = kept[decision.order[r + c]];
      row_dependence dep{to_global(row), {}, double(residual.row(c).stableNorm())};
      for (Index t = 0; t < r; ++t) {
        if (coef(t, c) == Scalar(0)) continue;
        const Index base = kept[decision.order[t]];
        dep.terms.push_back({to_global(base), double(coef(t, c) * (norms(row) / norms(base)))});
      }
      std::sort(dep.terms.begin(), dep.terms.end(),
                [](const auto& a, const auto& b) { return abs(a.coefficient) > abs(b.coefficient); });
      rep.dependencies.push_back(std::move(dep));
    }

    // The caller's rows back to the rows of jac, for the explanations' rewriting.
    const auto local = [&](Index row) {
      return global.empty()
                 ? row
                 : Index(std::lower_bound(global.begin(), global.end(), row) - global.begin());
    };
    orient_dependencies(
        rep, double(tau), double(band),
        [&](Index row, const std::vector<row_dependence::term>& terms) {
          vector<Scalar> w = jac.row(local(row)).transpose();
          for (const auto& t : terms)
            w -= Scalar(t.coefficient) * jac.row(local(t.row)).transpose();
          return double(w.stableNorm() / norms(local(row)));
        },
        [&](Index row) { return double(norms(local(row))); });

    // Duplicated, parallel and opposed pairs: one side of every such pair is dependent.
    // Cosines by matrix products; the exact chord only for the few pairs that are close.
    // Cosines with every row by one product; the exact chord only for the few close pairs.
    matrix<Scalar> cosines = unit_dep * jac.transpose();
    std::vector<Index> dep_position(std::size_t(m), -1);
    for (Index c = 0; c < d; ++c) dep_position[kept[decision.order[r + c]]] = c;
    const auto classify = [&](Index a, Index b, Scalar cosine, const auto& ua, const auto& ub) {
      if (abs(cosine) < Scalar(0.5)) return;
      const Scalar chord = cosine > 0 ? (ua - ub).norm() : (ua + ub).norm();
      record_pair<Scalar>(rep, to_global(a), to_global(b), cosine, chord, norms(a), norms(b),
                          parallel_tol);
    };
    for (Index c = 0; c < d; ++c) {
      const Index a = kept[decision.order[r + c]];
      for (Index b : kept) {
        if (b == a || (dep_position[b] >= 0 && dep_position[b] < c)) continue;  // once a pair
        classify(a, b, cosines(c, b) / norms(b), unit_dep.row(c), jac.row(b) / norms(b));
      }
    }
  }
  sort_rows(rep);

  // The same decision on the gradients as given: sigma_i(D U) lies within
  // [min D, max D] * sigma_i(U), so the normalised bounds settle it unless rows are badly
  // scaled; then the scaled factor is decided afresh.
  if (k == 0) {
    rep.raw_rank = 0;
  } else if (decision.clear &&
             smallest_norm * decision.kept_lower >= band * tau * largest_norm) {
    rep.raw_rank = r;
  } else {
    matrix<Scalar> scaled = r_factor;
    for (Index c = 0; c < k; ++c) scaled.col(c) *= norms(kept[c]) / largest_norm;
    rep.raw_rank = decide_rank_pivoted<Scalar>(scaled, tau, band, options.svd_limit).rank;
  }
}

/// Findings and the one-sentence message, once every figure is in the report.
inline void describe(licq_report& rep, const licq_options& options, double eps) {
  const auto& names = rep.names;
  constexpr std::size_t shown_terms = 8;  // a message stays readable; `dependencies` has all
  for (const auto& dep : rep.dependencies) {
    if (dep.terms.empty() && std::find(rep.zero_rows.begin(), rep.zero_rows.end(), dep.row) !=
                                 rep.zero_rows.end())
      continue;  // reported as zero_gradient
    std::string text = names(dep.row) + " =";
    std::vector<Index> rows{dep.row};
    bool first = true;
    for (const auto& t : dep.terms) {
      if (rows.size() > shown_terms) break;  // the report's `dependencies` keep them all
      rows.push_back(t.row);
      text += (t.coefficient < 0 ? (first ? " -" : " - ") : (first ? " " : " + ")) +
              format_figure(std::abs(t.coefficient)) + "*" + names(t.row);
      first = false;
    }
    if (dep.terms.size() > shown_terms)
      text += " + " + std::to_string(dep.terms.size() - shown_terms) + " smaller terms";
    if (dep.terms.empty()) text += " 0 (no term above the threshold)";
    text += " (relative residual " + format_figure(dep.residual) + ")";
    add_finding(rep.findings, severity::error, "dependent_row", text, rows, names);
  }
  const auto pairs = [&](const std::vector<row_pair>& list, const char* code, const char* what) {
    for (const auto& pr : list)
      add_finding(rep.findings, severity::warning, code,
                  names(pr.second) + " is " + what + " " + names(pr.first) + " (ratio " +
                      format_figure(pr.ratio) + ")",
                  {pr.first, pr.second}, names);
  };
  pairs(rep.duplicate_rows, "duplicate_rows", "a duplicate of");
  pairs(rep.parallel_rows, "parallel_rows", "parallel to");
  pairs(rep.opposed_rows, "opposed_rows", "opposed to");
  if (rep.rows > rep.cols)
    add_finding(rep.findings, severity::error, "more_rows_than_variables",
                std::to_string(rep.rows) + " rows in " + std::to_string(rep.cols) +
                    " variables cannot be independent",
                {}, names);
  const double ill = options.ill_conditioned_below.value_or(std::sqrt(eps));
  if (rep.result == verdict::holds && rep.smallest_singular_value < ill)
    add_finding(rep.findings, severity::warning, "ill_conditioned",
                "independent, but a perturbation of " + format_figure(rep.smallest_singular_value) +
                    " in the unit gradients makes them dependent",
                {}, names);
  if (rep.raw_rank != rep.rank)
    add_finding(rep.findings, severity::warning, "scaling_sensitive",
                "on the gradients as given the rank would be " + std::to_string(rep.raw_rank) +
                    " instead of " + std::to_string(rep.rank) + ": rows differ widely in norm",
                {}, names);
  if (rep.active) {
    if (!rep.active->violated.empty())
      add_finding(rep.findings, severity::warning, "violated_constraint",
                  "constraint value violates its bound beyond the activity tolerance",
                  rep.active->violated, names);
    if (!rep.active->near_active.empty())
      add_finding(rep.findings, severity::info, "near_active",
                  "inactive, but within near_active_factor of the activity tolerance",
                  rep.active->near_active, names);
  }

  const std::string counted = std::to_string(rep.rows) + " gradient" + (rep.rows == 1 ? "" : "s");
  const std::string margin = " (deciding value " + format_figure(rep.deciding_value) + ", " +
                             format_figure(rep.margin) + " x the threshold " +
                             format_figure(rep.threshold) + ", by " +
                             std::string(to_string(rep.method)) + ")";
  switch (rep.result) {
    case verdict::holds:
      rep.message = rep.rows == 0 ? "LICQ holds: no active constraint"
                                  : "LICQ holds: the " + counted + " are linearly independent" + margin;
      break;
    case verdict::fails:
      rep.message = "LICQ fails: rank " + std::to_string(rep.rank) + " of " + counted + ", " +
                    std::to_string(rep.dependencies.size()) + " dependent" + margin;
      break;
    default:
      rep.message = "LICQ undecided: the smallest singular value lies between the threshold and " +
                    format_figure(options.undecided_band) + " x the threshold" + margin;
  }
}

inline licq_report invalid_licq(licq_report rep, std::string code, std::string message) {
  rep.result = verdict::invalid_input;
  rep.method = rank_method::none;
  rep.message = "invalid input: " + message;
  add_finding(rep.findings, severity::error, std::move(code), std::move(message), {}, rep.names);
  return rep;
}

template <class Derived>
std::optional<std::string> non_finite_message(const Eigen::MatrixBase<Derived>& m,
                                              const char* what) {
  const auto bad = first_non_finite(m);
  if (!bad) return std::nullopt;
  return std::string(what) + " entry (" + std::to_string(bad->row) + ", " +
         std::to_string(bad->col) + ") is " +
         describe_non_finite(static_cast<long double>(m(bad->row, bad->col)));
}

inline std::string count_message(std::size_t have, const char* what, Index rows) {
  return std::to_string(have) + " " + what + " for " + std::to_string(rows) + " rows";
}

template <class Derived>
void check_scalar() {
  static_assert(std::is_floating_point_v<typename Derived::Scalar>,
                "qualify checks take float, double or long double matrices");
}

}  // namespace detail

namespace detail {

/// The report every check_licq starts from: sizes, names, and the checks of the options, the
/// labels and the column count; `result` is invalid_input when one of them fails.
inline licq_report licq_start(Index rows, Index cols, const licq_options& options,
                              std::vector<std::string> labels) {
  licq_report rep;
  rep.rows = rows;
  rep.cols = cols;
  rep.relative_threshold_requested = options.relative_threshold;
  const std::size_t label_count = labels.size();
  rep.names = row_names(std::move(labels));
  if (auto bad = options.validate(); !bad.empty()) return invalid_licq(rep, "bad_option", bad);
  if (label_count != 0 && label_count != std::size_t(rep.rows))
    return invalid_licq(rep, "label_count", count_message(label_count, "labels", rep.rows));
  if (rep.cols == 0)
    return invalid_licq(rep, "empty_jacobian", "the Jacobian has no columns (variables)");
  return rep;
}

/// The report both dense overloads start from: licq_start's checks and finite entries.
template <class Derived>
licq_report validated_licq(const Eigen::MatrixBase<Derived>& jacobian, const licq_options& options,
                           std::vector<std::string> labels) {
  check_scalar<Derived>();
  licq_report rep = licq_start(jacobian.rows(), jacobian.cols(), options, std::move(labels));
  if (rep.result == verdict::invalid_input) return rep;
  if (auto bad = non_finite_message(jacobian, "Jacobian"))
    return invalid_licq(rep, "non_finite_entry", *bad);
  if (auto row = first_overflowing_row(jacobian))
    return invalid_licq(rep, "row_norm_overflow", overflowing_row_message(rep.names(*row)));
  return rep;
}

/// The invalid_input report when constraint values or types do not fit the rows of `rep`.
template <class DerivedV>
std::optional<licq_report> point_input_problem(const licq_report& rep,
                                               const Eigen::MatrixBase<DerivedV>& values,
                                               const std::vector<constraint_type>& types) {
  if (values.cols() != 1 || values.rows() != rep.rows)
    return invalid_licq(rep, "value_count",
                        count_message(std::size_t(values.size()), "values", rep.rows));
  if (types.size() != std::size_t(rep.rows))
    return invalid_licq(rep, "type_count", count_message(types.size(), "types", rep.rows));
  if (auto bad = non_finite_message(values, "value"))
    return invalid_licq(rep, "non_finite_entry", *bad);
  return std::nullopt;
}

}  // namespace detail

/// LICQ on the Jacobian of the active constraints (rows = gradients): holds when the rows are
/// linearly independent. Decided on row-normalised gradients by a Householder QR of J^T with
/// a bound on its smallest singular value, falling back to a confirmed pivoted QR or an SVD.
/// `labels` (empty, or one per row) name rows in findings.
template <class Derived>
licq_report check_licq(const Eigen::MatrixBase<Derived>& jacobian, const licq_options& options = {},
                       std::vector<std::string> labels = {}) {
  using Scalar = typename Derived::Scalar;
  licq_report rep = detail::validated_licq(jacobian, options, std::move(labels));
  if (rep.result == verdict::invalid_input) return rep;
  detail::analyze_rows<Scalar>(jacobian, options, {}, rep);
  detail::describe(rep, options, double(std::numeric_limits<Scalar>::epsilon()));
  return rep;
}

/// LICQ at a point from the whole constraint Jacobian: rows are picked as active from their
/// `values` and `types` (see activity_options), then checked. Rows in the report keep the
/// numbering of `jacobian`; the picked set is in `report.active`.
template <class DerivedJ, class DerivedV>
licq_report check_licq(const Eigen::MatrixBase<DerivedJ>& jacobian,
                       const Eigen::MatrixBase<DerivedV>& values,
                       const std::vector<constraint_type>& types, const licq_options& options = {},
                       std::vector<std::string> labels = {}) {
  using Scalar = typename DerivedJ::Scalar;
  licq_report rep = detail::validated_licq(jacobian, options, std::move(labels));
  if (rep.result == verdict::invalid_input) return rep;
  if (auto bad = detail::point_input_problem(rep, values, types)) return *bad;

  const Eigen::Ref<const detail::matrix<Scalar>> full(jacobian);
  const detail::vector<Scalar> vals = values.template cast<Scalar>();
  rep.active = detail::select_active<Scalar>(full, vals, types, options.activity);
  rep.rows = Index(rep.active->active.size());
  const detail::matrix<Scalar> sub = full(rep.active->active, Eigen::all);
  detail::analyze_rows<Scalar>(sub, options, rep.active->active, rep);
  detail::describe(rep, options, double(std::numeric_limits<Scalar>::epsilon()));
  return rep;
}

}  // namespace qualify
