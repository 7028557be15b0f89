#ifndef NMRPRED_MATCH_HPP
#define NMRPRED_MATCH_HPP

/// \file match.hpp
/// Comparing measured peak lists (measured.hpp) with predictions (predict.hpp):
/// which predicted signals explain which observed peaks, how well the whole
/// spectrum agrees with one structure, and which of several candidate
/// structures agrees best. docs/matching.md explains the cost model, the score,
/// the verdict thresholds and the probabilities.
///
/// Thread rule: pure functions of their arguments; call from any thread, sharing
/// one Tables. Results are plain values that refer to nothing else.
///
/// Errors: ArgumentError for unusable options or a request that cannot be
/// answered (no candidate, no measured spectrum, two spectra of one nucleus, a
/// nucleus the prediction left out); InputError for unusable measured data
/// (empty peak list, a shift or integral that is not a finite number, a range
/// whose ends are reversed), naming the spectrum and the peak.

#include <cstddef>
#include <optional>
#include <string>
#include <vector>

#include <nmrpred/export.hpp>
#include <nmrpred/measured.hpp>
#include <nmrpred/predict.hpp>
#include <nmrpred/shifts.hpp>
#include <nmrpred/tables.hpp>

namespace nmrpred {

/// How well a measured data set agrees with one structure. The thresholds are
/// listed in docs/matching.md (section "Verdict").
enum class Verdict : int {
  Consistent = 0,    ///< every observed peak explained within the prediction's uncertainty
  Doubtful = 1,      ///< some disagreement, but none that rules the structure out
  Inconsistent = 2,  ///< disagreement the prediction's uncertainty cannot explain
};

/// "consistent", "doubtful" or "inconsistent". Static text; never null.
NMRPRED_API const char *verdict_name(Verdict verdict) noexcept;

/// Settings of a match. Plain value; new members are appended with a default
/// that keeps earlier results unchanged. Costs are in the units of the
/// residual term (docs/matching.md, "Cost"): a signal 1 standard deviation
/// from its peak costs about 0.9, one 3 standard deviations away about 4.7.
struct MatchOptions {
  /// Degrees of freedom of the robust residual term nu * ln(1 + z^2 / nu)
  /// (Student-t shaped): close to z^2 near the prediction, growing only
  /// logarithmically for gross errors. Must be > 0.
  double robust_nu = 4.0;
  /// Measurement uncertainty added in quadrature to the prediction's
  /// (referencing and rounding of reported values), ppm, per nucleus. >= 0.
  double c13_measurement_ppm = 0.2;
  double h1_measurement_ppm = 0.02;
  /// Cost of a predicted 13C signal left without a peak, and of each predicted
  /// proton left without a peak (exchangeable protons cost nothing). >= 0.
  double missing_cost = 6.0;
  /// Cost of an observed peak that no prediction explains (13C lines, and 1H
  /// peaks given without an integral; an integrated 1H peak is charged
  /// through its integral instead). Solvent peaks cost nothing. >= 0.
  double unexplained_cost = 6.0;
  /// 13C: cost of each signal beyond the first placed on one observed line
  /// (two carbons of different classes that coincide). >= 0.
  double overlap_cost = 2.0;
  /// 1H: cost per proton when the observed multiplicity cannot be the
  /// predicted one as reported (unresolved small couplings and near-equal
  /// couplings allowed for, docs/matching.md); used only when both are known
  /// and neither is "m". >= 0.
  double multiplicity_cost = 2.0;
  /// 13C: cost of a signal whose attached protons differ from the observed
  /// peak's (DEPT editing; used only when the peak gives them). >= 0.
  double attached_h_cost = 6.0;
  /// Use observed 1H integrals (off: integrals are ignored).
  bool use_integrals = true;
  /// An observed peak within this distance of a residual solvent signal may
  /// stay unexplained at no cost, ppm (1H, 13C). Water is given a wider
  /// window, as its position moves with concentration and temperature. >= 0.
  double h1_solvent_window_ppm = 0.03;
  double c13_solvent_window_ppm = 0.3;
  double water_window_ppm = 0.15;
  /// Number of mismatches described in words in MatchResult::worst.
  std::size_t worst_count = 3;
  /// Temperature of the probabilities across candidates: p ~ exp(-score / T).
  /// See docs/matching.md ("Probabilities") for how the default was chosen.
  /// Must be > 0.
  double probability_temperature = 2.0;
};

/// Throws ArgumentError naming the member if `options` is out of range.
NMRPRED_API void validate(const MatchOptions &options);

/// What became of one observed peak.
enum class PeakRole : int {
  Assigned = 0,     ///< one or more predicted signals sit on it
  Solvent = 1,      ///< residual solvent or water signal, set aside
  Unexplained = 2,  ///< no prediction explains it
};

/// "assigned", "solvent" or "unexplained". Static text; never null.
NMRPRED_API const char *peak_role_name(PeakRole role) noexcept;

/// One observed peak and what sits on it. Plain value.
struct PeakMatch {
  std::size_t peak = 0;  ///< index into the spectrum's peaks
  double ppm = 0;        ///< observed centre, ppm from TMS
  double ppm_low = 0;    ///< observed range (equal to ppm for a single value)
  double ppm_high = 0;
  /// 1H: the integral in protons as used (after scaling, see
  /// docs/matching.md); absent when not given or integrals are off.
  std::optional<double> integral;
  PeakRole role = PeakRole::Unexplained;
  /// Indices into Prediction::signals(nucleus) of the signals placed here, ascending.
  std::vector<std::size_t> signals;
  /// Atoms of those signals, ascending (1H: the protons).
  std::vector<std::size_t> atoms;
  /// Nuclei placed here: protons for 1H, signals for 13C.
  int assigned_count = 0;
  /// Cost of the peak's occupancy (unexplained, overlap or integral term).
  double cost = 0;
};

/// One predicted signal and the peak it was placed on. Plain value.
struct SignalMatch {
  std::size_t signal = 0;           ///< index into Prediction::signals(nucleus)
  double predicted_ppm = 0;         ///< ppm from TMS
  double uncertainty_ppm = 0;       ///< prediction's one standard deviation, ppm
  std::optional<std::size_t> peak;  ///< index into the spectrum's peaks; empty: left without a peak
  /// Observed minus predicted, ppm (0 inside a range peak; to the nearer end
  /// outside it). 0 when there is no peak.
  double residual_ppm = 0;
  /// residual_ppm over the combined uncertainty (prediction and measurement).
  double z = 0;
  /// Cost of this signal (residual, multiplicity and attached-H terms, or the
  /// missing cost), summed over its units (1H: protons).
  double cost = 0;
  bool exchangeable = false;        ///< 1H: OH, NH or SH protons (optional)
  bool multiplicity_mismatch = false;
  bool attached_h_mismatch = false;
};

/// The match of one measured spectrum. Plain value.
struct SpectrumMatch {
  Nucleus nucleus = Nucleus::H1;
  std::size_t spectrum = 0;  ///< index into the measured spectra passed in
  std::string solvent;       ///< solvent whose signals were set aside (its table name)
  std::vector<PeakMatch> peaks;      ///< one per observed peak, in input order
  std::vector<SignalMatch> signals;  ///< one per predicted signal, in Prediction order
  double cost = 0;                   ///< total cost of this spectrum
  /// True when the assignment is provably of minimum cost: the relaxed
  /// min-cost flow already kept every equivalence class on one peak (always
  /// so for 13C), or the bounded branch and bound over split classes finished.
  /// False: the best found within that bound (docs/matching.md, "Assignment").
  bool proven_optimal = true;
  /// Lower bound on the cost of any assignment (the root relaxation's cost).
  double lower_bound = 0;
};

/// Everything a match says about one structure. Plain value.
struct MatchResult {
  std::vector<SpectrumMatch> spectra;  ///< in the order of the measured spectra
  /// Sum of the spectra's costs: 0 is perfect agreement, larger is worse
  /// (see docs/matching.md, "Score"). Comparable between candidates matched
  /// against the same measured data.
  double score = 0;
  Verdict verdict = Verdict::Consistent;
  /// Why the verdict is not "consistent" (empty when it is), in words.
  std::vector<std::string> reasons;
  /// The worst mismatches in words, worst first, at most MatchOptions::worst_count,
  /// e.g. "13C 171.2 observed, nearest prediction C5 at 160.3 +- 2.5 ppm (4.4 sigma)".
  std::vector<std::string> worst;
  // Summary figures over all spectra (docs/matching.md, "Verdict").
  double max_abs_z = 0;           ///< largest |z| of a placed signal
  double chi2_p_value = 1;        ///< chance of a sum of z^2 at least this large if the model holds
  std::size_t placed_signals = 0;       ///< signals placed on a peak
  std::size_t missing_signals = 0;      ///< non-exchangeable signals left without a peak
  std::size_t unexplained_peaks = 0;    ///< peaks no prediction explains (solvent excluded)
  std::size_t solvent_peaks = 0;        ///< peaks set aside as solvent or water
  std::size_t integral_mismatches = 0;  ///< 1H peaks whose integral is off by more than rounding
  std::size_t multiplicity_mismatches = 0;
  std::size_t attached_h_mismatches = 0;
  /// Remarks that do not change the result (solvent of the data unknown or
  /// different from the prediction's, integrals rescaled, ...).
  std::vector<std::string> warnings;
};

/// Matches `measured` (at most one spectrum per nucleus, 1H and/or 13C)
/// against `prediction`. Observed peaks near the residual signals of the
/// measured spectrum's solvent (when it names one find_solvent knows, else
/// the prediction's solvent) are set aside. Throws ArgumentError when
/// `measured` is empty, holds two spectra of one nucleus, names a nucleus the
/// prediction did not predict, or `options` is out of range; InputError when a
/// spectrum has no peak or a peak holds a value that is not a finite number
/// (or a reversed range, or a negative integral). A prediction without signals
/// for a nucleus (a 1H list against a molecule without hydrogen) is not an
/// error: every peak is unexplained and the verdict says so.
NMRPRED_API MatchResult match(const Prediction &prediction, const std::vector<MeasuredSpectrum> &measured,
                              const Tables &tables, const MatchOptions &options = {});

/// Candidates matched against one measured data set, best first.
struct Ranking {
  /// One result per candidate, in the order the candidates were given.
  std::vector<MatchResult> results;
  /// Candidate indices, best (lowest score) first; ties keep input order.
  std::vector<std::size_t> order;
  /// Per candidate (input order): exp(-score / T) normalised over the
  /// candidates (MatchOptions::probability_temperature), the probability that
  /// it is the right one if one of them is. See docs/matching.md.
  std::vector<double> probabilities;
  /// Score of the second best minus score of the best (>= 0); 0 with one candidate.
  double margin = 0;
};

/// Matches every candidate against `measured` and ranks them. Throws
/// ArgumentError when `candidates` is empty, and whatever match() throws
/// (the measured data are checked once, before any candidate).
NMRPRED_API Ranking rank_candidates(const std::vector<Prediction> &candidates,
                                    const std::vector<MeasuredSpectrum> &measured, const Tables &tables,
                                    const MatchOptions &options = {});

/// Serializes one match as
///   {"score", "verdict", "reasons": [...], "worst": [...], "warnings": [...],
///    "summary": {"max_abs_z", "chi2_p_value", "placed_signals", "missing_signals",
///                "unexplained_peaks", "solvent_peaks", "integral_mismatches",
///                "multiplicity_mismatches", "attached_h_mismatches"},
///    "spectra": [{"nucleus": "1H"|"13C", "spectrum", "solvent", "cost",
///                 "lower_bound", "proven_optimal",
///                 "assignment": [{"peak", "shift", "range": [low, high],
///                                 "integral", "role", "signals", "atoms",
///                                 "assigned", "cost"}, ...],
///                 "signals": [{"signal", "shift", "shift_uncertainty", "peak",
///                              "residual", "z", "cost", "exchangeable"}, ...]}]}
/// with "integral" and "peak" null when absent, shifts in ppm from TMS.
/// Keys are only ever added. Throws only std::bad_alloc.
NMRPRED_API std::string to_json(const MatchResult &result, const JsonOptions &options = {});

/// Serializes a ranking as
///   {"ranking": [{"candidate", "score", "verdict", "probability"}, ...] (best first),
///    "margin", "candidates": [<to_json of each MatchResult>, ...] (input order)}.
/// Throws only std::bad_alloc.
NMRPRED_API std::string to_json(const Ranking &ranking, const JsonOptions &options = {});

}  // namespace nmrpred

#endif
