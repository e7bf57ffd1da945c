// qualify: times the sparse LICQ check against SPQR's bare rank on banded optimal-control
// Jacobians. SPDX-License-Identifier: MIT
//
// Usage: sparse_licq_bench [largest_rows]   (default 1000000: 1e4, 1e5, 1e6 rows).
// The Jacobians are those of a discretised optimal-control problem (4 states, 2 controls per
// stage, dynamics rows x_{k+1} - A_k x_k - B_k u_k coupling stage k and k + 1: 7 entries per
// row) with one redundant constraint planted at a random stage, stored row-major (CSR, the
// usual layout of an optimizer's Jacobian).
//   ours: check_licq on the sparse Jacobian (verdict, confirmation, explained dependent rows).
//   peer: SPQR alone on J^T, given column-major with unit columns before the clock starts,
//         with the same tolerance: SuiteSparseQR(ordering, tol, econ = 0, A, &R, &E), which
//         returns the rank estimate (the least a rank decision with named rows needs).
// Each measurement runs in a child process of its own, so that its peak resident memory
// (getrusage of the child) is its own: the figure printed is the peak minus the resident size
// after the matrix was built. Times are the best of 3 runs in that child.
#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <fstream>
#include <limits>
#include <qualify/sparse_licq.hpp>
#include <random>
#include <string>
#include <vector>

#if !defined(QUALIFY_WITH_SPQR)
#error "sparse_licq_bench compares against SPQR: configure with QUALIFY_WITH_SPQR=ON"
#endif

namespace {

using Eigen::Index;
using csr = Eigen::SparseMatrix<double, Eigen::RowMajor>;

csr banded_control(Index target_rows, unsigned seed) {
  const Index nx = 4, nu = 2, stride = nx + nu;
  const Index stages = std::max<Index>(1, (target_rows - nx - 1) / nx);
  std::mt19937 rng(seed);
  std::uniform_real_distribution<double> value(-1, 1);
  std::vector<Eigen::Triplet<double>> entries;
  entries.reserve(std::size_t((stages + 1) * nx * 8));
  for (Index i = 0; i < nx; ++i) entries.emplace_back(i, i, 1.0);
  const auto dynamics = [&](Index k, Index i) { return nx + k * nx + i; };
  std::vector<Eigen::Triplet<double>> row_a, row_b;
  const Index planted_stage = std::uniform_int_distribution<Index>(0, stages - 1)(rng);
  for (Index k = 0; k < stages; ++k)
    for (Index i = 0; i < nx; ++i) {
      const Index row = dynamics(k, i);
      const std::size_t first = entries.size();
      entries.emplace_back(row, (k + 1) * stride + i, 1.0);
      for (Index c = 0; c < nx; ++c) entries.emplace_back(row, k * stride + c, value(rng));
      for (Index c = 0; c < nu; ++c) entries.emplace_back(row, k * stride + nx + c, value(rng));
      if (k == planted_stage && (i == 1 || i == 3))
        for (std::size_t e = first; e < entries.size(); ++e)
          (i == 1 ? row_a : row_b).push_back(entries[e]);
    }
  const Index planted = nx + stages * nx;  // 2 * row a - 0.5 * row b
  for (const auto& e : row_a) entries.emplace_back(planted, e.col(), 2 * e.value());
  for (const auto& e : row_b) entries.emplace_back(planted, e.col(), -0.5 * e.value());
  csr j(planted + 1, stages * stride + nx);
  j.setFromTriplets(entries.begin(), entries.end());
  return j;
}

double resident_mib() {  // current resident set, from /proc (Linux)
  std::ifstream status("/proc/self/status");
  std::string line;
  while (std::getline(status, line))
    if (line.rfind("VmRSS:", 0) == 0) return std::strtod(line.c_str() + 6, nullptr) / 1024.0;
  return 0;
}

struct result {
  double seconds = 0, baseline_mib = 0, peak_mib = 0;
  long rank = -1, dependent = -1;
  char verdict[32] = {};
  char method[32] = {};
};

// Runs `work` (returning a filled result without time) in a child, best of 3.
template <class Build, class Work>
result in_child(Build&& build, Work&& work) {
  int fd[2];
  if (pipe(fd) != 0) std::exit(1);
  const pid_t pid = fork();
  if (pid == 0) {
    close(fd[0]);
    auto input = build();
    result out;
    out.baseline_mib = resident_mib();
    out.seconds = std::numeric_limits<double>::infinity();
    for (int run = 0; run < 3; ++run) {
      const auto start = std::chrono::steady_clock::now();
      result r = work(input);
      const std::chrono::duration<double> took = std::chrono::steady_clock::now() - start;
      if (took.count() < out.seconds) {
        const double base = out.baseline_mib;
        out = r;
        out.baseline_mib = base;
        out.seconds = took.count();
      }
    }
    if (write(fd[1], &out, sizeof out) != ssize_t(sizeof out)) _exit(1);
    _exit(0);
  }
  close(fd[1]);
  result out;
  if (read(fd[0], &out, sizeof out) != ssize_t(sizeof out)) std::exit(1);
  close(fd[0]);
  int status = 0;
  rusage usage{};
  wait4(pid, &status, 0, &usage);
  out.peak_mib = double(usage.ru_maxrss) / 1024.0;  // KiB on Linux
  return out;
}

}  // namespace

