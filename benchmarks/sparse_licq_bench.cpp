// qualify: times the sparse LICQ check against SPQR's bare rank on banded optimal-control
// Jacobians and on the equality blocks of the Netlib models. SPDX-License-Identifier: MIT
//
// Usage: sparse_licq_bench [largest_rows] [netlib-folder]   (default 1000000: 1e4, 1e5, 1e6
// rows; the Netlib folder defaults to the test data's).
// The banded Jacobians are those of tests/sparse_cases.hpp (4 states, 2 controls per stage,
// dynamics rows x_{k+1} - A_k x_k - B_k u_k coupling stage k and k + 1: 7 entries per row)
// with one redundant constraint planted at a random stage, stored row-major (CSR, the usual
// layout of an optimizer's Jacobian).
//   ours: check_licq on the sparse Jacobian: validation, verdict, confirmation, explained
//         dependent rows, duplicated/parallel pairs, the report's message and findings.
//   peer: SPQR alone on J^T, given column-major with unit columns before the clock starts,
//         with the same tolerance: SuiteSparseQR(ordering, tol, econ = 0, A, &R, &E), which
//         returns the rank estimate (the least a rank decision with named rows needs).
// Each measurement runs in a child process of its own, so that its peak resident memory
// (getrusage of the child) is its own: the figure printed is the peak minus the resident size
// after the input was built. Times are best_of (benchmarks/timing.hpp: the fastest of up to 5
// runs within about a second) in that child (Netlib: the sum over the models of each model's
// best_of): wall-clock time, and the process's CPU time (user + system) of the same run, which a
// machine shared with other work disturbs less.
#include <sys/resource.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <fstream>
#include <limits>
#include <qualify/mps.hpp>
#include <qualify/sparse_licq.hpp>
#include <random>
#include <string>
#include <vector>

#include "netlib_index.hpp"
#include "sparse_cases.hpp"
#include "timing.hpp"

#if !defined(QUALIFY_WITH_SPQR)
#error "sparse_licq_bench compares against SPQR: configure with QUALIFY_WITH_SPQR=ON"
#endif

namespace {

using Eigen::Index;
using csr = Eigen::SparseMatrix<double, Eigen::RowMajor>;
using csc = qualify::detail::sparse_columns<double>;

csr banded_jacobian(Index target_rows, unsigned seed) {
  const Index nx = 4, nu = 2;
  std::mt19937 rng(seed);
  auto oc =
      qualify_test::banded_control(std::max<Index>(1, (target_rows - nx - 1) / nx), nx, nu, rng);
  qualify_test::plant_redundant_row(oc, rng);
  return oc.matrix<Eigen::RowMajor>();
}

/// What the peer is given: J^T with unit columns, compressed column-major.
csc unit_transpose(const csr& j) {
  csc a = j.transpose();
  for (Index c = 0; c < a.cols(); ++c)
    if (a.col(c).norm() > 0) a.col(c) /= a.col(c).norm();
  a.makeCompressed();
  return a;
}

double resident_mib() {  // current resident set, from /proc (Linux)
  std::ifstream status("/proc/self/status");
  std::string line;
  while (std::getline(status, line))
    if (line.rfind("VmRSS:", 0) == 0) return std::strtod(line.c_str() + 6, nullptr) / 1024.0;
  return 0;
}

double cpu_seconds() {
  timespec t{};
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &t);
  return double(t.tv_sec) + 1e-9 * double(t.tv_nsec);
}

struct result {
  double seconds = 0, cpu = 0, baseline_mib = 0, peak_mib = 0;
  long rank = -1, dependent = -1, models = 0;
  char verdict[32] = {};
  char method[32] = {};
};

/// work(input) with its process CPU time, for best_of (the time is best_of's).
template <class Work, class Input>
result timed(Work&& work, const Input& input) {
  const double cpu_start = cpu_seconds();
  result r = work(input);
  r.cpu = cpu_seconds() - cpu_start;
  return r;
}

