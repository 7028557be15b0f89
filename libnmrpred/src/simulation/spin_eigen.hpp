// Dense linear algebra for the Hamiltonian blocks of spin_exact.cpp: small
// blocks on Eigen in the calling thread, large ones on the system's LAPACK and
// BLAS (libnmrpred links Debian's generic liblapack.so.3 and libblas.so.3;
// whichever implementation Debian's alternatives select, OpenBLAS when
// libopenblas0-pthread is installed, runs the calls). Private to
// src/simulation/ (Eigen stays out of public headers).
//
// Thread rule: every function may run in many threads at once (LAPACK's and
// BLAS's routines are reentrant; every buffer is local). The library starts
// no thread and sets no thread count: a threaded BLAS uses its own pool inside
// each call on a large block, sized by its environment (OPENBLAS_NUM_THREADS
// for OpenBLAS).
#ifndef NMRPRED_SIMULATION_SPIN_EIGEN_HPP
#define NMRPRED_SIMULATION_SPIN_EIGEN_HPP

#include <Eigen/Dense>

namespace nmrpred::simulation::detail {

/// Eigenvalues (ascending) and orthonormal eigenvectors (columns) of the
/// symmetric matrix `h` (only its lower triangle is read): by Eigen's
/// SelfAdjointEigenSolver up to 100 states, above by LAPACK's
/// divide-and-conquer driver dsyevd. Throws InternalError if the
/// decomposition fails or the block is too large for LAPACK's 32-bit sizes.
void symmetric_eigen(const Eigen::MatrixXd &h, Eigen::VectorXd &values, Eigen::MatrixXd &vectors);

/// c = a^T b (a: k x m, b: k x n, c: m x n): by Eigen when no side exceeds
/// 100, else by BLAS dgemm.
void transposed_product(const Eigen::MatrixXd &a, const Eigen::MatrixXd &b, Eigen::MatrixXd &c);

}  // namespace nmrpred::simulation::detail

#endif
