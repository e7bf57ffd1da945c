// qualify: the program both consumer projects build; it prints verdicts read through the package.
// SPDX-License-Identifier: MIT
#include <cstdio>
#include <qualify/matrix_market.hpp>
#include <qualify/report.hpp>
#include <qualify/sparse_licq.hpp>
#include <string>

int main() {
  // report.hpp alone: a shared type and its stable string.
  std::string line(qualify::to_string(qualify::verdict::holds));
  // matrix_market.hpp pulls in Eigen and fmt: their targets must come through the package.
  qualify::matrix_market_data data = qualify::parse_matrix_market(
      "%%MatrixMarket matrix coordinate real general\n2 2 1\n2 1 -3.5\n");
  auto dense = qualify::to_dense(data);
  line += dense.ok && dense.matrix(1, 0) == -3.5 ? " read" : " unread";
  // sparse_licq.hpp: with SPQR, its libraries must come through the package too.
  auto sparse = qualify::to_sparse(data);
  sparse.matrix.coeffRef(0, 1) = 1;
  const bool sparse_ok = qualify::check_licq(sparse.matrix).result == qualify::verdict::holds;
  if (!sparse_ok) line += " (sparse check failed)";
  std::printf("consumer: %s\n", line.c_str());
  return dense.ok && sparse_ok ? 0 : 1;
}
