// Dense symmetric eigensolver for the Hamiltonian blocks of spin_exact.cpp.
// Private to src/simulation/ (Eigen stays out of public headers).
#ifndef NMRPRED_SIMULATION_SPIN_EIGEN_HPP
#define NMRPRED_SIMULATION_SPIN_EIGEN_HPP

#include <Eigen/Dense>

namespace nmrpred::simulation::detail {

/// Eigenvalues (ascending) and orthonormal eigenvectors (columns) of the
/// symmetric matrix `h` (only its lower triangle is read). Throws
/// InternalError if the decomposition fails.
void symmetric_eigen(const Eigen::MatrixXd &h, Eigen::VectorXd &values, Eigen::MatrixXd &vectors);

}  // namespace nmrpred::simulation::detail

#endif
