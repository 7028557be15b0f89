#ifndef NMRPRED_MEASURED_HPP
#define NMRPRED_MEASURED_HPP

/// \file measured.hpp
/// Measured peak lists: read as chemists write them in notebooks and
/// experimental sections ("1H NMR (400 MHz, CDCl3) δ 7.31 (d, J = 8.5 Hz, 2H),
/// ..."), or as a plain CSV or JSON table; and a prediction written out the
/// same way, so the two can be compared side by side. The accepted grammar is
/// described in docs/measured.md.
///
/// Thread rule: pure functions of their arguments; call from any thread.

#include <cstddef>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include <nmrpred/export.hpp>
#include <nmrpred/predict.hpp>
#include <nmrpred/shifts.hpp>

namespace nmrpred {

/// One observed signal. Plain value.
struct MeasuredPeak {
  double ppm = 0;       ///< centre (for a range: its midpoint), ppm from TMS
  double ppm_low = 0;   ///< low end of a range ("7.40-7.28"); equals ppm for a single value
  double ppm_high = 0;  ///< high end of a range; equals ppm for a single value
  /// 1H: integral in protons ("2H"), absent when not given. 13C: the number
  /// of carbons when the text gives one ("128.5 (2C)"), absent otherwise.
  std::optional<double> integral;
  /// Multiplicity as written, normalised to the trade's letters ("s", "d",
  /// "dd", "td", "m", "br s", ...); empty when not given. Long forms become
  /// letters ("doublet of doublets" -> "dd"), "quint"/"quin"/"pent"/"pentet"/
  /// "quintet" become "p" (as in simulated multiplets), "hept"/"heptet"/
  /// "septet" become "sept", "bs"/"brs"/"br. s"/
  /// "broad singlet" become "br s", "apparent t"/"app. t"/"pseudo-t" become
  /// "app t", "2 x d" (two overlapping doublets) stays "2 x d".
  std::string multiplicity;
  std::vector<double> j_hz;  ///< coupling constants as given, Hz, in the order written
  /// 13C: attached protons when given (DEPT or "CH3", "CH2", "CH", "C"); absent otherwise.
  std::optional<int> attached_h;
  std::string text;            ///< the peak as written in the input, for messages
  std::size_t position = 0;    ///< byte offset of the peak in the input text
  /// Per value of j_hz (always the same length): the other nucleus's element
  /// when the text names a heteronuclear coupling ("F" for "JHF = 47 Hz" in a
  /// 1H list or "J(C,F) = 245 Hz" in a 13C list; "P,F" when neither named
  /// nucleus is the observed one); empty for homonuclear or unlabelled values.
  std::vector<std::string> j_partner;
  /// Remarks inside the peak's parentheses that are not a multiplicity, J,
  /// integral or attached-proton count (assignments such as "OCH3" or "H-3"),
  /// as written, joined by ", "; empty when there are none. Never interpreted.
  std::string assignment;

  /// Member-wise equality (text and position included).
  friend bool operator==(const MeasuredPeak &a, const MeasuredPeak &b) {
    return a.ppm == b.ppm && a.ppm_low == b.ppm_low && a.ppm_high == b.ppm_high && a.integral == b.integral &&
           a.multiplicity == b.multiplicity && a.j_hz == b.j_hz && a.attached_h == b.attached_h &&
           a.text == b.text && a.position == b.position && a.j_partner == b.j_partner &&
           a.assignment == b.assignment;
  }
  friend bool operator!=(const MeasuredPeak &a, const MeasuredPeak &b) { return !(a == b); }
};

/// One measured spectrum. Plain value.
struct MeasuredSpectrum {
  Nucleus nucleus = Nucleus::H1;
  std::optional<double> mhz;  ///< spectrometer frequency for this nucleus, when given
  /// Solvent as written ("CDCl3", "DMSO-d6", "d6-DMSO"), with typographic
  /// characters made plain ("CDCl₃" -> "CDCl3"); empty when not given. Pass
  /// it to find_solvent() to learn which solvent of the tables it is.
  std::string solvent;
  std::vector<MeasuredPeak> peaks;  ///< in the order written

