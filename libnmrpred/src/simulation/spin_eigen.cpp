// Dense symmetric eigensolver (spin_eigen.hpp).
//
// Small blocks go to Eigen's SelfAdjointEigenSolver. For large blocks its
// eigenvector step (implicit QL with every Givens rotation applied to an n x n
// matrix, about 6 n^3 operations) costs five times the rest, so there the
// work is split the way LAPACK's xSTEIN-based drivers do it: Householder
// tridiagonalisation (Eigen), eigenvalues of the tridiagonal matrix (Eigen,
// no vectors), eigenvectors of the tridiagonal matrix by inverse iteration
// (O(n) per vector, reorthogonalised inside clusters of close eigenvalues),
// and one blocked back-transformation. Every vector's residual is checked;
// any doubt sends the block back to the plain solver.
#include "simulation/spin_eigen.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <vector>

#include <nmrpred/error.hpp>

namespace nmrpred::simulation::detail {

namespace {

/// Blocks up to this size use the plain solver (the split path pays off above).
constexpr Eigen::Index kPlainSolverMax = 96;
/// Eigenvalues closer than this fraction of the block's norm form a cluster
/// whose vectors are explicitly orthogonalised. Outside clusters two vectors
/// are orthogonal to about (residual / gap) = a few eps / kClusterGap, 1e-10,
/// small enough for intensities good to 1e-6 on lines 1e-6 of the strongest.
/// (LAPACK xSTEIN uses 1e-3, which in the dense spectra of spin Hamiltonians
/// chains almost every eigenvalue into one cluster and costs n^3.)
constexpr double kClusterGap = 1e-5;
/// Largest accepted residual |T z - lambda z| relative to the norm of T. Inverse
/// iteration reaches a few machine epsilons; more means a hard case.
constexpr double kResidualTol = 1e-12;

void plain(const Eigen::MatrixXd &h, Eigen::VectorXd &values, Eigen::MatrixXd &vectors) {
  Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> solver(h);
  if (solver.info() != Eigen::Success) throw InternalError("spin simulation: eigensolver did not converge");
  values = solver.eigenvalues();
  vectors = solver.eigenvectors();
}

/// LU factorisation with partial pivoting of the tridiagonal T - lambda I
/// (diagonal d, off-diagonal e, both of the unreduced block), kept for
/// repeated solves.
struct TridiagonalLu {
  std::vector<double> u0, u1, u2;  // U: diagonal, first and second superdiagonal
  std::vector<double> mult;        // L multipliers
  std::vector<char> swapped;       // rows k and k+1 exchanged at step k

  void factor(const double *d, const double *e, std::size_t m, double lambda, double tiny) {
    u0.assign(m, 0);
    u1.assign(m, 0);
    u2.assign(m, 0);
    mult.assign(m, 0);
    swapped.assign(m, 0);
    double diag = d[0] - lambda;  // current pivot row: (diag, sup, 0)
    double sup = m > 1 ? e[0] : 0;
    for (std::size_t k = 0; k + 1 < m; ++k) {
      const double below = e[k];  // subdiagonal of row k+1
      const double next_diag = d[k + 1] - lambda;
      const double next_sup = k + 2 < m ? e[k + 1] : 0;
      if (std::fabs(diag) >= std::fabs(below)) {
        const double pivot = diag != 0 ? diag : tiny;
        mult[k] = below / pivot;
        u0[k] = pivot;
        u1[k] = sup;
        u2[k] = 0;
        diag = next_diag - mult[k] * sup;
        sup = next_sup;
      } else {
        swapped[k] = 1;
        mult[k] = diag / below;
        u0[k] = below;
        u1[k] = next_diag;
        u2[k] = next_sup;
        diag = sup - mult[k] * next_diag;
        sup = -mult[k] * next_sup;
      }
    }
    u0[m - 1] = diag != 0 ? diag : tiny;
  }

