// qualify: LICQ on sparse Jacobians (Eigen::SparseMatrix), by SuiteSparse's SPQR when built with
// it. SPDX-License-Identifier: MIT
#pragma once

#include <Eigen/SparseCore>
#include <algorithm>
#include <cmath>
#include <cstddef>
#include <limits>
#include <optional>
#include <qualify/constraints.hpp>
#include <qualify/detail/sparse.hpp>
#include <qualify/licq.hpp>
#include <string>
#include <type_traits>
#include <vector>

namespace qualify {
namespace detail {

/// What the sparse analysis ended with, so that the caller can say it.
enum class sparse_outcome { sparse_engine, dense_core, dense_check, too_large, engine_failed };

/// Chord ||u -+ v|| of two sorted sparse unit columns.
inline double sparse_chord(const sparse_columns<double>& u, Index a, Index b, double sign) {
  sparse_columns<double>::InnerIterator x(u, a), y(u, b);
  double sum = 0;
  while (x || y) {
    double d;
    if (x && (!y || x.index() < y.index())) {
      d = x.value();
      ++x;
    } else if (y && (!x || y.index() < x.index())) {
      d = -sign * y.value();
      ++y;
    } else {
      d = x.value() - sign * y.value();
      ++x;
      ++y;
    }
    sum += d * d;
  }
  return std::sqrt(sum);
}

/// A combination sum factor * column of `unit` accumulated in a dense vector of length n,
/// touched entries tracked so that clearing it costs what was added.
class sparse_combination {
 public:
  explicit sparse_combination(const sparse_columns<double>& unit)
      : unit_(unit), value_(std::size_t(unit.rows()), 0.0), flag_(std::size_t(unit.rows()), 0) {}
  void add(Index column, double factor) {
    for (sparse_columns<double>::InnerIterator it(unit_, column); it; ++it) {
      const Index v = Index(it.index());
      if (!flag_[v]) {
        flag_[v] = 1;
        touched_.push_back(v);
      }
      value_[v] += factor * it.value();
    }
  }
  double norm() const {
    double s = 0;
    for (Index v : touched_) s += value_[v] * value_[v];
    return std::sqrt(s);
  }
  void clear() {
    for (Index v : touched_) {
      value_[v] = 0;
      flag_[v] = 0;
    }
    touched_.clear();
  }

 private:
  const sparse_columns<double>& unit_;
  std::vector<double> value_;
  std::vector<char> flag_;
  std::vector<Index> touched_;
};

/// The rows of `jac` that the analysis looks at: `global` (ascending rows of jac), or all rows
/// when it is empty; local_of maps a row of jac to its position in that list (-1: not looked at).
struct row_subset {
  Index size = 0;
  std::vector<sparse_index> local_of;
  const std::vector<Index>* global = nullptr;

  row_subset(Index rows, const std::vector<Index>& chosen) : global(&chosen) {
    local_of.assign(std::size_t(rows), chosen.empty() ? 0 : -1);
    if (chosen.empty()) {
      for (Index i = 0; i < rows; ++i) local_of[i] = sparse_index(i);
      size = rows;
    } else {
      for (std::size_t c = 0; c < chosen.size(); ++c) local_of[chosen[c]] = sparse_index(c);
      size = Index(chosen.size());
    }
  }
  Index to_global(Index local) const { return global->empty() ? local : (*global)[local]; }
};

/// The dense core on the chosen rows of the sparse Jacobian (their size was checked against
/// options.sparse_dense_limit). Starts the figures afresh: only sizes, names and the active
/// set carry over.
template <class Scalar, class Derived>
void analyze_dense_copy(const Derived& jac, const row_subset& rows, const licq_options& options,
                        licq_report& rep) {
  licq_report fresh;
  fresh.rows = rep.rows;
  fresh.cols = rep.cols;
  fresh.relative_threshold_requested = rep.relative_threshold_requested;
  fresh.active = std::move(rep.active);
  fresh.names = std::move(rep.names);
  rep = std::move(fresh);
  matrix<Scalar> dense = matrix<Scalar>::Zero(rows.size, jac.cols());
  Eigen::internal::evaluator<Derived> ev(jac);
  for (Index j = 0; j < jac.outerSize(); ++j)
    for (typename Eigen::internal::evaluator<Derived>::InnerIterator it(ev, j); it; ++it)
      if (const sparse_index local = rows.local_of[it.row()]; local >= 0)
        dense(local, it.col()) += Scalar(it.value());
  analyze_rows<Scalar>(dense, options, *rows.global, rep);
}

/// Solves R11 x = b for a sparse right-hand side by back substitution over the reach of its
/// pattern only (Gilbert and Peierls, "Sparse partial pivoting in time proportional to
/// arithmetic operations", SIAM J. Sci. Stat. Comput. 9, 1988), so that explaining d
/// dependent rows costs the entries their explanations touch, not d passes over R11.
class sparse_back_substitution {
 public:
  explicit sparse_back_substitution(const upper_triangle& t)
      : t_(t), x_(std::size_t(t.r), 0.0), mark_(std::size_t(t.r), 0) {}

