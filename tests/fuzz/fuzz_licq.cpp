// Fuzz target: check_licq on fuzzed Jacobians (dense, dense at a point, sparse).
// SPDX-License-Identifier: MIT
#include <qualify/licq.hpp>
#include <qualify/sparse_licq.hpp>

#include <Eigen/SparseCore>
#include <vector>

#include "fuzz_checks.hpp"
#include "fuzz_input.hpp"

using namespace qualify_fuzz;
using qualify::verdict;

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  byte_source in(data, size);
  const int path = in.byte() % 3;  // 0 dense, 1 dense at a point, 2 sparse
  const Index rows = in.size(10), cols = in.size(10);
  const Eigen::MatrixXd jac = in.matrix(rows, cols);
  const norm_overflow big = row_norm_overflow(jac);
  bool bad = cols == 0 || !jac.allFinite() || big.overflows;

  if (path == 1) {
    const Eigen::VectorXd values = in.vector(rows);
    std::vector<qualify::constraint_type> types;
    for (Index i = 0; i < rows; ++i)
      types.push_back(in.flag() ? qualify::constraint_type::equality
                                : qualify::constraint_type::inequality);
    bad = bad || !values.allFinite();
    const qualify::licq_report rep = qualify::check_licq(jac, values, types);
    QUALIFY_FUZZ_ASSERT(big.borderline || (rep.result == verdict::invalid_input) == bad);
    if (rep.result == verdict::invalid_input) return 0;
    QUALIFY_FUZZ_ASSERT(rep.active.has_value());
    // Equalities are always active, inequalities are active when their value is near zero
    // or positive: a violated row is active.
    for (Index i = 0; i < rows; ++i) {
      const bool listed = std::find(rep.active->active.begin(), rep.active->active.end(), i) !=
                          rep.active->active.end();
      if (types[std::size_t(i)] == qualify::constraint_type::equality || values(i) >= 0)
        QUALIFY_FUZZ_ASSERT(listed);
    }
    assert_licq_report(jac, rep, &rep.active->active);
    return 0;
  }

  const qualify::licq_report rep =
      path == 2 ? qualify::check_licq(Eigen::SparseMatrix<double>(jac.sparseView()))
                : qualify::check_licq(jac);
  QUALIFY_FUZZ_ASSERT(big.borderline || (rep.result == verdict::invalid_input) == bad);
  if (rep.result != verdict::invalid_input) assert_licq_report(jac, rep);
  return 0;
}
