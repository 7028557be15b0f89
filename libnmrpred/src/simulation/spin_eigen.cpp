// Dense linear algebra on LAPACK and BLAS (spin_eigen.hpp).
//
// The blocks of a strongly coupled system are dense and large (924 states at
// 12 spins), and nearly all the time goes into their eigendecompositions and
// the transition products. LAPACK's dsyevd (Householder tridiagonalisation,
// divide and conquer, blocked back-transformation) on an optimised BLAS runs
// these several times faster than a portable build of our own can, because
// the BLAS picks kernels for the processor it runs on.
//
// Small blocks stay with Eigen: most molecules' spin systems give only such
// blocks, and there a threaded BLAS (Debian's OpenBLAS) hands each of the many
// small BLAS calls inside dsyevd to its pool. On a machine whose cores are
// busy with other work the pool's threads wait for a time slice at every
// call: 10 x 10 blocks took 28 ms instead of 0.03 ms, 64 x 64 blocks 313 ms
// instead of 0.4, and predicting 2,000 NCI records with couplings took 101 s
// instead of 2.4 s with one BLAS thread (benchmarks/README.md, exact spin
// simulation). Eigen runs in the calling thread and is as fast as
// single-threaded dsyevd up to about 100 states; larger blocks have enough
// work per BLAS call for the pool to pay.
#include "simulation/spin_eigen.hpp"

#include <climits>
#include <cstddef>
#include <vector>

#include <fmt/format.h>

#include <nmrpred/error.hpp>

// Fortran interfaces of the reference LAPACK and BLAS (LP64: 32-bit integers,
// as Debian builds them), with the hidden lengths of character arguments that
// gfortran appends.
extern "C" {
void dsyevd_(const char *jobz, const char *uplo, const int *n, double *a, const int *lda, double *w, double *work,
             const int *lwork, int *iwork, const int *liwork, int *info, std::size_t jobz_len, std::size_t uplo_len);
void dgemm_(const char *transa, const char *transb, const int *m, const int *n, const int *k, const double *alpha,
            const double *a, const int *lda, const double *b, const int *ldb, const double *beta, double *c,
            const int *ldc, std::size_t transa_len, std::size_t transb_len);
}

namespace nmrpred::simulation::detail {

namespace {

/// Blocks of at most this many states are decomposed, and products of
/// matrices no side of which is longer are formed, by Eigen (see the top).
/// On this project's 2-core test machine, single-threaded: n = 64 Eigen 0.48
/// ms, dsyevd 0.42-0.79 ms; n = 100 1.6 against 1.2-1.8 ms; n = 128 5.0
/// against 3-4 ms; n = 300 42 against 9 ms.
constexpr Eigen::Index kSmallBlock = 100;

/// A dimension as LAPACK's 32-bit integer.
int lapack_int(Eigen::Index n, const char *what) {
  if (n < 0 || n > INT_MAX) throw InternalError(fmt::format("spin simulation: {} of {} exceeds LAPACK's range", what, n));
  return static_cast<int>(n);
}

}  // namespace

void symmetric_eigen(const Eigen::MatrixXd &h, Eigen::VectorXd &values, Eigen::MatrixXd &vectors) {
  const Eigen::Index rows = h.rows();
  // dsyevd's workspace holds 2 n^2 + 6 n + 1 doubles, which must fit its int.
  const int n = lapack_int(rows, "block size");
  lapack_int(2 * rows * rows + 6 * rows + 1, "eigensolver workspace");
  values.resize(rows);
  if (n == 0) {
    vectors.resize(0, 0);
    return;
  }
  // Centre the spectrum: the Zeeman energy common to a block would otherwise
  // dominate the norm that the solver's accuracy is relative to.
  const double centre = h.diagonal().mean();
  vectors = h;
  vectors.diagonal().array() -= centre;
  if (rows <= kSmallBlock) {
    // Reads the lower triangle, as dsyevd is asked to.
    const Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver(vectors);
    if (solver.info() != Eigen::Success) throw InternalError("spin simulation: eigensolver did not converge (Eigen)");
    values = solver.eigenvalues().array() + centre;
    vectors = solver.eigenvectors();
    return;
  }
  const int lda = n;
  int info = 0;
  // Workspace query, then the decomposition.
  int lwork = -1, liwork = -1, iwork_size = 0;
  double work_size = 0;
  dsyevd_("V", "L", &n, vectors.data(), &lda, values.data(), &work_size, &lwork, &iwork_size, &liwork, &info, 1, 1);
  if (info != 0) throw InternalError(fmt::format("spin simulation: eigensolver workspace query failed ({})", info));
  lwork = static_cast<int>(work_size);
  liwork = iwork_size;
  std::vector<double> work(static_cast<std::size_t>(lwork));
  std::vector<int> iwork(static_cast<std::size_t>(liwork));
  dsyevd_("V", "L", &n, vectors.data(), &lda, values.data(), work.data(), &lwork, iwork.data(), &liwork, &info, 1, 1);
  if (info != 0)
    throw InternalError(fmt::format("spin simulation: eigensolver did not converge (LAPACK dsyevd info {})", info));
  values.array() += centre;
}

void transposed_product(const Eigen::MatrixXd &a, const Eigen::MatrixXd &b, Eigen::MatrixXd &c) {
  if (a.rows() != b.rows()) throw InternalError("spin simulation: transition product of mismatched blocks");
  const int k = lapack_int(a.rows(), "block size");
  const int m = lapack_int(a.cols(), "block size");
  const int n = lapack_int(b.cols(), "block size");
  c.resize(a.cols(), b.cols());
  if (m == 0 || n == 0) return;
  if (k == 0) {
    c.setZero();
    return;
  }
  if (k <= kSmallBlock && m <= kSmallBlock && n <= kSmallBlock) {
    c.noalias() = a.transpose() * b;
    return;
  }
  const double one = 1, zero = 0;
  dgemm_("T", "N", &m, &n, &k, &one, a.data(), &k, b.data(), &k, &zero, c.data(), &m, 1, 1);
}

}  // namespace nmrpred::simulation::detail
