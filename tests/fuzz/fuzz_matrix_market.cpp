// Fuzz target: the Matrix Market reader (in memory and from a stream), assembly, and the writer's
// round trip.
// SPDX-License-Identifier: MIT
#include <qualify/matrix_market.hpp>

#include <cmath>
#include <sstream>
#include <string>
#include <string_view>

#include "fuzz_input.hpp"

using namespace qualify_fuzz;

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  qualify::matrix_market_options options;
  options.max_dense_entries = std::size_t{1} << 16;  // keep a fuzzed size line from allocating
  const qualify::matrix_market_data read = qualify::parse_matrix_market(text, options);

  // The stream reader cuts the same bytes the same way.
  std::istringstream stream{std::string(text)};
  const qualify::matrix_market_data streamed = qualify::read_matrix_market(stream, options);
  QUALIFY_FUZZ_ASSERT(streamed.ok == read.ok && streamed.error == read.error &&
                      streamed.message == read.message && streamed.line == read.line);
  QUALIFY_FUZZ_ASSERT(streamed.entries.size() == read.entries.size());

  if (!read.ok) {
    QUALIFY_FUZZ_ASSERT(read.error == qualify::read_error::malformed && !read.message.empty());
    QUALIFY_FUZZ_ASSERT(read.line.has_value() && *read.line >= 1);
    return 0;
  }
  // Everything announced arrived, inside the matrix, finite.
  QUALIFY_FUZZ_ASSERT(read.rows >= 0 && read.cols >= 0);
  QUALIFY_FUZZ_ASSERT(Index(read.entries.size()) == read.announced_entries);
  for (const auto& e : read.entries) {
    QUALIFY_FUZZ_ASSERT(e.row >= 0 && e.row < read.rows && e.col >= 0 && e.col < read.cols);
    QUALIFY_FUZZ_ASSERT(std::isfinite(e.value));
  }

  const auto sparse = qualify::to_sparse(read);
  const auto dense = qualify::to_dense(read, options);
  QUALIFY_FUZZ_ASSERT(sparse.ok);  // at most 2^31 - 1 rows: sizes come from the bytes given
  if (!dense.ok) return 0;         // beyond max_dense_entries
  QUALIFY_FUZZ_ASSERT(dense.matrix.rows() == read.rows && dense.matrix.cols() == read.cols);
  // Both assemblies sum duplicates; the order of the sums may differ.
  const Eigen::MatrixXd from_sparse = Eigen::MatrixXd(sparse.matrix);
  double scale = 0;
  for (const auto& e : read.entries) scale += std::abs(e.value);
  if (std::isfinite(scale) && dense.matrix.allFinite())
    QUALIFY_FUZZ_ASSERT((from_sparse - dense.matrix).cwiseAbs().maxCoeff() <= 1e-12 * scale);

  // What the writer writes reads back to the same matrix, exactly.
  if (!dense.matrix.allFinite()) return 0;  // summed duplicates overflowed: the writer says inf
  const std::string written = qualify::to_matrix_market(dense.matrix);
  const auto again = qualify::to_dense(qualify::parse_matrix_market(written, options), options);
  QUALIFY_FUZZ_ASSERT(again.ok);
  QUALIFY_FUZZ_ASSERT(again.matrix.rows() == dense.matrix.rows() &&
                      again.matrix.cols() == dense.matrix.cols());
  QUALIFY_FUZZ_ASSERT((again.matrix.array() == dense.matrix.array()).all());
  return 0;
}