/// Builds the input and runs best_of(work(input)) in a child process, so that the peak
/// resident memory the parent reads from wait4 is that child's own.
template <class Build, class Work>
result in_child(Build&& build, Work&& work) {
  int fd[2];
  if (pipe(fd) != 0) std::exit(1);
  std::fflush(stdout);
  const pid_t pid = fork();
  if (pid == 0) {
    close(fd[0]);
    auto input = build();
    const double baseline = resident_mib();
    result out = qualify_bench::best_of([&] { return timed(work, input); });
    out.baseline_mib = baseline;
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

result ours(const csr& j) {
  const qualify::licq_report rep = qualify::check_licq(j);
  result r;
  r.rank = long(rep.rank);
  r.dependent = long(rep.dependencies.size());
  std::snprintf(r.verdict, sizeof r.verdict, "%s", std::string(to_string(rep.result)).c_str());
  std::snprintf(r.method, sizeof r.method, "%s", std::string(to_string(rep.method)).c_str());
  return r;
}

/// SPQR's bare rank of `a` with the tolerance check_licq uses on it.
result bare_spqr(const csc& a) {
  const double tol = double(std::max(a.rows(), a.cols())) * std::numeric_limits<double>::epsilon();
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
  r.rank = long(SuiteSparseQR<double>(SPQR_ORDERING_DEFAULT, tol, 0, &view, &r_factor, &e, &cc));
  r.dependent = long(a.cols()) - r.rank;
  cholmod_l_free_sparse(&r_factor, &cc);
  if (e) cholmod_l_free(std::size_t(a.cols()), sizeof(SuiteSparse_long), e, &cc);
  cholmod_l_finish(&cc);
  return r;
}

/// The equality blocks (at least one row) of the Netlib models, row-major as in the banded case.
std::vector<csr> netlib_blocks(const std::string& dir) {
  std::vector<csr> blocks;
  for (const auto& entry : qualify_test::read_netlib_index(dir)) {
    const qualify::mps_model model = qualify::read_mps_file(dir + "/" + entry.file);
    if (!model.ok()) continue;
    csr block = qualify_test::equality_rows(model).matrix;
    if (block.rows() > 0) blocks.push_back(std::move(block));
  }
  return blocks;
}

/// Sum over the blocks of each block's best time (ours or the peer's), run as one piece of
/// work in a child (its own best_of then runs it once: the sum takes more than a second).
template <class Input, class Work>
result netlib_total(const std::vector<Input>& inputs, Work&& work) {
  result total;
  for (const auto& input : inputs) {
    const result r = qualify_bench::best_of([&] { return timed(work, input); });
    total.seconds += r.seconds;
    total.cpu += r.cpu;
    total.dependent += r.dependent;
    ++total.models;
  }
  return total;
}

}  // namespace

int main(int argc, char** argv) {
  const Index largest = argc > 1 ? std::atol(argv[1]) : 1000000;
  const std::string netlib = argc > 2 ? argv[2] : std::string(QUALIFY_BENCH_DATA_DIR) + "/netlib";
  std::printf(
      "sparse LICQ on banded optimal-control Jacobians (7 entries per row, one planted "
      "redundant row), ours against SPQR's bare rank\n");
  std::printf("%9s %9s %10s | %8s %8s %6s | %8s %8s %6s | %8s %8s %6s | %s\n", "rows", "cols",
              "entries", "ours s", "SPQR s", "ratio", "ours cpu", "SPQR cpu", "ratio", "ours MiB",
              "SPQR MiB", "ratio", "ours: verdict");
  result previous, previous_peer;
  Index previous_rows = 0;
  for (Index rows = 10000; rows <= largest; rows *= 10) {
    const unsigned seed = unsigned(rows);
    const auto build_j = [&] { return banded_jacobian(rows, seed); };
    const result mine = in_child(build_j, ours);
    const result peer = in_child([&] { return unit_transpose(build_j()); }, bare_spqr);
    const csr j = build_j();
    const double ours_mib = mine.peak_mib - mine.baseline_mib;
    const double peer_mib = peer.peak_mib - peer.baseline_mib;
    std::printf(
        "%9ld %9ld %10ld | %8.3f %8.3f %6.2f | %8.3f %8.3f %6.2f | %8.1f %8.1f %6.2f | %s by %s, "
        "rank %ld, %ld dependent (SPQR rank %ld)\n",
        long(j.rows()), long(j.cols()), long(j.nonZeros()), mine.seconds, peer.seconds,
        mine.seconds / peer.seconds, mine.cpu, peer.cpu, mine.cpu / peer.cpu, ours_mib, peer_mib,
        ours_mib / peer_mib, mine.verdict, mine.method, mine.rank, mine.dependent, peer.rank);
    if (previous_rows > 0)
      std::printf(
          "%9s growth x%.0f rows: ours time x%.2f (cpu x%.2f), SPQR time x%.2f (cpu x%.2f)\n", "",
          double(j.rows()) / double(previous_rows), mine.seconds / previous.seconds,
          mine.cpu / previous.cpu, peer.seconds / previous_peer.seconds,
          peer.cpu / previous_peer.cpu);
    previous_rows = j.rows();
    previous = mine;
    previous_peer = peer;
  }

  if (qualify_test::read_netlib_index(netlib).empty()) {
    std::printf("Netlib equality blocks: skipped (no %s/INDEX.csv)\n", netlib.c_str());
    return 0;
  }
  const auto all_ours = [](const std::vector<csr>& blocks) { return netlib_total(blocks, ours); };
  const auto all_peer = [](const std::vector<csc>& blocks) {
    return netlib_total(blocks, bare_spqr);
  };
  const result mine = in_child([&] { return netlib_blocks(netlib); }, all_ours);
  const result peer = in_child(
      [&] {
        std::vector<csc> unit;
        for (const csr& b : netlib_blocks(netlib)) unit.push_back(unit_transpose(b));
        return unit;
      },
      all_peer);
  const double ours_mib = mine.peak_mib - mine.baseline_mib;
  const double peer_mib = peer.peak_mib - peer.baseline_mib;
  std::printf(
      "Netlib equality blocks (%ld models): ours %.4f s (cpu %.4f), SPQR %.4f s (cpu %.4f), ratio "
      "%.2f (cpu %.2f); peak memory ours %.1f MiB, SPQR %.1f MiB; dependent rows: ours %ld, "
      "SPQR %ld\n",
      mine.models, mine.seconds, mine.cpu, peer.seconds, peer.cpu, mine.seconds / peer.seconds,
      mine.cpu / peer.cpu, ours_mib, peer_mib, mine.dependent, peer.dependent);
  return 0;
}