  /// Member-wise equality.
  friend bool operator==(const MeasuredSpectrum &a, const MeasuredSpectrum &b) {
    return a.nucleus == b.nucleus && a.mhz == b.mhz && a.solvent == b.solvent && a.peaks == b.peaks;
  }
  friend bool operator!=(const MeasuredSpectrum &a, const MeasuredSpectrum &b) { return !(a == b); }
};

/// Format of measured-data text.
enum class MeasuredFormat : int {
  Auto = 0,   ///< recognise from the content ('{' or '[' first: Json; a header row of known column names: Csv; else Text)
  Text = 1,   ///< the trade's prose style ("1H NMR (400 MHz, CDCl3) δ ...")
  Csv = 2,    ///< table with a header row: shift (or range low/high), optional integral, multiplicity, J, nH
  Json = 3,   ///< {"nucleus": "1H", "mhz": 400, "solvent": "CDCl3", "peaks": [{"shift": ..., ...}]}
};

/// Reads the measured spectra in `text` (one or more: a paragraph may hold a
/// 1H and a 13C list one after the other). The accepted grammar of each
/// format is in docs/measured.md. `text` is UTF-8 and need only live for the
/// call; the result owns all its strings. `default_nucleus` applies when the
/// text does not say (prose: the first list only, when it has no "1H
/// NMR"-style header and no "δH"/"δC"; CSV: no "# nucleus:" line; JSON: no
/// "nucleus" key). Returns at least one spectrum; prose and CSV spectra have
/// at least one peak, a JSON spectrum may have none.
///
/// Throws InputError whose message names what was expected, the line and
/// column (1-based, columns in characters), the byte offset and what was
/// found there, e.g. "expected a chemical shift after ',' at line 1, column 53
/// (byte 53); found ','". Text that is not UTF-8 or holds control
/// characters, that holds no peak list or a nucleus other than 1H and 13C, a
/// list whose nucleus is not stated (and no default_nucleus), a decimal comma
/// ("7,31"), and values out of range (shifts beyond -50..400 ppm for 13C or
/// -50..50 ppm for 1H, J beyond ±1000 Hz, integrals not in (0, 1000], a field
/// not in (0, 10000] MHz) are all InputErrors. Throws ArgumentError when
/// `format` or `default_nucleus` is not one of the enumerators. Never
/// crashes or hangs on any input; time is linear in the size of the text.
NMRPRED_API std::vector<MeasuredSpectrum> parse_measured(std::string_view text,
                                                         MeasuredFormat format = MeasuredFormat::Auto,
                                                         std::optional<Nucleus> default_nucleus = std::nullopt);

/// Writes `spectrum` in the trade's prose style, e.g.
/// "1H NMR (400 MHz, CDCl3) δ 7.31 (d, J = 8.5 Hz, 2H), 3.80 (s, 3H)."
/// Shifts with 2 decimals for 1H and 1 for 13C, J with 1 decimal; a peak whose
/// ppm_low and ppm_high differ is written as a range, high end first
/// ("7.40–7.28", en dash). Inside the parentheses: multiplicity, J (with
/// "J(H,F)"-style labels where j_partner names a nucleus), integral ("2H";
/// for 13C "2C"), attached protons for 13C ("C", "CH", "CH2", "CH3") and the
/// assignment text. UTF-8 (δ, en dash). Members `text` and `position` are
/// not written.
/// parse_measured(format_measured(s)) gives back `s` up to that rounding
/// (except `text` and `position`). Throws InputError if a value cannot be
/// written so that it reads back (a non-finite number, an assignment holding
/// parentheses that do not pair up, a multiplicity parse_measured does not
/// accept). Thread rule: pure.
NMRPRED_API std::string format_measured(const MeasuredSpectrum &spectrum);

/// The predicted signals of `nucleus` in `prediction` as a peak list, for
/// side-by-side display with a measured one (Prediction::signals(nucleus)):
/// ppm (= ppm_low = ppm_high) is Signal::ppm; multiplicity and j_hz are the
/// Signal's (empty until couplings are predicted); for 1H the integral is
/// Signal::count; for 13C attached_h is Signal::attached_h and the integral
/// is Signal::count only where several carbons coincide (count > 1), as
/// chemists write "128.5 (2C)". Signals that would be written alike (same
/// shift, multiplicity and J values at the written precision; for 13C also
/// the same attached_h) are one peak with the summed integral, as a spectrum
/// shows them, so there may be fewer peaks than signals. Exchanged protons (Prediction::
/// h1_exchanged_signals) are left out, as a spectrum shows them. `mhz` is
/// copied into the result; the solvent is Prediction::solvent.name. text is
/// the peak as format_measured writes it; position is 0. Never throws except
/// std::bad_alloc. Thread rule: pure.
NMRPRED_API MeasuredSpectrum as_measured(const Prediction &prediction, Nucleus nucleus,
                                         std::optional<double> mhz = std::nullopt);

}  // namespace nmrpred

#endif
