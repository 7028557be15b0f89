// Exact solution of one spin problem: composite spins (magnetically equivalent
// groups) in one or more clusters. Inside a cluster couplings are full
// (J F_g.F_h); between clusters they are truncated to J F_gz F_hz (weak
// coupling). Only cluster 0 is observed. Private to src/simulation/.
#ifndef NMRPRED_SIMULATION_SPIN_EXACT_HPP
#define NMRPRED_SIMULATION_SPIN_EXACT_HPP

#include <cstddef>
#include <cstdint>
#include <utility>
#include <vector>

namespace nmrpred::simulation::detail {

/// A magnetically equivalent group of `count` spins of spin twice_spin/2.
struct ExactGroup {
  int twice_spin = 1;
  int count = 1;
  double hz = 0;    ///< resonance frequency, Hz
  int cluster = 0;  ///< 0: observed cluster; others: partners coupled weakly to it
};

struct ExactProblem {
  std::vector<ExactGroup> groups;
  std::vector<double> j_hz;  ///< groups.size()^2, symmetric, Hz; the diagonal is ignored
};

/// One transition. `group` is the observed group whose polarisation changes
/// most between the two states (the spin the line belongs to); a transition
/// that changes several groups equally comes once per group, its intensity
/// shared equally.
struct RawLine {
  double hz = 0;
  double intensity = 0;  ///< normalised: the lines of each observed spin add up to 1
  std::uint32_t group = 0;
};

/// Size of a problem, for the caps.
struct ExactSize {
  double max_block = 0;  ///< largest Fz block of any total-spin combination
  double states = 0;     ///< composite product states of the largest combination
  double cost = 0;       ///< about sum of block_size^3 over every block and combination
};

/// Size of the problem made of `groups` (cluster ids as given).
ExactSize exact_size(const std::vector<ExactGroup> &groups);

/// Weights of the total Fz of `count` uncorrelated spins twice_spin/2, from
/// M = -count*twice_spin/2 upwards in steps of 1; they add up to 1 (binomial
/// for spin 1/2, 1:1:1 for one spin 1, multinomial beyond).
std::vector<double> fz_distribution(int twice_spin, int count);

/// Every transition of cluster 0 with normalised intensity >= min_intensity.
/// Throws InternalError if an eigensolver fails.
std::vector<RawLine> solve_exact(const ExactProblem &problem, double min_intensity);

}  // namespace nmrpred::simulation::detail

#endif