  /// b (pattern `rows`, values in x()) becomes x; the pattern of x is returned in
  /// topological order (every entry before the entries it updates). Call clear() after use.
  const std::vector<Index>& solve(const std::vector<Index>& rows) {
    order_.clear();
    for (Index start : rows)
      if (!mark_[start]) reach(start);
    // order_ holds a reverse topological order: a column comes after all it updates.
    std::reverse(order_.begin(), order_.end());
    for (Index j : order_) {
      const sparse_index last = t_.p[j + 1] - 1;
      const double z = x_[j] / t_.x[last];
      x_[j] = z;
      if (z == 0) continue;
      for (sparse_index q = t_.p[j]; q < last; ++q) x_[t_.i[q]] -= t_.x[q] * z;
    }
    return order_;
  }
  double& operator[](Index i) { return x_[i]; }
  void clear() {
    for (Index j : order_) {
      x_[j] = 0;
      mark_[j] = 0;
    }
    order_.clear();
  }

 private:
  // Depth-first search from `start` over the graph j -> i (R(i, j) != 0, i < j), without
  // recursion (a banded factor has chains as long as the matrix); appends in post-order.
  void reach(Index start) {
    stack_.clear();
    stack_.push_back({start, t_.p[start]});
    mark_[start] = 1;
    while (!stack_.empty()) {
      auto& [j, next] = stack_.back();
      const sparse_index last = t_.p[j + 1] - 1;  // the diagonal closes the column
      while (next < last && mark_[t_.i[next]]) ++next;
      if (next < last) {
        const Index i = Index(t_.i[next++]);
        mark_[i] = 1;
        stack_.push_back({i, t_.p[i]});
      } else {
        order_.push_back(j);
        stack_.pop_back();
      }
    }
  }
  struct frame {
    Index j;
    sparse_index next;
  };
  const upper_triangle& t_;
  std::vector<double> x_;
  std::vector<char> mark_;
  std::vector<Index> order_;
  std::vector<frame> stack_;
};

/// Unit gradients of the chosen, non-zero rows as the columns of A = J^T (compressed,
/// column-major, sorted), built straight from the input's storage with no transposed copy.
/// Zero rows go to rep.zero_rows and rep.dependencies; `kept` maps a column of A to its local
/// row, `norms` holds that row's 2-norm.
template <class Derived>
sparse_columns<double> unit_columns(const Derived& jac, const row_subset& rows,
                                    const licq_options& options, licq_report& rep,
                                    std::vector<Index>& kept, std::vector<double>& norms) {
  std::vector<double> all_norms;
  std::vector<sparse_index> count;
  sparse_row_norms(jac, all_norms, count);
  std::vector<sparse_index> column_of(all_norms.size(), -1);
  sparse_index nnz = 0;
  for (Index local = 0; local < rows.size; ++local) {
    const Index i = rows.global->empty() ? local : (*rows.global)[local];
    if (all_norms[i] <= options.zero_row_norm) {
      rep.zero_rows.push_back(rows.to_global(local));
      rep.dependencies.push_back({rows.to_global(local), {}, 0.0});
    } else {
      column_of[i] = sparse_index(kept.size());
      kept.push_back(local);
      norms.push_back(all_norms[i]);
      nnz += count[i];
    }
  }
  const Index k = Index(kept.size());
  sparse_columns<double> unit(jac.cols(), k);
  unit.resizeNonZeros(nnz);
  auto* up = unit.outerIndexPtr();
  auto* ui = unit.innerIndexPtr();
  auto* ux = unit.valuePtr();
  up[0] = 0;
  for (Index c = 0; c < k; ++c)
    up[c + 1] = up[c] + count[rows.global->empty() ? kept[c] : (*rows.global)[kept[c]]];
  std::vector<sparse_index> next(up, up + k);
  // Outer vectors in increasing order with sorted inner indices: each column of A comes out
  // sorted, as SPQR requires.
  Eigen::internal::evaluator<Derived> ev(jac);
  for (Index j = 0; j < jac.outerSize(); ++j)
    for (typename Eigen::internal::evaluator<Derived>::InnerIterator it(ev, j); it; ++it) {
      const sparse_index c = column_of[it.row()];
      if (c < 0) continue;
      const sparse_index at = next[c]++;
      ui[at] = sparse_index(it.col());
      ux[at] = double(it.value()) / norms[c];
    }
  return unit;
}

/// Duplicated, parallel and opposed pairs among the columns of `unit`: one side of every such
/// pair is dependent, so only pairs with a dead column are looked at; partners share a
/// variable, found through the columns of each variable of a dead column.
inline void find_sparse_pairs(const sparse_columns<double>& unit, const rank_decision<double>& d,
                              const std::vector<Index>& kept, const std::vector<double>& norms,
                              const row_subset& rows, double parallel_tol, licq_report& rep) {
  const Index k = unit.cols(), n = unit.rows(), r = d.rank;
  std::vector<char> dead_flag(static_cast<std::size_t>(k), 0);
  for (Index c = r; c < k; ++c) dead_flag[d.order[c]] = 1;
  std::vector<sparse_index> slot(static_cast<std::size_t>(n), -1);
  Index marked = 0;
  for (Index c = r; c < k; ++c)
    for (sparse_columns<double>::InnerIterator it(unit, d.order[c]); it; ++it)
      if (slot[it.index()] < 0) slot[it.index()] = sparse_index(marked++);
  std::vector<sparse_index> start(static_cast<std::size_t>(marked + 1), 0);
  const auto* ui = unit.innerIndexPtr();
  const auto* ux = unit.valuePtr();
  const auto* up = unit.outerIndexPtr();
  for (sparse_index q = 0; q < up[k]; ++q)
    if (slot[ui[q]] >= 0) ++start[slot[ui[q]] + 1];
  for (Index t = 0; t < marked; ++t) start[t + 1] += start[t];
  std::vector<sparse_index> fill(start.begin(), start.end() - 1);
  std::vector<sparse_index> member(static_cast<std::size_t>(start[marked]));
  std::vector<double> member_value(member.size());
  for (Index c = 0; c < k; ++c)
    for (sparse_index q = up[c]; q < up[c + 1]; ++q)
      if (const sparse_index sl = slot[ui[q]]; sl >= 0) {
        member[fill[sl]] = sparse_index(c);
        member_value[fill[sl]++] = ux[q];
      }
  std::vector<double> cosine(static_cast<std::size_t>(k), 0.0);
  std::vector<Index> partners;
  std::vector<char> seen(static_cast<std::size_t>(k), 0);
  for (Index c = r; c < k; ++c) {
    const Index a = d.order[c];
    for (sparse_columns<double>::InnerIterator it(unit, a); it; ++it)
      for (sparse_index q = start[slot[it.index()]]; q < start[slot[it.index()] + 1]; ++q) {
        const Index b = Index(member[q]);
        if (b == a || (dead_flag[b] && b < a)) continue;  // each dependent pair once
        if (!seen[b]) {
          seen[b] = 1;
          partners.push_back(b);
        }
        cosine[b] += it.value() * member_value[q];
      }
    for (Index b : partners) {
      if (std::abs(cosine[b]) >= 0.5) {
        const double sign = cosine[b] > 0 ? 1.0 : -1.0;
        record_pair<double>(rep, rows.to_global(kept[a]), rows.to_global(kept[b]), cosine[b],
                            sparse_chord(unit, a, b, sign), norms[a], norms[b], parallel_tol);
      }
      cosine[b] = 0;
      seen[b] = 0;
    }
    partners.clear();
  }
}

/// The LICQ analysis of the chosen rows of a sparse Jacobian (validated, canonical storage):
/// SPQR's rank-revealing QR of the unit J^T for float and double when built with it, else the
/// dense core within options.sparse_dense_limit.
template <class Scalar, class Derived>
sparse_outcome analyze_sparse_rows(const Derived& jac, const std::vector<Index>& global,
                                   const licq_options& options, licq_report& rep) {
  const row_subset rows(jac.rows(), global);
  const Index m = rows.size, n = jac.cols();
  const bool fits_dense = m == 0 || std::size_t(n) <= options.sparse_dense_limit / std::size_t(m);
#if defined(QUALIFY_WITH_SPQR)
  // SPQR factors in double; float data are decided in double against float's threshold.
  constexpr bool engine = std::is_same_v<Scalar, double> || std::is_same_v<Scalar, float>;
#else
  constexpr bool engine = false;
#endif
  if constexpr (!engine) {
    if (!fits_dense) return sparse_outcome::too_large;
    analyze_dense_copy<Scalar>(jac, rows, options, rep);
    return sparse_outcome::dense_core;
  } else {
#if defined(QUALIFY_WITH_SPQR)
    using std::abs;
    const double eps = double(std::numeric_limits<Scalar>::epsilon());
    const double band = options.undecided_band;
    const double tau = options.relative_threshold.value_or(double(std::max(m, n)) * eps);
    const double parallel_tol = options.parallel_tolerance.value_or(band * tau);
    rep.relative_threshold = rep.threshold = tau;

    std::vector<Index> kept;    // column of A -> local row
    std::vector<double> norms;  // of the kept rows
    const sparse_columns<double> unit = unit_columns(jac, rows, options, rep, kept, norms);
    const Index k = Index(kept.size());
    double largest_norm = 0, smallest_norm = std::numeric_limits<double>::infinity();
    for (double x : norms) {
      largest_norm = std::max(largest_norm, x);
      smallest_norm = std::min(smallest_norm, x);
    }
    rep.raw_threshold = tau * largest_norm;
    if (!rep.zero_rows.empty())
      add_finding(rep.findings, severity::error, "zero_gradient",
                  "gradient is zero: the row can never be independent", rep.zero_rows, rep.names);

    rank_decision<double> decision;
    decision.method = rank_method::sparse_qr;
    decision.clear = k == 0;
    if (k > 0) {
      const spqr_factor qr(unit, tau);
      const auto tri = qr.leading_triangle();
      if (!tri) {
        if (!fits_dense) return sparse_outcome::engine_failed;
        analyze_dense_copy<Scalar>(jac, rows, options, rep);
        return sparse_outcome::dense_check;
      }
      const Index r = qr.rank();
      decision.rank = r;
      decision.order.resize(std::size_t(k));
      for (Index c = 0; c < k; ++c) decision.order[c] = qr.order(c);

      // Kept side: sigma_min(R11) >= 1 / ||R11^{-1}||_2 >= 1 / sqrt(||X||_1 ||X||_inf), with
      // both 1-norms estimated (Higham 1988), capped by a power step from the vector that gave
      // the largest ||X v||_1.
      if (r > 0) {
        std::vector<double> image;
        const double n1 = inverse_one_norm_estimate(*tri, false, &image);
        const double ninf = inverse_one_norm_estimate(*tri, true);
        const double n2 = inverse_two_norm_estimate(*tri, image);
        decision.smallest_estimate = n2 > 0 ? 1 / n2 : 0.0;
        const double lower = n1 > 0 && ninf > 0 ? 1 / std::sqrt(n1 * ninf) : 0.0;
        decision.kept_lower =
            std::isfinite(lower) ? std::min(lower, decision.smallest_estimate) : 0.0;
      }

      // Dependent side: each dead column against the live ones, X = R11^{-1} R12, and its
      // residual formed from the unit gradients themselves. [A_live, A_dead - W] has rank r,
      // so sigma_{r+1} <= ||W||_F (Eckart-Young): the bound the failure rests on.
      const cholmod_sparse& rf = qr.r();
      const auto* rp = static_cast<const sparse_index*>(rf.p);
      const auto* ri = static_cast<const sparse_index*>(rf.i);
      const auto* rx = static_cast<const double*>(rf.x);
      sparse_back_substitution x(*tri);
      sparse_combination w(unit);
      std::vector<Index> pattern;
      double dropped_sq = 0;
      for (Index c = r; c < k; ++c) {
        pattern.clear();
        for (sparse_index q = rp[c]; q < rp[c + 1]; ++q)
          if (ri[q] < r && rx[q] != 0) {
            x[ri[q]] = rx[q];
            pattern.push_back(Index(ri[q]));
          }
        const std::vector<Index>& reached = x.solve(pattern);
        const Index dead = decision.order[c];
        w.add(dead, 1.0);
        for (Index t : reached)
          if (x[t] != 0) w.add(decision.order[t], -x[t]);
        const double full_residual = w.norm();
        dropped_sq += full_residual * full_residual;
        // Terms below the threshold are omitted from the explanation (as in the dense
        // path); its residual is that of the listed terms.
        bool omitted = false;
        row_dependence dep{rows.to_global(kept[dead]), {}, 0.0};
        for (Index t : reached) {
          if (x[t] == 0) continue;
          const Index base = decision.order[t];
          if (abs(x[t]) <= tau) {
            w.add(base, x[t]);
            omitted = true;
            continue;
          }
          dep.terms.push_back({rows.to_global(kept[base]), x[t] * (norms[dead] / norms[base])});
        }
        dep.residual = omitted ? w.norm() : full_residual;
        std::sort(dep.terms.begin(), dep.terms.end(), [](const auto& a, const auto& b) {
          return abs(a.coefficient) > abs(b.coefficient);
        });
        rep.dependencies.push_back(std::move(dep));
        x.clear();
        w.clear();
      }
      decision.dropped_upper = std::sqrt(dropped_sq);
      if (r < k) decision.smallest_estimate = decision.dropped_upper;
      decision.clear =
          (r == 0 || decision.kept_lower >= band * tau) && decision.dropped_upper <= tau;
    }

    // A close call goes to the dense core when the matrix is small enough for it.
    if (!decision.clear && fits_dense) {
      analyze_dense_copy<Scalar>(jac, rows, options, rep);
      return sparse_outcome::dense_check;
    }

    const Index r = decision.rank;
    rep.method = decision.method;
    rep.rank = r;
    rep.largest_singular_value = sparse_two_norm_estimate<double>(unit, 2);  // a figure only
    rep.smallest_singular_value =
        rep.zero_rows.empty() && k <= n ? decision.smallest_estimate : 0.0;
    rep.condition_number = rep.smallest_singular_value > 0
                               ? rep.largest_singular_value / rep.smallest_singular_value
                               : std::numeric_limits<double>::infinity();
    set_verdict<double>(rep, k, n, decision, tau, band);
    for (Index c = 0; c < r; ++c)
      rep.independent_rows.push_back(rows.to_global(kept[decision.order[c]]));
    if (r < k) {
      find_sparse_pairs(unit, decision, kept, norms, rows, parallel_tol, rep);
      // The caller's rows back to columns of A, for the explanations' rewriting.
      std::vector<sparse_index> column_of_local(std::size_t(m), -1);
      for (Index c = 0; c < k; ++c) column_of_local[kept[c]] = sparse_index(c);
      const auto column = [&](Index row) { return Index(column_of_local[rows.local_of[row]]); };
      sparse_combination w(unit);
      orient_dependencies(
          rep, tau, band,
          [&](Index row, const std::vector<row_dependence::term>& terms) {
            const Index own = column(row);
            w.add(own, 1.0);
            for (const auto& t : terms)
              w.add(column(t.row), -t.coefficient * (norms[column(t.row)] / norms[own]));
            const double residual = w.norm();
            w.clear();
            return residual;
          },
          [&](Index row) { return norms[column(row)]; });
    }
    sort_rows(rep);

    // The same decision on the gradients as given (see analyze_rows): settled by the bounds
    // unless rows are badly scaled, then SPQR's rank of the scaled columns.
    if (k == 0) {
      rep.raw_rank = 0;
    } else if (decision.clear && smallest_norm * decision.kept_lower >= band * tau * largest_norm) {
      rep.raw_rank = r;
    } else {
      sparse_columns<double> scaled = unit;
      for (Index c = 0; c < k; ++c) scaled.col(c) *= norms[c] / largest_norm;
      const spqr_factor raw(scaled, tau);
      rep.raw_rank = raw.ok() ? raw.rank() : r;
    }
    return sparse_outcome::sparse_engine;
#endif
  }
}

/// The report both sparse overloads start from: licq_start's checks, then the storage
/// (offsets, indices in range) and the entries (finite). `canonical` says whether the storage
/// can be read as it is or needs summed_copy first.
template <class Derived>
licq_report validated_sparse_licq(const Eigen::SparseMatrixBase<Derived>& jacobian,
                                  const licq_options& options, std::vector<std::string> labels,
                                  bool& canonical) {
  check_scalar<Derived>();
  licq_report rep = licq_start(jacobian.rows(), jacobian.cols(), options, std::move(labels));
  if (rep.result == verdict::invalid_input) return rep;
  const sparse_storage storage = scan_sparse_storage(jacobian, "the sparse Jacobian");
  if (storage.error) return invalid_licq(rep, "invalid_sparse_structure", *storage.error);
  canonical = storage.canonical;
  if (auto bad = sparse_non_finite_message(jacobian, "Jacobian"))
    return invalid_licq(rep, "non_finite_entry", *bad);
  // Summed entries and row norms may overflow although every stored entry is finite (norms
  // are summed in double, which would misjudge long double rows: their range is wider). A row's
  // norm is at most its largest entry times the stored entries, so the usual Jacobian skips the
  // norms pass that the analysis makes again.
  using Scalar = typename Derived::Scalar;
  if constexpr (sizeof(Scalar) <= sizeof(double)) {
    double largest = 0, stored = 0;
    Eigen::internal::evaluator<Derived> ev(jacobian.derived());
    for (Index j = 0; j < jacobian.outerSize(); ++j)
      for (typename Eigen::internal::evaluator<Derived>::InnerIterator it(ev, j); it; ++it) {
        largest = std::max(largest, std::abs(double(it.value())));
        ++stored;
      }
    if (largest * stored > double(std::numeric_limits<Scalar>::max())) {
      std::vector<double> norms;
      std::vector<sparse_index> counts;
      if (canonical)
        sparse_row_norms(jacobian.derived(), norms, counts);
      else
        sparse_row_norms(summed_copy<Scalar>(jacobian), norms, counts);
      for (std::size_t i = 0; i < norms.size(); ++i)
        if (!(norms[i] <= double(std::numeric_limits<Scalar>::max())))
          return invalid_licq(rep, "row_norm_overflow",
                              overflowing_row_message(rep.names(Index(i))));
    }
  }
  return rep;
}

/// Runs the analysis on the chosen rows (a summed copy first when the storage is not
/// canonical), then the findings and the message, and says which path decided.
template <class Derived>
void sparse_licq_run(const Eigen::SparseMatrixBase<Derived>& jacobian, bool canonical,
                     const std::vector<Index>& global, const licq_options& options,
                     licq_report& rep) {
  using Scalar = typename Derived::Scalar;
  const sparse_outcome outcome =
      canonical ? analyze_sparse_rows<Scalar>(jacobian.derived(), global, options, rep)
                : analyze_sparse_rows<Scalar>(summed_copy<Scalar>(jacobian), global, options, rep);
  const std::string size = std::to_string(rep.rows) + " x " + std::to_string(rep.cols);
  if (outcome == sparse_outcome::too_large || outcome == sparse_outcome::engine_failed) {
    rep.result = verdict::undecided;
    rep.method = rank_method::none;
    const std::string why =
        outcome == sparse_outcome::too_large
            ? "the " + size + " sparse Jacobian exceeds sparse_dense_limit = " +
                  std::to_string(options.sparse_dense_limit) + " entries for the dense core, " +
                  (sparse_engine_available
                       ? "and SPQR takes float and double only"
                       : "and qualify was built without SPQR (QUALIFY_WITH_SPQR)")
            : "SPQR could not factor the " + size +
                  " sparse Jacobian, which exceeds sparse_dense_limit = " +
                  std::to_string(options.sparse_dense_limit) + " entries for the dense core";
    add_finding(rep.findings, severity::warning, "no_sparse_engine", why, {}, rep.names);
    rep.message = "LICQ undecided: " + why;
    return;
  }
  describe(rep, options, double(std::numeric_limits<Scalar>::epsilon()));
  if (outcome == sparse_outcome::dense_core)
    add_finding(rep.findings, severity::info, "dense_fallback",
                "the " + size + " sparse Jacobian was checked by the dense core" +
                    (sparse_engine_available ? " (SPQR takes float and double only)"
                                             : " (qualify was built without SPQR)"),
                {}, rep.names);
  else if (outcome == sparse_outcome::dense_check)
    add_finding(rep.findings, severity::info, "dense_check",
                "the sparse factorisation left the rank decision close; the dense core decided", {},
                rep.names);
}

}  // namespace detail

/// LICQ on a sparse Jacobian of the active constraints (rows = gradients; Eigen::SparseMatrix
/// row- or column-major, a Map of a host's CSR/CSC arrays, or a sparse expression; repeated
/// entries of a Map are summed). Same report, verdicts, findings and thresholds as the dense
/// check. Built with SPQR (QUALIFY_WITH_SPQR), float and double Jacobians are decided by SPQR's
/// rank-revealing sparse QR of the row-normalised J^T with a fill-reducing ordering (method
/// `sparse_qr`), confirmed by a condition estimate of the kept triangle and the residuals of
/// the dependent rows; a close call, or any call without SPQR, goes to the dense core when
/// rows * cols <= options.sparse_dense_limit; otherwise the verdict is undecided and the
/// finding `no_sparse_engine` says why.
template <class Derived>
licq_report check_licq(const Eigen::SparseMatrixBase<Derived>& jacobian,
                       const licq_options& options = {}, std::vector<std::string> labels = {}) {
  bool canonical = true;
  licq_report rep = detail::validated_sparse_licq(jacobian, options, std::move(labels), canonical);
  if (rep.result == verdict::invalid_input) return rep;
  detail::sparse_licq_run(jacobian, canonical, {}, options, rep);
  return rep;
}

/// LICQ at a point from the whole sparse constraint Jacobian: rows are picked as active from
/// their `values` and `types` (see activity_options), then checked as above. Rows in the
/// report keep the numbering of `jacobian`; the picked set is in `report.active`.
template <class DerivedJ, class DerivedV>
licq_report check_licq(const Eigen::SparseMatrixBase<DerivedJ>& jacobian,
                       const Eigen::MatrixBase<DerivedV>& values,
                       const std::vector<constraint_type>& types, const licq_options& options = {},
                       std::vector<std::string> labels = {}) {
  using Scalar = typename DerivedJ::Scalar;
  bool canonical = true;
  licq_report rep = detail::validated_sparse_licq(jacobian, options, std::move(labels), canonical);
  if (rep.result == verdict::invalid_input) return rep;
  if (auto bad = detail::point_input_problem(rep, values, types)) return *bad;

  std::vector<double> norms;
  std::vector<detail::sparse_index> counts;
  if (canonical)
    detail::sparse_row_norms(jacobian.derived(), norms, counts);
  else
    detail::sparse_row_norms(detail::summed_copy<Scalar>(jacobian), norms, counts);
  rep.active = detail::select_active_by_norms(norms, values, types, options.activity);
  rep.rows = Index(rep.active->active.size());
  const std::vector<Index> active = rep.active->active;
  if (active.empty())  // no active row: LICQ holds vacuously (an empty list means all rows)
    detail::sparse_licq_run(Eigen::SparseMatrix<Scalar>(0, jacobian.cols()), true, {}, options,
                            rep);
  else
    detail::sparse_licq_run(jacobian, canonical, active, options, rep);
  return rep;
}

}  // namespace qualify