  /// Solves (T - lambda I) x = b in place.
  void solve(double *x, std::size_t m) const {
    for (std::size_t k = 0; k + 1 < m; ++k) {
      if (swapped[k]) std::swap(x[k], x[k + 1]);
      x[k + 1] -= mult[k] * x[k];
    }
    x[m - 1] /= u0[m - 1];
    if (m >= 2) x[m - 2] = (x[m - 2] - u1[m - 2] * x[m - 1]) / u0[m - 2];
    for (std::size_t k = m >= 2 ? m - 2 : 0; k-- > 0;) x[k] = (x[k] - u1[k] * x[k + 1] - u2[k] * x[k + 2]) / u0[k];
  }
};

/// Eigenvectors of the unreduced tridiagonal block (d, e) of size m for its
/// ascending eigenvalues `lambda`, into the columns of z (m x m). False if a
/// residual is too large.
bool inverse_iteration(const double *d, const double *e, std::size_t m, const Eigen::VectorXd &lambda,
                       Eigen::MatrixXd &z) {
  double norm = 0;
  for (std::size_t i = 0; i < m; ++i)
    norm = std::max(norm, std::fabs(d[i]) + (i > 0 ? std::fabs(e[i - 1]) : 0) + (i + 1 < m ? std::fabs(e[i]) : 0));
  if (norm == 0) norm = 1;
  const double eps = std::numeric_limits<double>::epsilon();
  const double tiny = eps * norm;
  TridiagonalLu lu;
  z.resize(static_cast<Eigen::Index>(m), static_cast<Eigen::Index>(m));
  std::size_t cluster_start = 0;
  std::uint64_t seed = 0x9e3779b97f4a7c15ULL;
  for (std::size_t j = 0; j < m; ++j) {
    if (j > 0 && lambda(static_cast<Eigen::Index>(j)) - lambda(static_cast<Eigen::Index>(j - 1)) > kClusterGap * norm)
      cluster_start = j;
    // Equal eigenvalues would give equal vectors: nudge the shift apart
    // inside a cluster, as xSTEIN does.
    double shift = lambda(static_cast<Eigen::Index>(j));
    if (j > cluster_start) {
      const double prev = lambda(static_cast<Eigen::Index>(j - 1));
      if (shift - prev < 10 * tiny) shift = prev + 10 * tiny;
    }
    lu.factor(d, e, m, shift, tiny);
    double *x = z.col(static_cast<Eigen::Index>(j)).data();
    for (std::size_t i = 0; i < m; ++i) {
      seed = seed * 6364136223846793005ULL + 1442695040888963407ULL;
      x[i] = static_cast<double>(seed >> 11) * (1.0 / 9007199254740992.0) - 0.5;
    }
    for (int it = 0; it < 3; ++it) {
      lu.solve(x, m);
      // Twice-repeated Gram-Schmidt against the cluster's earlier vectors.
      for (int pass = 0; pass < 2; ++pass)
        for (std::size_t k = cluster_start; k < j; ++k) {
          const auto prev = z.col(static_cast<Eigen::Index>(k));
          auto cur = z.col(static_cast<Eigen::Index>(j));
          cur -= prev.dot(cur) * prev;
        }
      const double nx = z.col(static_cast<Eigen::Index>(j)).norm();
      if (!(nx > 0) || !std::isfinite(nx)) return false;
      z.col(static_cast<Eigen::Index>(j)) /= nx;
    }
    // Residual |T x - lambda x|.
    const double l = lambda(static_cast<Eigen::Index>(j));
    double r2 = 0;
    for (std::size_t i = 0; i < m; ++i) {
      double t = (d[i] - l) * x[i];
      if (i > 0) t += e[i - 1] * x[i - 1];
      if (i + 1 < m) t += e[i] * x[i + 1];
      r2 += t * t;
    }
    if (!(std::sqrt(r2) <= kResidualTol * norm * std::sqrt(static_cast<double>(m)))) return false;
  }
  return true;
}

}  // namespace

void symmetric_eigen(const Eigen::MatrixXd &h, Eigen::VectorXd &values, Eigen::MatrixXd &vectors) {
  const Eigen::Index n = h.rows();
  if (n <= kPlainSolverMax) {
    plain(h, values, vectors);
    return;
  }
  // Centre the spectrum: the Zeeman energy common to a block would otherwise
  // dominate the norm that every tolerance is relative to.
  const double centre = h.diagonal().mean();
  Eigen::MatrixXd centred = h;
  centred.diagonal().array() -= centre;
  Eigen::Tridiagonalization<Eigen::MatrixXd> tri(centred);
  const Eigen::VectorXd d = tri.diagonal();
  Eigen::VectorXd e = tri.subDiagonal();
  // Split where the off-diagonal is negligible (degenerate states of
  // symmetric spin systems show up exactly so).
  const double eps = std::numeric_limits<double>::epsilon();
  std::vector<Eigen::Index> starts{0};
  for (Eigen::Index i = 0; i + 1 < n; ++i)
    if (std::fabs(e(i)) <= eps * (std::fabs(d(i)) + std::fabs(d(i + 1)))) {
      e(i) = 0;
      starts.push_back(i + 1);
    }
  starts.push_back(n);
  Eigen::MatrixXd z = Eigen::MatrixXd::Zero(n, n);
  values.resize(n);
  for (std::size_t b = 0; b + 1 < starts.size(); ++b) {
    const Eigen::Index s = starts[b], m = starts[b + 1] - s;
    Eigen::VectorXd lambda;
    if (m == 1) {
      lambda = d.segment(s, 1);
      z(s, s) = 1;
    } else {
      Eigen::VectorXd db = d.segment(s, m);
      Eigen::VectorXd eb = e.segment(s, m - 1);
      Eigen::SelfAdjointEigenSolver<Eigen::MatrixXd> only_values;
      only_values.computeFromTridiagonal(db, eb, Eigen::EigenvaluesOnly);
      if (only_values.info() != Eigen::Success) {
        plain(h, values, vectors);
        return;
      }
      lambda = only_values.eigenvalues();
      Eigen::MatrixXd zb;
      if (!inverse_iteration(d.data() + s, e.data() + s, static_cast<std::size_t>(m), lambda, zb)) {
        plain(h, values, vectors);
        return;
      }
      z.block(s, s, m, m) = zb;
    }
    values.segment(s, m) = lambda;
  }
  // Ascending order across the split blocks.
  std::vector<Eigen::Index> order(static_cast<std::size_t>(n));
  for (Eigen::Index i = 0; i < n; ++i) order[static_cast<std::size_t>(i)] = i;
  std::stable_sort(order.begin(), order.end(), [&](Eigen::Index a, Eigen::Index b) { return values(a) < values(b); });
  Eigen::VectorXd sorted(n);
  Eigen::MatrixXd zs(n, n);
  for (Eigen::Index i = 0; i < n; ++i) {
    sorted(i) = values(order[static_cast<std::size_t>(i)]);
    zs.col(i) = z.col(order[static_cast<std::size_t>(i)]);
  }
  values = sorted.array() + centre;
  vectors.noalias() = tri.matrixQ() * zs;
}

}  // namespace nmrpred::simulation::detail
