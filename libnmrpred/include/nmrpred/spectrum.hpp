#ifndef NMRPRED_SPECTRUM_HPP
#define NMRPRED_SPECTRUM_HPP

/// \file spectrum.hpp
/// From line lists to pictures and files: a line list (nmrpred/spin.hpp)
/// sampled on an equally spaced chemical-shift axis with Lorentzian or
/// Gaussian lines, the signals of the NMR solvent and its water, a JCAMP-DX
/// file of a sampled spectrum and an SVG drawing of it.
///
/// Units: positions in ppm from TMS; widths in Hz (full width at half
/// height, FWHM); the observe frequency `field_mhz` is that of the observed
/// nucleus itself (about 100.6 MHz for 13C on a 400 MHz magnet), so that
/// Hz = ppm * field_mhz.
///
/// Thread rule: pure functions of their arguments; call from any thread.

#include <cstddef>
#include <string>
#include <vector>

#include <nmrpred/export.hpp>
#include <nmrpred/shifts.hpp>
#include <nmrpred/solvents.hpp>
#include <nmrpred/spin.hpp>

namespace nmrpred {

/// Shape of one sampled line.
enum class LineShape : int {
  /// Absorption Lorentzian, the shape of a line relaxing exponentially
  /// (common practice). Its tails are slow: they are kept everywhere on the
  /// axis (see sample_lines()).
  Lorentzian = 1,
  /// Gaussian with the same FWHM; it is evaluated within +-5 FWHM of its
  /// centre and is below 1e-30 of its height beyond.
  Gaussian = 2,
};

/// Settings of sample_lines() and sample_signals(). Plain value.
struct SamplingOptions {
  Nucleus nucleus = Nucleus::H1;  ///< observed nucleus; recorded in the result and in files
  double field_mhz = 400.0;       ///< observe frequency of `nucleus`, MHz (finite, > 0)
  double ppm_low = -0.5;          ///< low end of the axis, ppm (finite, < ppm_high)
  double ppm_high = 12.0;         ///< high end of the axis, ppm (finite)
  std::size_t points = 65536;     ///< samples, both ends included (16 .. 4194304)
  double line_width_hz = 1.0;     ///< FWHM of every line, Hz (finite, >= 1e-6)
  /// FWHM, Hz, of the lines of signals whose label starts with "br " ("br s",
  /// "br m"): exchangeable protons and water (sample_signals() only; finite,
  /// >= 1e-6).
  double broad_line_width_hz = 15.0;
  LineShape shape = LineShape::Lorentzian;
};

/// Sensible settings for a nucleus at `field_mhz` (the observed nucleus's
/// frequency): the axis that holds nearly every organic signal (1H: -0.5 ..
/// 12 ppm; 13C: -5 .. 225 ppm), line widths (1H: 1 Hz, broad 15 Hz; 13C:
/// 2 Hz, broad 10 Hz) and the fewest points, a power of two from 65536 to
/// 4194304, that give at least 4 samples per FWHM. Throws ArgumentError when
/// field_mhz is not finite and > 0.
NMRPRED_API SamplingOptions sampling_defaults(Nucleus nucleus, double field_mhz);

/// A spectrum sampled on an equally spaced axis. Plain value.
struct SampledSpectrum {
  Nucleus nucleus = Nucleus::H1;
  double field_mhz = 0;            ///< observe frequency of `nucleus`, MHz
  double line_width_hz = 0;        ///< FWHM of ordinary lines, Hz
  double broad_line_width_hz = 0;  ///< FWHM of "br " signals, Hz
  LineShape shape = LineShape::Lorentzian;
  /// Sample positions, ppm, increasing from ppm_low to ppm_high (both
  /// included) in equal steps.
  std::vector<double> ppm;
  /// Height at each position, in intensity units per ppm: a line of
  /// intensity I (SpectralLine::intensity, e.g. protons) encloses area I when
  /// integrated over ppm, so sum(intensity) * step approximates the number of
  /// nuclei whose lines fall inside the axis.
  std::vector<double> intensity;

