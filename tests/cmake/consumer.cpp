// qualify: the program both consumer projects build; it prints verdicts read through the package.
// SPDX-License-Identifier: MIT
#include <cstdio>
#include <qualify/matrix_market.hpp>
#include <qualify/report.hpp>
#include <string>

int main() {
  // report.hpp alone: a shared type and its stable string.
  std::string line(qualify::to_string(qualify::verdict::holds));
  // matrix_market.hpp pulls in Eigen and fmt: their targets must come through the package.
  qualify::matrix_market_data data = qualify::parse_matrix_market(
      "%%MatrixMarket matrix coordinate real general\n2 2 1\n2 1 -3.5\n");
  auto dense = qualify::to_dense(data);
  line += dense.ok && dense.matrix(1, 0) == -3.5 ? " read" : " unread";
  std::printf("consumer: %s\n", line.c_str());
  return dense.ok ? 0 : 1;
}