int main(int argc, char** argv) {
  const Index largest = argc > 1 ? std::atol(argv[1]) : 1000000;
  std::printf(
      "sparse LICQ on banded optimal-control Jacobians (7 entries per row, one planted "
      "redundant row)\n");
  std::printf("%9s %9s %10s | %9s %9s %6s | %9s %9s %6s | %s\n", "rows", "cols", "entries",
              "ours s", "SPQR s", "ratio", "ours MiB", "SPQR MiB", "ratio", "ours: verdict");
  double previous_ours = 0, previous_peer = 0;
  Index previous_rows = 0;
  for (Index rows = 10000; rows <= largest; rows *= 10) {
    const unsigned seed = unsigned(rows);
    const auto build_j = [&] { return banded_control(rows, seed); };
    const result ours = in_child(build_j, [](const csr& j) {
      const qualify::licq_report rep = qualify::check_licq(j);
      result r;
      r.rank = long(rep.rank);
      r.dependent = long(rep.dependencies.size());
      std::snprintf(r.verdict, sizeof r.verdict, "%s", std::string(to_string(rep.result)).c_str());
      std::snprintf(r.method, sizeof r.method, "%s", std::string(to_string(rep.method)).c_str());
      return r;
    });
    const auto build_a = [&] {
      const csr j = banded_control(rows, seed);
      qualify::detail::sparse_columns<double> a = j.transpose();
      for (Index c = 0; c < a.cols(); ++c) a.col(c) /= a.col(c).norm();
      a.makeCompressed();
      return a;
    };
    const result peer = in_child(build_a, [](const qualify::detail::sparse_columns<double>& a) {
      const double tol =
          double(std::max(a.rows(), a.cols())) * std::numeric_limits<double>::epsilon();
      cholmod_common cc;
      cholmod_l_start(&cc);
      cc.print = 0;
      cholmod_sparse view{};
      view.nrow = std::size_t(a.rows());
      view.ncol = std::size_t(a.cols());
      view.nzmax = std::size_t(a.nonZeros());
      view.p = const_cast<SuiteSparse_long*>(a.outerIndexPtr());
      view.i = const_cast<SuiteSparse_long*>(a.innerIndexPtr());
      view.x = const_cast<double*>(a.valuePtr());
      view.itype = CHOLMOD_LONG;
      view.xtype = CHOLMOD_REAL;
      view.dtype = CHOLMOD_DOUBLE;
      view.sorted = 1;
      view.packed = 1;
      cholmod_sparse* r_factor = nullptr;
      SuiteSparse_long* e = nullptr;
      result r;
      r.rank =
          long(SuiteSparseQR<double>(SPQR_ORDERING_DEFAULT, tol, 0, &view, &r_factor, &e, &cc));
      r.dependent = long(a.cols()) - r.rank;
      cholmod_l_free_sparse(&r_factor, &cc);
      if (e) cholmod_l_free(std::size_t(a.cols()), sizeof(SuiteSparse_long), e, &cc);
      cholmod_l_finish(&cc);
      return r;
    });
    const csr j = banded_control(rows, seed);
    const double ours_mib = ours.peak_mib - ours.baseline_mib;
    const double peer_mib = peer.peak_mib - peer.baseline_mib;
    std::printf(
        "%9ld %9ld %10ld | %9.3f %9.3f %6.2f | %9.1f %9.1f %6.2f | %s by %s, rank %ld, "
        "%ld dependent (SPQR rank %ld)\n",
        long(j.rows()), long(j.cols()), long(j.nonZeros()), ours.seconds, peer.seconds,
        ours.seconds / peer.seconds, ours_mib, peer_mib, ours_mib / peer_mib, ours.verdict,
        ours.method, ours.rank, ours.dependent, peer.rank);
    if (previous_rows > 0)
      std::printf("%9s growth x%.0f rows: ours time x%.2f, SPQR time x%.2f\n", "",
                  double(j.rows()) / double(previous_rows), ours.seconds / previous_ours,
                  peer.seconds / previous_peer);
    previous_rows = j.rows();
    previous_ours = ours.seconds;
    previous_peer = peer.seconds;
  }
  return 0;
}
