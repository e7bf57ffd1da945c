// qualify: times check_licq against LAPACK's dgeqp3 and dgesdd and Eigen's pivoted QR, same run.
// SPDX-License-Identifier: MIT
//
// Usage: licq_bench [largest_rows]   (default 2000: sizes 200x400 ... 2000x4000, rows x variables).
// Every peer runs single-threaded (openblas_set_num_threads(1)). Each time is the best of up to
// 5 runs, as many as fit in about a second (at least one). GFLOP/s use nominal operation counts
// (Golub and Van Loan, "Matrix Computations", 4th ed., 2013: Householder QR of a p x q matrix,
// p >= q, 2 q^2 (p - q/3), section 5.2.2; singular values only by Golub-Reinsch bidiagonalisation,
// 4 p q^2 - 4 q^3 / 3, section 8.6.3) so that methods can be compared on one scale; the ours
// column uses the QR count whatever method decided.
#include <qualify/licq.hpp>

#include <cblas.h>
#include <lapacke.h>
#include <malloc.h>
#include <sys/resource.h>

#include <Eigen/Dense>
#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <limits>
#include <random>
#include <string>
#include <string_view>
#include <type_traits>
#include <vector>

#include "timing.hpp"

namespace {

using qualify_bench::best_of;

using Eigen::Index;
using Eigen::MatrixXd;

struct timing {
  double seconds = 0;
  Index rank = -1;
  std::string note;
};

double peak_rss_mib() {
  rusage usage{};
  getrusage(RUSAGE_SELF, &usage);
  return static_cast<double>(usage.ru_maxrss) / 1024.0;  // Linux reports KiB
}

// A "Vm...:" field of /proc/self/status in MiB (0 when it cannot be read).
double status_mib(std::string_view field) {
  std::ifstream status("/proc/self/status");
  std::string line;
  while (std::getline(status, line))
    if (line.compare(0, field.size(), field) == 0) return std::atof(line.c_str() + field.size()) / 1024.0;
  return 0;
}

// Memory the call needs beyond what the process holds when it starts. Freed memory is handed
// back first (malloc_trim; main() also makes every large block an mmap of its own) so that
// it is not reused unseen; then writing 5 to
// /proc/self/clear_refs resets the peak (VmHWM) to the current RSS (Linux >= 4.0,
// Documentation/admin-guide/mm/soft-dirty.rst), so the peak afterwards minus the RSS before
// is the call's own high-water mark. Negative when the reset is not available.
template <class F>
double working_mib(F&& run) {
  malloc_trim(0);
  std::ofstream("/proc/self/clear_refs") << "5";
  const double before = status_mib("VmRSS:");
  if (status_mib("VmHWM:") > before + 1.0) return -1;  // the reset did not happen
  run();
  return status_mib("VmHWM:") - before;
}

// Relative rank threshold max(m, n) * eps * |largest|, the library's documented default
// (DESIGN.md, section 3); the same rule is applied to every peer.
double rank_tolerance(Index m, Index n) {
  return static_cast<double>(std::max(m, n)) * std::numeric_limits<double>::epsilon();
}

// LAPACK dgeqp3 (QR with column pivoting) on J^T: the pivots pick constraint rows.
timing lapack_qp3(const MatrixXd& jacobian) {
  const Index m = jacobian.rows(), n = jacobian.cols();
  MatrixXd a = jacobian.transpose();  // n x m, column-major
  std::vector<lapack_int> pivots(static_cast<std::size_t>(m), 0);
  std::vector<double> tau(static_cast<std::size_t>(std::min(m, n)));
  lapack_int info =
      LAPACKE_dgeqp3(LAPACK_COL_MAJOR, static_cast<lapack_int>(n), static_cast<lapack_int>(m),
                     a.data(), static_cast<lapack_int>(n), pivots.data(), tau.data());
  timing t;
  if (info != 0) {
    t.note = "dgeqp3 info " + std::to_string(info);
    return t;
  }
  const double cut = rank_tolerance(m, n) * std::abs(a(0, 0));
  t.rank = 0;
  for (Index i = 0; i < std::min(m, n); ++i) t.rank += std::abs(a(i, i)) > cut ? 1 : 0;
  return t;
}

// LAPACK dgesdd, singular values only, on J.
timing lapack_sdd(const MatrixXd& jacobian) {
  const Index m = jacobian.rows(), n = jacobian.cols();
  MatrixXd a = jacobian;
  std::vector<double> s(static_cast<std::size_t>(std::min(m, n)));
  lapack_int info =
      LAPACKE_dgesdd(LAPACK_COL_MAJOR, 'N', static_cast<lapack_int>(m), static_cast<lapack_int>(n),
                     a.data(), static_cast<lapack_int>(m), s.data(), nullptr, 1, nullptr, 1);
  timing t;
  if (info != 0) {
    t.note = "dgesdd info " + std::to_string(info);
    return t;
  }
  const double cut = rank_tolerance(m, n) * s.front();
  t.rank = std::count_if(s.begin(), s.end(), [&](double v) { return v > cut; });
  return t;
}

// Eigen's ColPivHouseholderQR on J^T, with the same relative threshold.
timing eigen_colpiv(const MatrixXd& jacobian) {
  Eigen::ColPivHouseholderQR<MatrixXd> qr(jacobian.rows(), jacobian.cols());
  qr.setThreshold(rank_tolerance(jacobian.rows(), jacobian.cols()));
  qr.compute(jacobian.transpose());
  timing t;
  t.rank = qr.rank();
  return t;
}

timing ours(const MatrixXd& jacobian) {
  qualify::licq_report report = qualify::check_licq(jacobian);
  timing t;
  t.rank = static_cast<Index>(report.rank);
  t.note = std::string(qualify::to_string(report.result)) + ", " +
           std::string(qualify::to_string(report.method));
  return t;
}

// dgemm on n x n matrices: the machine's practical peak for one thread.
double dgemm_gflops(int n) {
  std::mt19937_64 rng(3);
  std::normal_distribution<double> normal;
  std::vector<double> a(static_cast<std::size_t>(n) * n), b(a.size()), c(a.size(), 0.0);
  for (double& v : a) v = normal(rng);
  for (double& v : b) v = normal(rng);
  timing t = best_of([&] {
    cblas_dgemm(CblasColMajor, CblasNoTrans, CblasNoTrans, n, n, n, 1.0, a.data(), n, b.data(), n,
                0.0, c.data(), n);
    return timing{};
  });
  return 2.0 * n * double(n) * n / t.seconds / 1e9;
}

// A random m x n Jacobian (full row rank with probability one); `deficient` replaces five rows
// by combinations of two others, so that the rank is m - 5.
MatrixXd make_jacobian(Index m, Index n, bool deficient, std::mt19937_64& rng) {
  std::normal_distribution<double> normal;
  MatrixXd j = MatrixXd::NullaryExpr(m, n, [&] { return normal(rng); });
  if (deficient)
    for (Index k = 1; k <= 5; ++k) {
      const Index row = k * m / 6, p = row - 1, q = row + 1;  // p, q are never replaced rows
      j.row(row) = normal(rng) * j.row(p) + normal(rng) * j.row(q);
    }
  return j;
}

}  // namespace

