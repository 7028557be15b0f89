// Exact spin problems (spin_exact.hpp): composite-spin product basis, one
// Hamiltonian block per tuple of cluster Fz values, transitions through F-.
#include "simulation/spin_exact.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

#include <Eigen/Dense>
#include <Eigen/SparseCore>
#include <fmt/format.h>

#include <nmrpred/error.hpp>

#include "simulation/spin_eigen.hpp"

namespace nmrpred::simulation::detail {

namespace {

/// Polarisation changes (of the total 1 a line carries) closer than this are
/// equal: far above rounding (about 1e-15) and far below any real difference
/// between spins (a shift difference of 1e-5 ppm against J = 10 Hz gives 1e-4).
constexpr double kTiedChange = 1e-9;

/// Coefficients of (1 + x + ... + x^twice_spin)^count / (twice_spin + 1)^count:
/// the fraction of the product states of `count` spins with each total
/// K = M + count*twice_spin/2. Normalised at every step, so that large groups
/// neither overflow nor lose precision.
std::vector<double> state_fractions(int twice_spin, int count) {
  std::vector<double> c{1.0};
  const double share = 1.0 / (twice_spin + 1);
  for (int n = 0; n < count; ++n) {
    std::vector<double> next(c.size() + static_cast<std::size_t>(twice_spin), 0.0);
    for (std::size_t k = 0; k < c.size(); ++k)
      for (int d = 0; d <= twice_spin; ++d) next[k + static_cast<std::size_t>(d)] += c[k] * share;
    c = std::move(next);
  }
  return c;
}

/// Total-spin decomposition of a group: (2F, fraction of the group's states
/// in multiplets of total spin F, divided by 2F + 1) for every F that occurs.
/// A multiplet of total spin F holds the states M = -F..F, so the number of
/// multiplets with spin F is count(M = F) - count(M = F + 1).
std::vector<std::pair<int, double>> total_spins(int twice_spin, int count) {
  const std::vector<double> c = state_fractions(twice_spin, count);
  const int top = twice_spin * count;  // 2 * largest F
  std::vector<std::pair<int, double>> out;
  for (int f2 = top; f2 >= 0; f2 -= 2) {
    const std::size_t k = static_cast<std::size_t>((f2 + top) / 2);
    const double above = k + 1 < c.size() ? c[k + 1] : 0.0;
    const double share = c[k] - above;
    // Exact counts are integers: a share far below one multiplet's is rounding.
    if (share > 1e-12 * c[k]) out.emplace_back(f2, share);
  }
  return out;
}

/// Block sizes (by total K) of a product of spins 2F = f2[g].
std::vector<double> block_sizes(const std::vector<int> &f2) {
  std::vector<double> c{1.0};
  for (int f : f2) {
    std::vector<double> next(c.size() + static_cast<std::size_t>(f), 0.0);
    for (std::size_t k = 0; k < c.size(); ++k)
      for (int d = 0; d <= f; ++d) next[k + static_cast<std::size_t>(d)] += c[k];
    c = std::move(next);
  }
  return c;
}

/// sqrt(F(F+1) - m(m+1)) (raising) with F = f2/2, m = m2/2.
inline double raise_coefficient(int f2, int m2) {
  return 0.5 * std::sqrt(static_cast<double>(f2 * (f2 + 2) - m2 * (m2 + 2)));
}
/// sqrt(F(F+1) - m(m-1)) (lowering).
inline double lower_coefficient(int f2, int m2) {
  return 0.5 * std::sqrt(static_cast<double>(f2 * (f2 + 2) - m2 * (m2 - 2)));
}

/// Energies (Hz) closer than this make one degenerate level: far above the
/// solvers' rounding (about 1e-12 of a block's spread, 1e-8 Hz at most) and
/// far below the 1e-4 Hz at which lines are merged anyway.
constexpr double kDegenerateHz = 1e-7;

struct Eigensystem {
  std::size_t label = std::numeric_limits<std::size_t>::max();
  Eigen::VectorXd energy;
  Eigen::MatrixXd vectors;  // columns: eigenvectors in the block's product basis
  Eigen::MatrixXd polarisation;  // observed group x eigenstate: <F_gz> (a state's values contiguous)
  // Degenerate levels: runs of eigenstates of equal energy (level l holds
  // states level_start[l] .. level_start[l + 1] - 1), each with its mean
  // energy and the mean polarisation of its states (observed group x level).
  std::vector<Eigen::Index> level_start;
  Eigen::VectorXd level_energy;
  Eigen::MatrixXd level_polarisation;

