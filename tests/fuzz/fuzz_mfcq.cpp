// Fuzz target: check_mfcq on fuzzed inequality and equality Jacobians; its verdict, direction
// and certificate checked on the data.
// SPDX-License-Identifier: MIT
#include <qualify/mfcq.hpp>

#include <cmath>

#include "fuzz_checks.hpp"
#include "fuzz_input.hpp"

using namespace qualify_fuzz;
using qualify::verdict;
using ld = long double;

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  byte_source in(data, size);
  const Index n = in.size(8), ma = in.size(8), me = in.size(5);
  const Index ne = in.byte() % 16 == 0 ? n + 1 : n;  // now and then the sizes disagree
  const Eigen::MatrixXd a = in.matrix(ma, n), e = in.matrix(me, ne);

  // Expected invalid_input, by the documented rules: blocks with rows (or columns) must agree
  // on the columns, some column must exist when there are rows, every entry finite.
  const bool mismatch = (ma > 0 || n > 0) && (me > 0 || ne > 0) && n != ne;
  const Index cols = ma > 0 || me == 0 ? n : ne;
  const norm_overflow big_a = row_norm_overflow(a), big_e = row_norm_overflow(e);
  const bool bad = mismatch || (ma + me > 0 && cols == 0) || !a.allFinite() || !e.allFinite() ||
                   big_a.overflows || big_e.overflows;
  const qualify::mfcq_report rep = qualify::check_mfcq(a, e);
  QUALIFY_FUZZ_ASSERT(big_a.borderline || big_e.borderline ||
                      (rep.result == verdict::invalid_input) == bad);
  if (rep.result == verdict::invalid_input) return 0;
  QUALIFY_FUZZ_ASSERT(rep.result == verdict::holds || rep.result == verdict::fails ||
                      rep.result == verdict::undecided);
  if (rep.equality_licq) assert_licq_report(e, *rep.equality_licq);
  if (rep.licq) {  // a block without rows may have any width
    Eigen::MatrixXd stacked(ma + me, cols);
    if (ma > 0) stacked.topRows(ma) = a;
    if (me > 0) stacked.bottomRows(me) = e;
    assert_licq_report(stacked, *rep.licq);
  }

  const double tau = rep.relative_threshold;
  const double eq_tau = double(std::max(me, cols)) * std::numeric_limits<double>::epsilon();
  const Eigen::VectorXd e_sv = row_singular_values(e);
  auto norm = [](const Eigen::MatrixXd& m, Index i) { return m.row(i).cast<ld>().norm(); };

  if (rep.result == verdict::holds) {
    // E has full row rank, and the direction decreases every inequality and keeps the
    // equalities, on the data as given.
    if (me > 0) QUALIFY_FUZZ_ASSERT(me <= cols && e_sv(me - 1) * svd_margin >= 10 * eq_tau);
    if (ma > 0) {
      const Eigen::VectorXd& d = rep.direction;
      QUALIFY_FUZZ_ASSERT(d.size() == cols && d.allFinite());
      QUALIFY_FUZZ_ASSERT(d.lpNorm<Eigen::Infinity>() <= 1 + 1e-12);
      for (Index i = 0; i < ma; ++i)
        QUALIFY_FUZZ_ASSERT(a.row(i).cast<ld>().dot(d.cast<ld>()) / norm(a, i) <= -ld(tau));
      for (Index j = 0; j < me; ++j)
        if (norm(e, j) > 0)
          QUALIFY_FUZZ_ASSERT(std::abs(e.row(j).cast<ld>().dot(d.cast<ld>())) / norm(e, j) <=
                              ld(svd_margin * tau));
    }
    return 0;
  }
  if (rep.result != verdict::fails) return 0;

  // A failure comes with a certificate that checks out on the data.
  const qualify::mfcq_certificate& cert = rep.certificate;
  QUALIFY_FUZZ_ASSERT(cert.kind != qualify::mfcq_certificate_kind::none);
  QUALIFY_FUZZ_ASSERT(cert.lambda.size() == ma && cert.mu.size() == me);
  QUALIFY_FUZZ_ASSERT(cert.lambda.allFinite() && cert.mu.allFinite());
  if (cert.kind == qualify::mfcq_certificate_kind::equality_dependence) {
    QUALIFY_FUZZ_ASSERT(me > cols || e_sv(me - 1) <= svd_margin * eq_tau);
    QUALIFY_FUZZ_ASSERT(cert.mu.lpNorm<1>() > 0);
    return 0;
  }
  QUALIFY_FUZZ_ASSERT(cert.lambda.minCoeff() >= 0);
  // Multipliers on rows whose norms differ beyond double's range cannot all be written in
  // doubles (found by this target: rows 7.9e-323 and -15 need lambda_0 / lambda_1 = 1.9e323):
  // the bound is checked only when the norms of the nonzero rows stay within 1e290 of each
  // other.
  ld smallest = std::numeric_limits<ld>::infinity(), largest = 0;
  for (const Eigen::MatrixXd* block : {&a, &e})
    for (Index i = 0; i < block->rows(); ++i)
      if (const ld v = norm(*block, i); v > 0) {
        smallest = std::min(smallest, v);
        largest = std::max(largest, v);
      }
  if (largest / smallest > 1e290L) return 0;
  QUALIFY_FUZZ_ASSERT(cert.lambda.sum() > 0);
  // A zero gradient in the support proves it alone; otherwise the sum of the unit gradients,
  // weighted by lambda_i ||a_i|| summing to 1, bounds t* by its 1-norm.
  for (Index i = 0; i < ma; ++i)
    if (cert.lambda(i) > 0 && norm(a, i) == 0) return 0;
  Eigen::Matrix<ld, Eigen::Dynamic, 1> r = Eigen::Matrix<ld, Eigen::Dynamic, 1>::Zero(cols);
  ld weight = 0, mu_size = 0;
  for (Index i = 0; i < ma; ++i) {
    const ld w = ld(cert.lambda(i)) * norm(a, i);
    weight += w;
    if (w > 0) r += w * a.row(i).cast<ld>().transpose() / norm(a, i);
  }
  for (Index j = 0; j < me; ++j)
    if (norm(e, j) > 0) {
      const ld w = ld(cert.mu(j)) * norm(e, j);
      mu_size += std::abs(w);
      r += w * e.row(j).cast<ld>().transpose() / norm(e, j);
    }
  QUALIFY_FUZZ_ASSERT(weight > 0);
  const ld bound = r.lpNorm<1>() / weight;
  QUALIFY_FUZZ_ASSERT(bound <= ld(svd_margin * tau) + 1e-12L * ld(cols) * (1 + mu_size / weight));
  return 0;
}