int main(int argc, char** argv) {
  openblas_set_num_threads(1);
  mallopt(M_MMAP_THRESHOLD, 1 << 20);  // a fixed threshold: freed matrices leave the RSS
  const int largest = argc > 1 ? std::atoi(argv[1]) : 2000;
  const char* coretype = std::getenv("OPENBLAS_CORETYPE");
  std::printf("licq_bench: OpenBLAS threads %d (core type %s, %s), Eigen threads %d\n",
              openblas_get_num_threads(), coretype ? coretype : "detected",
              openblas_get_corename(), Eigen::nbThreads());
  std::printf("\n");
  std::printf("%-11s %-9s %-26s %6s %10s %8s %10s  %s\n", "rows x vars", "kind", "method", "rank",
              "seconds", "GFLOP/s", "ours/this", "note");

  std::mt19937_64 rng(20261201);
  for (Index m : {200, 500, 1000, 2000}) {
    if (m > largest) break;
    const Index n = 2 * m;
    // Nominal counts on J^T (n x m, n >= m) and on J.
    const double qr_flops = 2.0 * double(m) * m * (double(n) - double(m) / 3.0);
    const double svd_flops = 4.0 * double(n) * m * m - 4.0 * double(m) * m * m / 3.0;
    for (bool deficient : {false, true}) {
      MatrixXd jacobian = make_jacobian(m, n, deficient, rng);
      struct row {
        const char* method;
        double flops;
        timing t;
      };
      std::vector<row> rows;
      rows.push_back({"qualify::check_licq", qr_flops, best_of([&] { return ours(jacobian); })});
      rows.push_back(
          {"LAPACK dgeqp3 on J^T", qr_flops, best_of([&] { return lapack_qp3(jacobian); })});
      rows.push_back(
          {"LAPACK dgesdd values", svd_flops, best_of([&] { return lapack_sdd(jacobian); })});
      rows.push_back(
          {"Eigen ColPivQR on J^T", qr_flops, best_of([&] { return eigen_colpiv(jacobian); })});
      const double ours_seconds = rows.front().t.seconds;
      for (const row& r : rows) {
        char ratio[32];
        std::snprintf(ratio, sizeof ratio, "%.2f", ours_seconds / r.t.seconds);
        std::printf("%5td x %-4td %-9s %-26s %6td %10.4f %8.2f %10s  %s\n", m, n,
                    deficient ? "rank-5" : "full", r.method, r.t.rank, r.t.seconds,
                    r.flops / r.t.seconds / 1e9, ratio, r.t.note.c_str());
      }
      const double input_mib = double(jacobian.size()) * sizeof(double) / 1048576.0;
      const double work_mib = working_mib([&] { ours(jacobian); });
      std::printf("%-48s check_licq working memory %.1f MiB = %.2f x the input (%.1f MiB); "
                  "peak RSS so far %.0f MiB (expected rank %td)\n",
                  "", work_mib, work_mib / input_mib, input_mib, peak_rss_mib(),
                  deficient ? m - 5 : m);
    }
  }
  // Last, so that its three 2000 x 2000 matrices do not set the peak RSS of the table.
  std::printf("\ndgemm 2000 x 2000, one thread: %.1f GFLOP/s (the machine's practical peak)\n",
              dgemm_gflops(2000));
  return 0;
}
