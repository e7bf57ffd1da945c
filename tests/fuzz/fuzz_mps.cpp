// Fuzz target: the MPS reader (automatic, free and fixed fields), and Slater's condition on the
// small models it reads.
// SPDX-License-Identifier: MIT
#include <qualify/mps.hpp>
#include <qualify/slater.hpp>

#include <cmath>
#include <sstream>
#include <string>

#include "fuzz_input.hpp"

using namespace qualify_fuzz;

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size == 0) return 0;
  // The first byte picks the field layout; the rest is the file.
  qualify::mps_options options;
  options.format = static_cast<qualify::mps_format>(data[0] % 3);
  std::istringstream in(std::string(reinterpret_cast<const char*>(data) + 1, size - 1));
  const qualify::mps_model model = qualify::read_mps(in, options);
  if (!model.ok()) {
    QUALIFY_FUZZ_ASSERT(model.error_line >= 1);
    QUALIFY_FUZZ_ASSERT(model.error.rfind("line " + std::to_string(model.error_line) + ": ", 0) == 0);
    return 0;
  }
  QUALIFY_FUZZ_ASSERT(model.error_line == 0);

  // Sizes agree; coefficients are finite; bounds are never NaN and never crossed.
  const Index m = Index(model.row_names.size()), n = Index(model.col_names.size());
  QUALIFY_FUZZ_ASSERT(model.matrix.rows() == m && model.matrix.cols() == n);
  QUALIFY_FUZZ_ASSERT(model.objective.size() == n && model.col_lower.size() == n &&
                      model.col_upper.size() == n && Index(model.col_integer.size()) == n);
  QUALIFY_FUZZ_ASSERT(model.row_lower.size() == m && model.row_upper.size() == m);
  QUALIFY_FUZZ_ASSERT(model.objective.allFinite() && std::isfinite(model.objective_constant));
  for (Index j = 0; j < model.matrix.outerSize(); ++j)
    for (Eigen::SparseMatrix<double>::InnerIterator it(model.matrix, j); it; ++it)
      QUALIFY_FUZZ_ASSERT(std::isfinite(it.value()));
  auto ordered = [](const Eigen::VectorXd& lo, const Eigen::VectorXd& up) {
    for (Index i = 0; i < lo.size(); ++i)
      if (std::isnan(lo(i)) || std::isnan(up(i)) || lo(i) > up(i) ||
          lo(i) == std::numeric_limits<double>::infinity() ||
          up(i) == -std::numeric_limits<double>::infinity())
        return false;
    return true;
  };
  QUALIFY_FUZZ_ASSERT(ordered(model.col_lower, model.col_upper));
  QUALIFY_FUZZ_ASSERT(ordered(model.row_lower, model.row_upper));

  // A model read successfully is valid input to Slater's check (kept small: LPs are slow
  // under the sanitizers).
  if (m > 12 || n > 12) return 0;
  const qualify::affine_slater_report rep = qualify::check_affine_slater(
      model.matrix, model.row_lower, model.row_upper, model.col_lower, model.col_upper);
  QUALIFY_FUZZ_ASSERT(rep.result != qualify::verdict::invalid_input);
  return 0;
}
