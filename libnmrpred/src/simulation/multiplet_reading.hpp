// The first-order reading of a simulated multiplet: which pattern of the
// trade's letters ("d", "dd", "qd", ...) the signal looks like at the line
// width, or "m" when none does. Private to src/simulation/.
#ifndef NMRPRED_SIMULATION_MULTIPLET_READING_HPP
#define NMRPRED_SIMULATION_MULTIPLET_READING_HPP

#include <string>
#include <utility>
#include <vector>

namespace nmrpred::simulation::detail {

/// One splitting step of a first-order pattern: every partner splits by the
/// same j_hz; a partner of spin 1/2 counts 1 in the label, a spin-1 partner
/// (2H) 2 (its 1:1:1 triplet reads like a 1:2:1 one).
struct SplitStep {
  double j_hz = 0;                  ///< |J|, Hz
  std::vector<int> partner_twice;   ///< twice the spin of each partner
};

/// A first-order reading: the label and its couplings (Hz, largest first).
struct Reading {
  std::string label;
  std::vector<double> j_hz;
};

/// The pattern that `lines` ((Hz, intensity), any order) look like when each
/// line is drawn as a Lorentzian of full width `line_width_hz`. Tried: each
/// of `candidates` (step lists, largest J first: the predicted couplings),
/// the same without its smallest steps, and a singlet, each drawn the same
/// way about the signal's intensity-weighted centre. The one most like the
/// signal (cosine similarity of the drawings) is taken if that is at least
/// kReadingSimilarity; else a pattern of two or more peaks whose peaks are
/// the signal's highest ones, with every other peak of the signal minor
/// (see multiplet_reading.cpp); else "m". Thread rule: pure.
Reading read_multiplet(const std::vector<std::pair<double, double>> &lines,
                       const std::vector<std::vector<SplitStep>> &candidates, double line_width_hz);

/// Lowest cosine similarity between the drawn signal and a drawn first-order
/// pattern for the pattern to read it outright: the lines and relative
/// intensities a chemist reads are then those of the pattern (common
/// practice; the two lines of one spin of an AB pair at |delta nu / J| = 3,
/// intensities 1 : 1.9, give 0.95 against a 1:1 doublet when aligned).
inline constexpr double kReadingSimilarity = 0.95;

}  // namespace nmrpred::simulation::detail

#endif