  // Inside a degenerate level the eigenvectors may be any orthonormal basis
  // of its space, and which one a solver returns differs between LAPACK
  // builds, BLAS thread counts and Eigen. Transitions are therefore summed
  // over pairs of levels, and a line is assigned by the levels' mean
  // polarisations: sums over a level's states (the squared amplitudes, the
  // traces of F_gz) do not depend on that choice. Before, the same molecule
  // gave other line lists on one and on two OpenBLAS threads (232 of 2,000
  // NCI records, 2 multiplet labels). A level of one state gives what its
  // state gives.
  void find_levels() {
    const Eigen::Index n = energy.size();
    level_start.clear();
    for (Eigen::Index s = 0; s < n; ++s)
      if (s == 0 || energy(s) - energy(s - 1) >= kDegenerateHz) level_start.push_back(s);
    level_start.push_back(n);
    const auto levels = static_cast<Eigen::Index>(level_start.size() - 1);
    level_energy.resize(levels);
    level_polarisation.resize(polarisation.rows(), levels);
    for (Eigen::Index l = 0; l < levels; ++l) {
      const Eigen::Index first = level_start[static_cast<std::size_t>(l)];
      const Eigen::Index size = level_start[static_cast<std::size_t>(l) + 1] - first;
      level_energy(l) = energy.segment(first, size).mean();
      level_polarisation.col(l) = polarisation.middleCols(first, size).rowwise().mean();
    }
  }
};

/// One combination of total spins: every group a single composite spin 2F = f2[g].
void solve_combination(const ExactProblem &problem, const std::vector<int> &f2, double weight, double min_intensity,
                       std::vector<RawLine> &out) {
  const std::size_t ng = problem.groups.size();
  // Clusters present, cluster 0 first (the observed one).
  std::vector<int> cluster_ids;
  for (const auto &g : problem.groups)
    if (std::find(cluster_ids.begin(), cluster_ids.end(), g.cluster) == cluster_ids.end())
      cluster_ids.push_back(g.cluster);
  std::sort(cluster_ids.begin(), cluster_ids.end());
  std::vector<std::size_t> local_cluster(ng);
  std::vector<std::size_t> kmax(cluster_ids.size(), 0);
  for (std::size_t g = 0; g < ng; ++g) {
    local_cluster[g] = static_cast<std::size_t>(
        std::find(cluster_ids.begin(), cluster_ids.end(), problem.groups[g].cluster) - cluster_ids.begin());
    kmax[local_cluster[g]] += static_cast<std::size_t>(f2[g]);
  }
  // Labels: K of cluster 0 varies fastest, so that F- maps label L to L - 1.
  std::vector<std::size_t> label_stride(cluster_ids.size(), 1);
  for (std::size_t c = 1; c < cluster_ids.size(); ++c) label_stride[c] = label_stride[c - 1] * (kmax[c - 1] + 1);
  const std::size_t label_count = label_stride.back() * (kmax.back() + 1);

  std::vector<std::size_t> radix_stride(ng, 1);
  for (std::size_t g = 1; g < ng; ++g) radix_stride[g] = radix_stride[g - 1] * static_cast<std::size_t>(f2[g - 1] + 1);
  const std::size_t states = ng == 0 ? 1 : radix_stride.back() * static_cast<std::size_t>(f2.back() + 1);

  // Group the product states by label; remember each state's place in its block.
  std::vector<std::vector<std::uint32_t>> blocks(label_count);
  std::vector<std::uint32_t> index_in_block(states);
  std::vector<int> k(ng);
  for (std::size_t code = 0; code < states; ++code) {
    std::size_t rest = code, label = 0;
    for (std::size_t g = 0; g < ng; ++g) {
      const std::size_t kg = rest % static_cast<std::size_t>(f2[g] + 1);
      rest /= static_cast<std::size_t>(f2[g] + 1);
      label += kg * label_stride[local_cluster[g]];
    }
    index_in_block[code] = static_cast<std::uint32_t>(blocks[label].size());
    blocks[label].push_back(static_cast<std::uint32_t>(code));
  }

  std::vector<std::size_t> observed;  // groups of cluster 0
  for (std::size_t g = 0; g < ng; ++g)
    if (local_cluster[g] == 0) observed.push_back(g);

  auto decode = [&](std::size_t code) {
    for (std::size_t g = 0; g < ng; ++g) {
      k[g] = static_cast<int>(code % static_cast<std::size_t>(f2[g] + 1));
      code /= static_cast<std::size_t>(f2[g] + 1);
    }
  };

  Eigensystem previous;
  Eigensystem current;
  for (std::size_t label = 0; label < label_count; ++label) {
    const auto &block = blocks[label];
    if (block.empty()) continue;
    const Eigen::Index n = static_cast<Eigen::Index>(block.size());
    Eigen::MatrixXd h = Eigen::MatrixXd::Zero(n, n);
    for (Eigen::Index col = 0; col < n; ++col) {
      const std::size_t code = block[static_cast<std::size_t>(col)];
      decode(code);
      double diag = 0;
      for (std::size_t g = 0; g < ng; ++g) {
        const int m2g = 2 * k[g] - f2[g];
        diag += problem.groups[g].hz * 0.5 * m2g;
        for (std::size_t q = g + 1; q < ng; ++q) {
          const double j = problem.j_hz[g * ng + q];
          if (j != 0) diag += j * 0.25 * m2g * (2 * k[q] - f2[q]);
        }
      }
      h(col, col) = diag;
      // Flip-flop terms (J/2)(F_g+ F_q- + F_g- F_q+) inside a cluster; each
      // ordered pair (g raised, q lowered) fills one element, the reverse pair
      // fills its mirror.
      for (std::size_t g = 0; g < ng; ++g) {
        if (k[g] >= f2[g]) continue;
        const int m2g = 2 * k[g] - f2[g];
        for (std::size_t q = 0; q < ng; ++q) {
          if (q == g || k[q] == 0 || local_cluster[q] != local_cluster[g]) continue;
          const double j = problem.j_hz[g * ng + q];
          if (j == 0) continue;
          const int m2q = 2 * k[q] - f2[q];
          const std::size_t target = code + radix_stride[g] - radix_stride[q];
          h(static_cast<Eigen::Index>(index_in_block[target]), col) +=
              0.5 * j * raise_coefficient(f2[g], m2g) * lower_coefficient(f2[q], m2q);
        }
      }
    }
    current.label = label;
    symmetric_eigen(h, current.energy, current.vectors);
    // Polarisation of each observed group in each eigenstate, for assigning lines.
    Eigen::MatrixXd mz(n, static_cast<Eigen::Index>(observed.size()));
    for (Eigen::Index row = 0; row < n; ++row) {
      decode(block[static_cast<std::size_t>(row)]);
      for (std::size_t o = 0; o < observed.size(); ++o)
        mz(row, static_cast<Eigen::Index>(o)) = 0.5 * (2 * k[observed[o]] - f2[observed[o]]);
    }
    current.polarisation.noalias() = mz.transpose() * current.vectors.cwiseAbs2();
    current.find_levels();

    const std::size_t k0 = label % (kmax[0] + 1);
    if (k0 > 0 && previous.label == label - 1) {
      // F- of cluster 0 from this block (source states i) to the previous one (f).
      const Eigen::Index nf = previous.vectors.rows();
      std::vector<Eigen::Triplet<double>> triplets;
      triplets.reserve(static_cast<std::size_t>(n) * observed.size());
      for (Eigen::Index col = 0; col < n; ++col) {
        const std::size_t code = block[static_cast<std::size_t>(col)];
        decode(code);
        for (std::size_t g : observed) {
          if (k[g] == 0) continue;
          const std::size_t target = code - radix_stride[g];
          triplets.emplace_back(static_cast<Eigen::Index>(index_in_block[target]), col,
                                lower_coefficient(f2[g], 2 * k[g] - f2[g]));
        }
      }
      Eigen::SparseMatrix<double> lower(nf, n);
      lower.setFromTriplets(triplets.begin(), triplets.end());
      // amplitude(f, i) = <f|F-|i> = V_f^T (L V_i) = (L^T V_f)^T V_i: one
      // sparse product and one GEMM, whose cost is nf * nf * n or nf * n * n;
      // take the cheaper orientation.
      Eigen::MatrixXd amplitude;
      if (nf <= n) {
        const Eigen::MatrixXd moved = lower * current.vectors;
        transposed_product(previous.vectors, moved, amplitude);
      } else {
        const Eigen::MatrixXd moved = lower.transpose() * previous.vectors;
        transposed_product(moved, current.vectors, amplitude);
      }
      std::vector<std::uint32_t> tied;
      std::vector<double> change(observed.size());
      const auto levels_i = static_cast<Eigen::Index>(current.level_start.size() - 1);
      const auto levels_f = static_cast<Eigen::Index>(previous.level_start.size() - 1);
      for (Eigen::Index li = 0; li < levels_i; ++li) {
        const Eigen::Index i0 = current.level_start[static_cast<std::size_t>(li)];
        const Eigen::Index ni = current.level_start[static_cast<std::size_t>(li) + 1] - i0;
        for (Eigen::Index lf = 0; lf < levels_f; ++lf) {
          const Eigen::Index f0 = previous.level_start[static_cast<std::size_t>(lf)];
          const Eigen::Index nf_level = previous.level_start[static_cast<std::size_t>(lf) + 1] - f0;
          double squared = 0;
          if (ni == 1 && nf_level == 1) {
            const double a = amplitude(f0, i0);
            squared = a * a;
          } else {
            squared = amplitude.block(f0, i0, nf_level, ni).squaredNorm();
          }
          const double intensity = squared * weight;
          if (intensity < min_intensity) continue;
          double best_change = -std::numeric_limits<double>::infinity();
          for (std::size_t o = 0; o < observed.size(); ++o) {
            change[o] = current.level_polarisation(static_cast<Eigen::Index>(o), li) -
                        previous.level_polarisation(static_cast<Eigen::Index>(o), lf);
            best_change = std::max(best_change, change[o]);
          }
          // Groups whose polarisation changes equally (two spins of one shift
          // but different signals, such as a diastereotopic CH2 predicted at
          // one shift) share the line: giving it to the first would leave the
          // other signal without lines (issue 5).
          tied.clear();
          for (std::size_t o = 0; o < observed.size(); ++o)
            if (change[o] >= best_change - kTiedChange) tied.push_back(static_cast<std::uint32_t>(observed[o]));
          const double share = intensity / static_cast<double>(tied.size());
          for (std::uint32_t g : tied)
            out.push_back({current.level_energy(li) - previous.level_energy(lf), share, g});
        }
      }
    }
    std::swap(previous, current);
  }
}

}  // namespace

std::vector<double> fz_distribution(int twice_spin, int count) { return state_fractions(twice_spin, count); }

ExactSize exact_size(const std::vector<ExactGroup> &groups) {
  // Blocks are labelled by the K of every cluster, so a block's size is the
  // product of one block size per cluster.
  std::vector<int> ids;
  for (const auto &g : groups)
    if (std::find(ids.begin(), ids.end(), g.cluster) == ids.end()) ids.push_back(g.cluster);
  ExactSize size{1, 1, 1};
  for (int id : ids) {
    std::vector<int> f2;
    double combinations = 1;
    for (const auto &g : groups) {
      if (g.cluster != id) continue;
      f2.push_back(g.twice_spin * g.count);
      combinations *= static_cast<double>(total_spins(g.twice_spin, g.count).size());
    }
    const std::vector<double> sizes = block_sizes(f2);
    double largest = 0, states = 0, cost = 0;
    for (double s : sizes) {
      largest = std::max(largest, s);
      states += s;
      cost += s * s * s;
    }
    size.max_block *= largest;
    size.states *= states;
    size.cost *= cost * combinations;
  }
  return size;
}

std::vector<RawLine> solve_exact(const ExactProblem &problem, double min_intensity) {
  const std::size_t ng = problem.groups.size();
  if (problem.j_hz.size() != ng * ng) throw InternalError("solve_exact: coupling table of the wrong size");
  std::vector<RawLine> out;
  if (ng == 0) return out;
  // Intensities are divided by the trace of F+F- per observed spin over the
  // whole space, dim * (2/3) I(I+1), so each observed spin's lines add up to
  // 1; the total-spin shares already carry the 1/dim.
  int observed_twice_spin = 0;
  std::vector<std::vector<std::pair<int, double>>> spins(ng);
  for (std::size_t g = 0; g < ng; ++g) {
    const auto &grp = problem.groups[g];
    if (grp.cluster == 0) observed_twice_spin = grp.twice_spin;
    spins[g] = total_spins(grp.twice_spin, grp.count);
  }
  if (observed_twice_spin == 0) return out;
  const double spin = 0.5 * observed_twice_spin;
  const double norm = (2.0 / 3.0) * spin * (spin + 1);

  // Every combination of total spins is an independent problem; its lines
  // count as often as the combination occurs.
  std::vector<std::size_t> choice(ng, 0);
  std::vector<int> f2(ng);
  for (;;) {
    double share = 1;
    for (std::size_t g = 0; g < ng; ++g) {
      f2[g] = spins[g][choice[g]].first;
      share *= spins[g][choice[g]].second;
    }
    // A combination too rare to give any line above the threshold is
    // skipped: |<f|F-|i>| <= sum of |F_g-| <= sum of (2F_g + 1) over the
    // observed groups.
    double amplitude_bound = 0;
    for (std::size_t g = 0; g < ng; ++g)
      if (problem.groups[g].cluster == 0) amplitude_bound += f2[g] + 1;
    if (share / norm * amplitude_bound * amplitude_bound >= min_intensity)
      solve_combination(problem, f2, share / norm, min_intensity, out);
    std::size_t g = 0;
    while (g < ng && ++choice[g] == spins[g].size()) choice[g++] = 0;
    if (g == ng) break;
  }
  return out;
}

}  // namespace nmrpred::simulation::detail
