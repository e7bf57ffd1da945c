// qualify fuzzing: invariants of a LICQ report, shared by the LICQ and MFCQ targets.
// SPDX-License-Identifier: MIT
#pragma once

#include <qualify/licq.hpp>

#include <algorithm>
#include <cmath>
#include <vector>

#include "fuzz_input.hpp"

namespace qualify_fuzz {

/// Factor between a verdict's threshold and what the independent SVD must show: the library
/// decides on bounds with the band (10) on one side; the SVD here has its own rounding.
constexpr double svd_margin = 10;

/// ||g_row - sum c_t g_t||_2 / ||g_row||_2 in long double (no overflow at 1e300 * c), and the
/// size of the terms summed, relative to ||g_row||, for the rounding allowance.
struct recomputed_residual {
  long double residual = 0, size = 0;
};

inline recomputed_residual dependence_residual(const Eigen::MatrixXd& jac, Index row,
                                               const std::vector<qualify::row_dependence::term>& terms) {
  using ld = long double;
  const Index n = jac.cols();
  Eigen::Matrix<ld, Eigen::Dynamic, 1> w = jac.row(row).transpose().cast<ld>();
  ld size = 0;
  for (const auto& t : terms) {
    const Eigen::Matrix<ld, Eigen::Dynamic, 1> g = jac.row(t.row).transpose().cast<ld>();
    w -= ld(t.coefficient) * g;
    size += std::abs(ld(t.coefficient)) * g.norm();
  }
  const ld norm = jac.row(row).cast<ld>().norm();
  recomputed_residual out;
  out.residual = n > 0 && norm > 0 ? w.norm() / norm : 0;
  out.size = norm > 0 ? size / norm : 0;
  return out;
}

/// Every coefficient is a finite normal double (not flushed to zero or a denormal).
inline bool representable(const std::vector<qualify::row_dependence::term>& terms) {
  for (const auto& t : terms)
    if (!(std::abs(t.coefficient) >= std::numeric_limits<double>::min() &&
          std::isfinite(t.coefficient)))
      return false;
  return true;
}

/// Whether row `row` or a term's row has a subnormal entry: such an entry x holds only
/// log2(|x| / denorm_min) bits, so the unit rows the library works on, and the residuals it
/// reports, are as coarse as that (found by fuzz_licq: rows (15d, 12d) with d = denorm_min
/// have the norm 19.2d, rounded to 19d), beyond any fixed tolerance.
inline bool touches_subnormal(const Eigen::MatrixXd& jac, Index row,
                              const std::vector<qualify::row_dependence::term>& terms) {
  auto subnormal = [&](Index r) {
    for (Index j = 0; j < jac.cols(); ++j)
      if (std::fpclassify(jac(r, j)) == FP_SUBNORMAL) return true;
    return false;
  };
  if (subnormal(row)) return true;
  for (const auto& t : terms)
    if (subnormal(t.row)) return true;
  return false;
}

/// Invariants of a valid LICQ report on `jac` (all rows checked; or the rows `active` of it
/// when the report picked them from values).
inline void assert_licq_report(const Eigen::MatrixXd& jac, const qualify::licq_report& rep,
                               const std::vector<Index>* active = nullptr) {
  using qualify::verdict;
  QUALIFY_FUZZ_ASSERT(rep.result == verdict::holds || rep.result == verdict::fails ||
                      rep.result == verdict::undecided);
  const Eigen::MatrixXd checked = active ? Eigen::MatrixXd(jac(*active, Eigen::all)) : jac;
  const Index m = checked.rows(), n = checked.cols();
  QUALIFY_FUZZ_ASSERT(rep.rows == m && rep.cols == n);
  QUALIFY_FUZZ_ASSERT(rep.rank >= 0 && rep.rank <= std::min(m, n));
  QUALIFY_FUZZ_ASSERT(Index(rep.independent_rows.size()) == rep.rank);

  // The verdict against an independent SVD of the unit rows, tau = max(m, n) eps.
  const double tau = double(std::max(m, n)) * std::numeric_limits<double>::epsilon();
  QUALIFY_FUZZ_ASSERT(rep.threshold == tau);
  const Eigen::VectorXd sv = row_singular_values(checked);
  const double smallest = m > 0 ? sv(m - 1) : 1.0;
  if (rep.result == verdict::holds) {
    QUALIFY_FUZZ_ASSERT(m <= n);
    QUALIFY_FUZZ_ASSERT(smallest * svd_margin >= 10 * tau);
    QUALIFY_FUZZ_ASSERT(rep.rank == m);
  }
  if (rep.result == verdict::fails) QUALIFY_FUZZ_ASSERT(smallest <= svd_margin * tau);
  if (rep.result != verdict::undecided) {
    QUALIFY_FUZZ_ASSERT(count_above(sv, svd_margin * 10 * tau) <= rep.rank);
    QUALIFY_FUZZ_ASSERT(rep.rank <= count_above(sv, tau / svd_margin));
  }

  // Rows named by the report exist; zero rows are exactly the rows without a nonzero entry.
  auto global = [&](Index local) { return active ? (*active)[std::size_t(local)] : local; };
  std::vector<Index> zero;
  for (Index i = 0; i < m; ++i)
    if ((checked.row(i).array() == 0).all()) zero.push_back(global(i));
  std::vector<Index> reported = rep.zero_rows;
  std::sort(reported.begin(), reported.end());
  QUALIFY_FUZZ_ASSERT(reported == zero);
  auto in_range = [&](Index r) { return r >= 0 && r < jac.rows(); };
  for (Index r : rep.independent_rows) QUALIFY_FUZZ_ASSERT(in_range(r));

  // Every dependence's residual is what it says (recomputed on the rows as given), and its
  // figures are finite.
  for (const auto& dep : rep.dependencies) {
    QUALIFY_FUZZ_ASSERT(in_range(dep.row));
    QUALIFY_FUZZ_ASSERT(std::isfinite(dep.residual) && dep.residual >= 0);
    for (const auto& t : dep.terms) {
      QUALIFY_FUZZ_ASSERT(in_range(t.row) && t.row != dep.row);
      // Infinite only when the rows' norms differ beyond double's range (found by this
      // target: 1e-300 and 1e300 give "row 1 = inf*row 0").
      const long double ratio = jac.row(dep.row).cast<long double>().norm() /
                                jac.row(t.row).cast<long double>().norm();
      QUALIFY_FUZZ_ASSERT(std::isfinite(t.coefficient) || ratio > 1e250L);
    }
    // The residual is computed on unit rows; a coefficient between rows whose norms differ
    // beyond double's range underflows when scaled back to the rows as given (found by this
    // target: 7 and 4.9e-324 give "row 1 = 0*row 0, residual 0"), so only representable
    // coefficients are compared, and rows without subnormal entries.
    if (!representable(dep.terms) || touches_subnormal(jac, dep.row, dep.terms)) continue;
    const recomputed_residual again = dependence_residual(jac, dep.row, dep.terms);
    QUALIFY_FUZZ_ASSERT(std::abs(again.residual - dep.residual) <= 1e-7L * (1 + again.size));
  }
  QUALIFY_FUZZ_ASSERT(Index(rep.dependencies.size()) == m - rep.rank);

  // Duplicate, parallel and opposed pairs are what they say: g_second ~ ratio g_first.
  for (const auto* list : {&rep.duplicate_rows, &rep.parallel_rows, &rep.opposed_rows})
    for (const auto& pr : *list) {
      QUALIFY_FUZZ_ASSERT(in_range(pr.first) && in_range(pr.second) && !std::isnan(pr.ratio));
      const qualify::row_dependence::term t{pr.first, pr.ratio};
      if (!representable({t})) continue;
      const recomputed_residual again = dependence_residual(jac, pr.second, {t});
      QUALIFY_FUZZ_ASSERT(again.residual <= 1e-6L * (1 + again.size));
    }
}

}  // namespace qualify_fuzz
