#ifndef NMRPRED_SPIN_HPP
#define NMRPRED_SPIN_HPP

/// \file spin.hpp
/// Spin systems and their simulated line lists: exact quantum mechanics inside
/// clusters of strongly coupled spins, first-order splittings between them, and
/// a first-order description (multiplet) of every signal.
///
/// How a spectrum is computed (see simulate()):
///  1. Magnetic equivalence. Chemically equivalent spins (same isotope and the
///     same Spin::equivalence_class, or, for spins without a class, shifts
///     within SimulationOptions::equivalent_shift_tolerance_ppm) that couple
///     identically to every other spin form one group, handled as a composite
///     spin (total-spin decomposition with multiplicities). Chemically
///     equivalent spins that couple differently (the AA' of AA'XX') stay
///     separate spins.
///  2. Clusters. Groups of one isotope whose coupling is strong at the field
///     (|delta nu| < SimulationOptions::weak_coupling_ratio * |J|, both in Hz)
///     are joined into clusters, strongest pairs first, as long as the cluster's
///     largest Fz block stays within SimulationOptions::max_block_size (and
///     its cost, the sum of block sizes cubed, within 4 max_block_size^3; all
///     clusters together within 8 max_block_size^3). A strong pair that would
///     overflow a cap is treated first-order instead, and a warning says so:
///     the cost stays bounded whatever the input (a chain of 30 strongly
///     coupled spins takes a few tenths of a second with defaults).
///  3. Each cluster of the observed isotope is solved exactly: Hamiltonian
///     H = sum nu_g F_gz + sum J_gh F_g.F_h in the product basis of its composite
///     spins, one block per total Fz, each diagonalised, transitions through
///     F- between adjacent blocks, intensity |<f|F-|i>|^2. Spins of other
///     clusters that couple to the cluster's spins unequally are solved with
///     it, their couplings truncated to J Iz Iz (weak coupling; always so
///     between isotopes), as long as the joint problem stays small. Other
///     couplings to outside spins split the lines first-order (binomial or
///     multinomial patterns for groups, 1:1:1 for one spin-1 partner).
///  4. Lines closer than SimulationOptions::merge_tolerance_hz are merged.
///     To bound time and memory, a list that would grow past a few million
///     lines (a large exact cluster, or first-order splitting of many lines)
///     is pooled instead on a grid of a tenth of the line width or coarser,
///     with a warning; spectra drawn at that line width look the same.
///     Intensities are normalised so that the lines of the observed isotope add
///     up to the number of observed spins (each spin contributes 1).
///  5. Multiplets: each line belongs to the spin whose polarisation changes
///     most in the transition (a line that changes several spins equally,
///     such as those of two spins of one shift in different signals, is
///     shared equally), so every signal gets its lines and they add up to its
///     number of spins. Its label describes the signal as drawn at
///     SimulationOptions::line_width_hz (Lorentzian lines). The first-order
///     pattern of its resolved couplings to weakly coupled partners
///     (|delta nu| >= 3 |J|; couplings within a line width of each other
///     count as equal), the same without its smallest splittings, and a
///     singlet are drawn the same way; the one most like the signal gives the
///     label if their cosine similarity is at least 0.95, or else a pattern
///     whose peaks are the signal's highest ones (spacings within 15 % or
///     half a line width, heights within a factor 1.6) while every other
///     peak is below 45 % of the highest; otherwise "m". So the AA' half of
///     a para-disubstituted benzene reads "d" at 400 MHz, while an ABC, an
///     AB with |delta nu / J| below 3 or another strongly coupled signal
///     reads "m".
///
/// Conventions: frequencies in Hz from the reference (TMS for 1H, 2H and 13C)
/// are shift_ppm times the observed isotope's frequency in MHz; a positive J
/// raises the energy of antiparallel spins (H = sum nu Iz + sum J I.I, in Hz).
/// Only relative signs of couplings change a spectrum.
///
/// Thread rule: pure functions of their arguments; call from any thread.

#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include <nmrpred/couplings.hpp>
#include <nmrpred/export.hpp>
#include <nmrpred/shifts.hpp>