  friend bool operator==(const SampledSpectrum &a, const SampledSpectrum &b) {
    return a.nucleus == b.nucleus && a.field_mhz == b.field_mhz && a.line_width_hz == b.line_width_hz &&
           a.broad_line_width_hz == b.broad_line_width_hz && a.shape == b.shape && a.ppm == b.ppm &&
           a.intensity == b.intensity;
  }
};

/// Samples `lines`, each with options.line_width_hz, on the axis of
/// `options`. Only SpectralLine::ppm and ::intensity are read; intensities
/// may be negative (difference spectra). Lines outside the axis still add
/// their tails inside it.
///
/// Cost and accuracy: Gaussian lines are evaluated within +-5 FWHM (beyond,
/// they are below 1e-30 of their height). Lorentzian lines are evaluated
/// exactly within 512 to 576 points of their centre; farther out, every line
/// is evaluated on a grid 64 times coarser and interpolated (6-point
/// Lagrange), which keeps the whole tail, so no area is dropped, to within
/// 3e-6 of the line's height (2e-8 for lines 13 points wide; the worst case
/// is lines 300 to 800 points wide). About 2200 evaluations per line plus 6
/// multiply-adds per point: under a millisecond for 200 lines on 65536
/// points (benchmarks/bench_spectrum.cpp).
///
/// Throws ArgumentError naming the option for a bad option (NaN or infinite
/// numbers, ppm_low >= ppm_high, field <= 0, width < 1e-6 Hz, points outside
/// 16 .. 4194304) and naming the line for a non-finite ppm or intensity.
NMRPRED_API SampledSpectrum sample_lines(const std::vector<SpectralLine> &lines, const SamplingOptions &options);

/// Samples the lines of every signal: signals whose label starts with "br "
/// get options.broad_line_width_hz, the others options.line_width_hz. Use it
/// for a simulation's multiplets together with the solvent_peaks() signals
/// (SolventPeak::signal). Errors as sample_lines(), plus an ArgumentError
/// when a "br " signal is present and options.broad_line_width_hz is not
/// finite and >= 1e-6.
NMRPRED_API SampledSpectrum sample_signals(const std::vector<Multiplet> &signals, const SamplingOptions &options);

/// What a solvent peak stands for.
enum class SolventPeakKind : int {
  Residual = 1,  ///< the partly deuterated solvent (1H) or the solvent's own carbons (13C)
  Water = 2,     ///< dissolved H2O / HDO (1H only)
};

/// One signal of the solvent. Plain value.
struct SolventPeak {
  SolventPeakKind kind = SolventPeakKind::Residual;
  /// Short text to print beside the peak: the solvent's name ("CDCl3") for
  /// residual signals, "H2O" for water, "HDO" for water in a solvent that
  /// exchanges protons with it (D2O, CD3OD).
  std::string text;
  /// Equivalent deuterons the observed nucleus couples to (0 for singlets).
  int deuterons = 0;
  /// The signal as a multiplet: nucleus, centre ppm, label ("s", "t", "p",
  /// "sept", "br s", "br m"; see solvent_peaks()), j_hz (the J(H,D) or J(C,D)
  /// spacing, empty for singlets), integral (= its area), no atoms, and its
  /// lines (ppm, hz at the given field, intensity) by increasing ppm.
  Multiplet signal;
};

/// Areas given to solvent peaks. Plain value.
struct SolventPeakOptions {
  /// Area of each residual signal (sum of its lines' intensities), in the
  /// units of the compound's lines, which sum to the number of observed
  /// nuclei: 1.0 draws each residual signal as large as one nucleus of the
  /// compound. Finite, >= 0.
  double residual_area = 1.0;
  /// Area of the water signal, same units. Finite, >= 0.
  double water_area = 1.0;
  /// Include the water signal in 1H lists.
  bool water = true;
};

/// The signals `solvent` shows in a spectrum of `nucleus` observed at
/// `field_mhz` (observe frequency of that nucleus, MHz): every residual
/// signal of tables/solvents.tsv and, for 1H, the water signal.
///
/// The splitting comes from coupling to n equivalent deuterons (spin 1):
/// n is read from the table's multiplicity as its 2n+1 lines ("s" 0, "t" 1,
/// "p" or "quint" 2, "sept" 3) and the line intensities are the coefficients of
/// (1 + x + x^2)^n (1:1:1, 1:2:3:2:1, 1:3:6:7:6:3:1), spaced by the table's J
/// in Hz. "br s" and "m" (a pattern the table does not resolve) become one
/// line labelled "br s" / "br m". Water is one "br s" line; when it lies
/// within 0.01 ppm of a residual 1H signal (HDO in D2O) only the water peak
/// is given. Sources: J values and shifts as tables/solvents.tsv cites them
/// (FULMER-2010, GOTTLIEB-1997, COMMON-PRACTICE; tables/SOURCES.md).
///
/// Throws ArgumentError for a bad field or area, TablesError naming the
/// solvent when its table entry gives a multiplicity that coupling to
/// deuterium cannot produce (an even number of lines, e.g. "d" or "q") or no
/// J for a split signal.
NMRPRED_API std::vector<SolventPeak> solvent_peaks(const Solvent &solvent, Nucleus nucleus, double field_mhz,
                                                   const SolventPeakOptions &options = {});

/// How the ordinates of a JCAMP-DX file are written.
enum class JcampEncoding : int {
  Affn = 1,    ///< plain integers separated by spaces (ASCII free format numeric)
  DifDup = 2,  ///< the standard's compressed characters: SQZ, DIF and DUP forms, with Y checks
};

/// Settings of format_jcamp_dx(). Text values must be one line of printable
/// ASCII. Plain value.
struct JcampOptions {
  std::string title = "simulated spectrum";  ///< ##TITLE (required by the standard; not empty)
  std::string origin = "libnmrpred";         ///< ##ORIGIN, who made the data (required; not empty)
  std::string owner = "PUBLIC DOMAIN";       ///< ##OWNER, who owns it (required; not empty)
  std::string solvent_name;                  ///< ##.SOLVENT NAME; left out when empty
  JcampEncoding encoding = JcampEncoding::Affn;
};

/// The spectrum as a JCAMP-DX 5.01 file of data type NMR SPECTRUM (IUPAC:
/// McDonald & Wilks, Appl. Spectrosc. 1988, 42, 151; NMR labels: Davies &
/// Lampen, Appl. Spectrosc. 1993, 47, 1093).
///
/// Layout: ##TITLE, ##JCAMP-DX=5.01, ##DATA TYPE=NMR SPECTRUM, ##DATA
/// CLASS=XYDATA, ##ORIGIN, ##OWNER, ##.OBSERVE FREQUENCY (MHz), ##.OBSERVE
/// NUCLEUS (^1H, ^13C), ##.SOLVENT NAME (when given), ##.SHIFT REFERENCE,
/// ##XUNITS=HZ, ##YUNITS=ARBITRARY UNITS, ##XFACTOR, ##YFACTOR, ##FIRSTX,
/// ##LASTX, ##DELTAX, ##NPOINTS, ##FIRSTY, ##XYDATA=(X++(Y..Y)), ##END=,
/// with a "$$" comment line after ##OWNER naming the line shape and widths.
/// The abscissa is in Hz from TMS at the observe frequency (the NMR
/// convention: ppm = Hz / .OBSERVE FREQUENCY) and runs from the high-ppm end
/// (FIRSTX) to the low-ppm end (LASTX), in the order spectra are drawn.
/// Ordinates are integers scaled so that the largest magnitude is 1e8; each
/// value read back times YFACTOR differs from the sampled height by at most
/// YFACTOR / 2. Lines are at most 80 characters. Numbers do not depend on the
/// locale. No date is written, so equal input gives equal files.
///
/// Throws ArgumentError when the spectrum is empty, has mismatched arrays,
/// non-finite values or fewer than 2 points, or when a text option is empty
/// (title, origin, owner) or holds a line break or a non-ASCII or control
/// character.
NMRPRED_API std::string format_jcamp_dx(const SampledSpectrum &spectrum, const JcampOptions &options = {});

/// Settings of format_svg(). Plain value.
struct PlotOptions {
  double width_px = 1000;      ///< picture width, px (200 .. 20000)
  double height_px = 500;      ///< picture height, px (150 .. 20000)
  double font_px = 12;         ///< text size, px (4 .. 72)
  std::string title;           ///< printed above the plot when not empty (any UTF-8 text)
  bool show_labels = true;     ///< label every signal ("7.31 d J=8.5 2H") above its peak
  bool show_integrals = true;  ///< a running integral curve per signal and its value under the axis
  /// Scale heights to the tallest compound signal (the signals given) and
  /// clip taller solvent peaks at the top; false scales to the tallest point.
  bool scale_to_signals = true;
};

/// An SVG 1.1 drawing (UTF-8, self-contained: no scripts, links or external
/// fonts; black and grey only) of `spectrum`, with the chemical-shift axis
/// decreasing to the right, ticks at 1, 2 or 5 times a power of ten and the
/// axis label; each of `signals` (usually a simulation's multiplets) labelled
/// above its peak with centre, label, couplings and integral, the labels
/// written vertically and pushed apart so that none overlaps another, linked
/// to their peaks by thin lines; a running integral curve per signal and its
/// integral under the axis; and `solvent` peaks marked with their text.
/// Signals and solvent peaks outside the axis are left out. All text is
/// XML-escaped; bytes that are not valid UTF-8 or are control characters are
/// replaced by '?'.
///
/// Throws ArgumentError for an empty or inconsistent spectrum (as
/// format_jcamp_dx()) or a size option out of range or not finite.
NMRPRED_API std::string format_svg(const SampledSpectrum &spectrum, const std::vector<Multiplet> &signals,
                                   const std::vector<SolventPeak> &solvent = {}, const PlotOptions &options = {});

}  // namespace nmrpred

#endif
