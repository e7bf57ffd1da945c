// qualify: times the Matrix Market reader on a 1e6-entry file against an iostream reader.
// SPDX-License-Identifier: MIT
//
// Usage: matrix_market_bench [entries]   (default 1000000). The file is written to the system's
// temporary directory and read back with a warm page cache; each figure is the best of 5 runs.
#include <sys/resource.h>

#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <qualify/matrix_market.hpp>
#include <random>
#include <string>

namespace {

template <class F>
double best_seconds(int runs, F&& run) {
  double best = 1e300;
  for (int r = 0; r < runs; ++r) {
    auto start = std::chrono::steady_clock::now();
    run();
    std::chrono::duration<double> took = std::chrono::steady_clock::now() - start;
    best = std::min(best, took.count());
  }
  return best;
}

// The peer: the reader most code bases start with, one `>>` per token.
double iostream_sum(const std::filesystem::path& path, long& entries) {
  std::ifstream in(path);
  std::string line;
  while (std::getline(in, line) && !line.empty() && line[0] == '%') {
  }
  long rows = 0, cols = 0, count = 0;
  std::sscanf(line.c_str(), "%ld %ld %ld", &rows, &cols, &count);
  double sum = 0;
  long i = 0, j = 0;
  double v = 0;
  entries = 0;
  while (in >> i >> j >> v) {
    sum += v + static_cast<double>(i + j);
    ++entries;
  }
  return sum;
}

// The floor: reading the bytes and nothing else.
std::size_t raw_bytes(const std::filesystem::path& path) {
  std::ifstream in(path, std::ios::binary);
  std::vector<char> buffer(std::size_t{1} << 20);
  std::size_t total = 0;
  while (in.read(buffer.data(), static_cast<std::streamsize>(buffer.size())) || in.gcount() > 0)
    total += static_cast<std::size_t>(in.gcount());
  return total;
}

}  // namespace

int main(int argc, char** argv) {
  const long entries = argc > 1 ? std::atol(argv[1]) : 1000000;
  const long rows = std::max(1L, entries / 10), cols = 2 * rows;
  // Ten distinct columns per row, values with 17 significant digits, as a solver dumps them.
  std::mt19937_64 rng(1);
  std::normal_distribution<double> value;
  std::vector<Eigen::Triplet<double>> triplets;
  triplets.reserve(static_cast<std::size_t>(entries));
  for (long k = 0; k < entries; ++k) {
    long r = k / 10;
    triplets.emplace_back(static_cast<int>(r % rows),
                          static_cast<int>((r + (k % 10) * (cols / 10)) % cols), value(rng));
  }
  Eigen::SparseMatrix<double> matrix(rows, cols);
  matrix.setFromTriplets(triplets.begin(), triplets.end());
  const std::filesystem::path path =
      std::filesystem::temp_directory_path() / "qualify_matrix_market_bench.mtx";
  if (!qualify::write_matrix_market(path, matrix)) {
    std::fprintf(stderr, "cannot write %s\n", path.string().c_str());
    return 1;
  }
  const double megabytes = static_cast<double>(std::filesystem::file_size(path)) / 1e6;

  std::size_t bytes = 0;
  double raw = best_seconds(5, [&] { bytes = raw_bytes(path); });
  qualify::matrix_market_data data;
  double ours = best_seconds(5, [&] { data = qualify::read_matrix_market(path); });
  if (!data.ok) {
    std::fprintf(stderr, "read failed: %s\n", data.message.c_str());
    return 1;
  }
  qualify::assembled_matrix<Eigen::SparseMatrix<double>> sparse;
  double assemble = best_seconds(5, [&] { sparse = qualify::to_sparse(data); });
  long peer_entries = 0;
  double peer_sum = 0;
  double peer = best_seconds(5, [&] { peer_sum = iostream_sum(path, peer_entries); });

  double our_sum = 0;
  for (const auto& e : data.entries) our_sum += e.value + static_cast<double>(e.row + e.col + 2);
  std::printf("file: %s, %.1f MB, %ld x %ld, %zu entries (iostream peer read %ld)\n",
              path.string().c_str(), megabytes, rows, cols, data.entries.size(), peer_entries);
  std::printf("checksums agree: %s\n", our_sum == peer_sum ? "yes" : "NO");
  std::printf("%-34s %9s %9s %12s\n", "step (best of 5)", "seconds", "MB/s", "ours/this");
  std::printf("%-34s %9.3f %9.0f %12.2f\n", "raw read, 1 MiB chunks (floor)", raw, megabytes / raw,
              ours / raw);
  std::printf("%-34s %9.3f %9.0f %12s\n", "qualify::read_matrix_market", ours, megabytes / ours,
              "1.00");
  std::printf("%-34s %9.3f %9.0f %12.2f\n", "iostream >> per token (peer)", peer, megabytes / peer,
              ours / peer);
  std::printf("%-34s %9.3f %9s %12s\n", "qualify::to_sparse (assembly)", assemble, "-", "-");
  rusage usage{};
  getrusage(RUSAGE_SELF, &usage);
  std::printf("peak RSS: %.0f MiB\n", static_cast<double>(usage.ru_maxrss) / 1024.0);
  std::filesystem::remove(path);
  (void)bytes;
  (void)sparse;
  return 0;
}