namespace nmrpred {

struct Prediction;  // nmrpred/predict.hpp

/// One line of a simulated spectrum. Plain value.
struct SpectralLine {
  double ppm = 0;        ///< position, ppm from TMS
  double hz = 0;         ///< position, Hz from TMS at the simulation's field
  double intensity = 0;  ///< relative intensity; the lines of a spectrum sum to its number of observed spins
};

/// Isotopes a spin system may hold. The value is the mass number.
enum class SpinNucleus : int { H1 = 1, H2 = 2, C13 = 13, F19 = 19, P31 = 31 };

/// A first-order description of one signal: what a chemist would write for it.
/// Plain value.
struct Multiplet {
  /// Observed nucleus for 1H and 13C spectra. For 2H, 19F and 31P spectra
  /// (which Nucleus cannot name) it keeps its default; read `isotope` there.
  Nucleus nucleus = Nucleus::H1;
  double ppm = 0;       ///< centre (intensity-weighted), ppm
  double ppm_low = 0;   ///< lowest line, ppm
  double ppm_high = 0;  ///< highest line, ppm
  /// The trade's letters: "s", "d", "t", "q", "p" (quintet), "sext", "sept",
  /// "dd", "dt", "td", "ddd", "tt", "m", "br s"; simulate() writes the pattern
  /// the signal looks like at the line width (see the file comment).
  std::string label;
  /// Couplings behind the label, Hz, largest first (one per splitting step:
  /// the mean of the couplings that step stands for); empty for "s", "m" and
  /// "br s".
  std::vector<double> j_hz;
  double integral = 0;       ///< nuclei the signal stands for
  std::vector<std::size_t> atoms;  ///< atoms (molecule simulations) or spin indices (direct spin systems)
  std::vector<SpectralLine> lines; ///< the lines of this signal, by increasing ppm
  /// The observed isotope (appended member; always set by simulate()).
  SpinNucleus isotope = SpinNucleus::H1;
};

/// "1H", "2H", "13C", "19F" or "31P". Static text; never null.
NMRPRED_API const char *spin_nucleus_name(SpinNucleus nucleus) noexcept;

/// The isotope named `name` ("1H", "2H", "13C", "19F", "31P"; surrounding
/// spaces ignored). Throws ArgumentError naming the accepted names otherwise.
NMRPRED_API SpinNucleus parse_spin_nucleus(std::string_view name);

/// Frequency of `nucleus` relative to 1H in the same magnet (the IUPAC
/// frequency ratio Xi / 100; 1 for 1H). Source: R. K. Harris, E. D. Becker,
/// S. M. Cabral de Menezes, R. Goodfellow, P. Granger, "NMR nomenclature.
/// Nuclear spin properties and conventions for chemical shifts", Pure Appl.
/// Chem. 2001, 73, 1795-1818, Table 1 (from memory). Returns 0 for a value
/// outside the enumeration.
NMRPRED_API double frequency_ratio(SpinNucleus nucleus) noexcept;

/// Twice the spin quantum number: 1 for spin-1/2 nuclei, 2 for 2H. Returns 0
/// for a value outside the enumeration.
NMRPRED_API int twice_spin(SpinNucleus nucleus) noexcept;

/// One nucleus of a spin system. Plain value.
struct Spin {
  double shift_ppm = 0;                  ///< chemical shift, ppm from the isotope's reference
  SpinNucleus nucleus = SpinNucleus::H1; ///< isotope
  /// Spins of one isotope with the same non-negative class are chemically
  /// equivalent (molecule simulations use the chemical class of the atom).
  /// -1: equivalence is decided from the shift alone (within
  /// SimulationOptions::equivalent_shift_tolerance_ppm of another classless spin).
  std::int64_t equivalence_class = -1;
  /// A proton that exchanges fast (OH, NH, SH): it takes part in no coupling
  /// (exchange averages them away) and its signal is described as "br s".
  bool exchangeable = false;
  friend bool operator==(const Spin &a, const Spin &b) {
    return a.shift_ppm == b.shift_ppm && a.nucleus == b.nucleus && a.equivalence_class == b.equivalence_class &&
           a.exchangeable == b.exchangeable;
  }
};

/// A scalar coupling between spins `i` and `j` (indices into SpinSystem::spins,
/// i != j, each pair at most once in either order). Plain value.
struct SpinCoupling {
  std::size_t i = 0;
  std::size_t j = 0;
  double j_hz = 0;  ///< signed coupling constant, Hz
  friend bool operator==(const SpinCoupling &a, const SpinCoupling &b) {
    return a.i == b.i && a.j == b.j && a.j_hz == b.j_hz;
  }
};

/// Spins and their couplings. Pairs not listed do not couple. Plain value.
struct SpinSystem {
  std::vector<Spin> spins;
  std::vector<SpinCoupling> couplings;
  friend bool operator==(const SpinSystem &a, const SpinSystem &b) {
    return a.spins == b.spins && a.couplings == b.couplings;
  }
};

/// Most spins a spin system may hold (the engine keeps an n x n coupling
/// table, and sorting out magnetic equivalence costs up to n^3 steps).
inline constexpr std::size_t kMaxSpins = 1000;

/// Transitions weaker than this (in the units of SpectralLine::intensity,
/// where each spin's lines add up to 1) are dropped before lines are merged:
/// far below what a spectrum shows (its dynamic range is about 1e-5), and
/// what they take away from the total is small (about 1e-6 of it for 30
/// strongly coupled spins).
inline constexpr double kMinLineIntensity = 1e-9;

/// Settings of a simulation. Plain value; new members are appended with a
/// default that keeps earlier results unchanged.
struct SimulationOptions {
  /// Spectrometer field as the 1H frequency, MHz (40..1200). Other isotopes
  /// resonate at field_mhz * frequency_ratio().
  double field_mhz = 400;
  /// Full width at half height of a line, Hz (0 < w <= 100). Splittings
  /// smaller than this are not resolved and are left out of multiplet labels.
  double line_width_hz = 1.0;
  /// Two groups of one isotope couple strongly, and are solved together
  /// exactly, when |delta nu| < weak_coupling_ratio * |J| (Hz at the field).
  /// 20 keeps the roof effect visible to the eye (common practice: spectra look
  /// first-order from delta nu / J of about 10 on); 0 makes every coupling
  /// first-order; a huge value (1e300) solves every coupled network exactly
  /// (within max_block_size). Must be >= 0 and not NaN.
  double weak_coupling_ratio = 20;
  /// Classless spins of one isotope whose shifts differ by at most this are
  /// chemically equivalent, ppm (0..0.01).
  double equivalent_shift_tolerance_ppm = 1e-5;
  /// Largest block of one total Fz that an exact problem may have (1..4096).
  /// A block of size n costs about n^3 operations: 512 admits 11 spin-1/2
  /// nuclei without symmetry (largest block 462), 1024 twelve (924), 4096
  /// fourteen (3432). Clusters that would grow beyond it are split at their
  /// weakest couplings, with a warning.
  std::size_t max_block_size = 512;
  /// Lines of one signal closer than this are merged into one line at their
  /// intensity-weighted position, Hz (0..1).
  double merge_tolerance_hz = 1e-4;
};

/// Throws ArgumentError naming the member if `options` is out of range.
/// Thread rule: pure.
NMRPRED_API void validate(const SimulationOptions &options);

/// Throws ArgumentError naming the first problem of `system`: no spins, more
/// than kMaxSpins, a shift or coupling that is not finite or is absurd
/// (|shift| > 1e4 ppm, |J| > 1e4 Hz), a coupling index out of range, a spin
/// coupled to itself, a pair listed twice (in either order), an isotope
/// outside the enumeration. Thread rule: pure.
NMRPRED_API void validate(const SpinSystem &system);

/// A simulated spectrum of one isotope. Plain value.
struct Simulation {
  SpinNucleus observed = SpinNucleus::H1;
  double field_mhz = 0;     ///< 1H frequency of the magnet, MHz
  double observed_mhz = 0;  ///< frequency of the observed isotope, MHz (field_mhz * frequency_ratio)
  /// Every line, by increasing ppm; lines of different signals closer than
  /// merge_tolerance_hz are merged here (not in the multiplets).
  std::vector<SpectralLine> lines;
  /// One per observed signal (set of chemically equivalent spins), by
  /// decreasing ppm (spectra are read downfield first).
  std::vector<Multiplet> multiplets;
  /// Remarks: couplings treated first-order because a cluster reached
  /// max_block_size, couplings left out, no spin of the observed isotope, ...
  std::vector<std::string> warnings;
};

/// Simulates the spectrum of `observe` for `system` (see the file comment).
/// Multiplet::atoms are spin indices. Throws ArgumentError for a bad system
/// (validate()), bad options or an observed isotope outside the enumeration;
/// InternalError if an eigensolver fails. A system without spins of `observe`
/// gives an empty spectrum and a warning. Thread rule: pure; call from any
/// number of threads at once. Blocks of an exact cluster with more than 100
/// states run on the system's LAPACK and BLAS (Debian's liblapack.so.3 and
/// libblas.so.3: OpenBLAS when libopenblas0-pthread is installed), smaller
/// ones on Eigen in the calling thread. The library starts no thread and sets
/// no thread count; a threaded OpenBLAS sizes its own pool from its
/// environment, so a caller that runs simulations in several threads of its
/// own should set OPENBLAS_NUM_THREADS=1 before the library is loaded, to
/// avoid running more threads than cores. Results are the same from run to
/// run; another BLAS or thread count may change their last digits (lines of
/// degenerate levels are summed, so the solver's choice of basis inside a
/// level does not matter).
NMRPRED_API Simulation simulate(const SpinSystem &system, SpinNucleus observe,
                                const SimulationOptions &options = {});

/// A spin system read from text, with the isotope to observe and the
/// simulation settings. Plain value.
struct SpinSystemInput {
  SpinSystem system;
  SpinNucleus observe = SpinNucleus::H1;
  SimulationOptions options;
};

/// Reads a spin system written as JSON (UTF-8), the one format every interface
/// accepts (`nmrpred simulate`, nmr_simulate_json(), Python simulate_json()):
///   {"mhz": 400, "spins": [{"shift": 2.1, "nucleus": "1H"}, ...],
///    "couplings": [[i, j, J_Hz], ...]}
/// "mhz" is SimulationOptions::field_mhz and is required; optional keys
/// "observe" (default "1H"), "line_width_hz", "weak_coupling_ratio",
/// "max_block_size", "merge_tolerance_hz", "equivalent_shift_tolerance_ppm"
/// set the other options (left out: SimulationOptions' defaults).
/// A spin is {"shift": ppm} with optional "nucleus" (a spin_nucleus_name()),
/// "class" (Spin::equivalence_class, integer >= 0) and "exchangeable"
/// (boolean), or a bare number (a 1H shift); "couplings" may be left out.
/// Throws ArgumentError whose message starts "spin system JSON:" and names the
/// key, spin or coupling at fault: text that is not JSON, unknown keys, wrong
/// types, negative indices, more than kMaxSpins spins. Ranges, indices and
/// duplicates are checked by validate() (simulate() calls it), not here; a
/// missing "mhz" is an error too.
/// Thread rule: pure.
NMRPRED_API SpinSystemInput parse_spin_system_json(std::string_view text);

/// The same, for callers with settings of their own (a C context, Python
/// keyword arguments): every key left out, "mhz" included, keeps its value
/// in `defaults`. Throws as the other overload, except for a missing "mhz".
/// Thread rule: pure.
NMRPRED_API SpinSystemInput parse_spin_system_json(std::string_view text, const SimulationOptions &defaults);

/// A spin system built from a molecule, with the atom behind each spin.
struct MoleculeSpinSystem {
  SpinSystem system;
  std::vector<std::size_t> atoms;     ///< per spin: its atom in Prediction::molecule
  std::vector<std::string> warnings;  ///< couplings or atoms left out, and why
};

/// The spin system behind a 1H or 13C spectrum of `prediction`:
///  - 1H: every observed proton with its predicted shift (protons the solvent
///    exchanged for deuterium are left out; exchangeable ones are kept,
///    uncoupled, for a "br s"), plus as coupling partners deuterium (spin 1),
///    19F and 31P atoms that couple to them. 13C satellites are not simulated.
///  - 13C: every carbon, proton-decoupled: the only couplings kept are J(C,F),
///    J(C,P) and J(C,D) (natural abundance: no J(C,C)).
/// Partners get shift 0 (their shifts are not predicted) and no couplings among
/// themselves, so they act as first-order partners. Equivalence classes are
/// the molecule's chemical classes. Spins come in the order of the atoms'
/// invariant ranks (AtomClasses::invariant_rank; atom index among equal
/// ranks), partners after the observed atoms, so that the simulation, which
/// settles ties in spin order, does not depend on how the structure was
/// written. `couplings` are typically
/// predict_couplings(prediction.molecule, prediction.classes, tables); pairs
/// of atoms that are not both in the spin system are ignored. Throws
/// ArgumentError if the prediction holds no shifts of `observe`, or a coupling
/// names an atom outside the molecule. Thread rule: pure.
NMRPRED_API MoleculeSpinSystem spin_system(const Prediction &prediction, const std::vector<Coupling> &couplings,
                                           Nucleus observe);

/// Simulates the 1H or 13C spectrum of a predicted molecule: spin_system()
/// then simulate(), with one Multiplet per observed signal whose atoms are the
/// atoms of the chemical class, and the warnings of both steps. Throws what
/// those two throw. Thread rule: pure.
NMRPRED_API Simulation simulate(const Prediction &prediction, const std::vector<Coupling> &couplings,
                                Nucleus observe, const SimulationOptions &options = {});

}  // namespace nmrpred

#endif
