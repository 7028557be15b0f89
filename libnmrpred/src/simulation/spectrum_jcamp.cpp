// JCAMP-DX output of a sampled spectrum (IUPAC: McDonald & Wilks, Appl.
// Spectrosc. 1988, 42, 151; NMR labels: Davies & Lampen, Appl. Spectrosc.
// 1993, 47, 1093; details below from memory).
//
// The compressed ordinate characters: SQZ replaces the first digit of a value
// by @ (0), A-I (+1..+9) or a-i (-1..-9); DIF writes the difference to the
// previous value the same way with % (0), J-R and j-r; DUP gives the total
// count of a repeated value or difference with S-Z (1..8) and s (9). A line
// whose last ordinate is a DIF is followed by a line starting with that same
// ordinate in SQZ form (the Y check), and the table ends with such a check.

#include <nmrpred/error.hpp>
#include <nmrpred/spectrum.hpp>

#include <algorithm>
#include <charconv>
#include <cmath>
#include <string>
#include <vector>

#include <fmt/format.h>

#include "simulation/spectrum_shapes.hpp"

namespace nmrpred {

namespace {

constexpr std::size_t kMaxLine = 80;  // the standard's line length
// Largest ordinate magnitude after scaling: 8 digits keep 1e-8 of the
// height and fit a 32-bit reader.
constexpr double kYMax = 1e8;

void check_text(const std::string &value, const char *name, bool required) {
  if (required && value.empty()) throw ArgumentError(fmt::format("JCAMP-DX: {} must not be empty", name));
  for (std::size_t i = 0; i < value.size(); ++i) {
    const auto c = static_cast<unsigned char>(value[i]);
    if (c < 0x20 || c > 0x7e)
      throw ArgumentError(fmt::format("JCAMP-DX: {} must be one line of printable ASCII (byte 0x{:02x} at {})", name,
                                      static_cast<unsigned>(c), i));
  }
  // "$$" starts a comment, which would cut the value short.
  if (value.find("$$") != std::string::npos)
    throw ArgumentError(fmt::format("JCAMP-DX: {} must not contain '$$' (it starts a comment)", name));
}

// First digit replaced by one of the pseudo-digits: zero, positive[0..8] for
// 1..9, negative[0..8] for -1..-9.
void append_coded(std::string &out, long long v, char zero, char positive, char negative) {
  if (v == 0) {
    out += zero;
    return;
  }
  const unsigned long long mag = v < 0 ? 0ULL - static_cast<unsigned long long>(v) : static_cast<unsigned long long>(v);
  char digits[24] = {};
  const auto end = std::to_chars(digits, digits + sizeof digits, mag).ptr;
  out += static_cast<char>((v < 0 ? negative : positive) + (digits[0] - '0') - 1);
  out.append(digits + 1, end);
}

void append_sqz(std::string &out, long long v) { append_coded(out, v, '@', 'A', 'a'); }
void append_dif(std::string &out, long long v) { append_coded(out, v, '%', 'J', 'j'); }
void append_dup(std::string &out, long long count) {
  char digits[24] = {};
  const auto end = std::to_chars(digits, digits + sizeof digits, count).ptr;
  const int first = digits[0] - '0';
  out += first == 9 ? 's' : static_cast<char>('S' + first - 1);
  out.append(digits + 1, end);
}

std::string x_text(double x) { return fmt::format("{:.6f}", x); }

void write_affn(std::string &out, const std::vector<long long> &y, const std::vector<double> &x) {
  std::size_t j = 0;
  const std::size_t n = y.size();
  while (j < n) {
    std::string line = x_text(x[j]);
    do {
      char tok[24] = {' '};
      const auto end = std::to_chars(tok + 1, tok + sizeof tok, y[j]).ptr;
      const auto len = static_cast<std::size_t>(end - tok);
      if (line.size() + len > kMaxLine) break;
      line.append(tok, len);
      ++j;
    } while (j < n);
    out += line;
    out += '\n';
  }
}

void write_difdup(std::string &out, const std::vector<long long> &y, const std::vector<double> &x) {
  const std::size_t n = y.size();
  std::size_t j = 0;  // first ordinate of the line (after the first line: the Y check)
  std::string tok;
  while (true) {
    std::string line = x_text(x[j]);
    append_sqz(line, y[j]);
    std::size_t k = j;
    while (k + 1 < n) {
      const long long d = y[k + 1] - y[k];
      std::size_t run = 1;
      while (k + run + 1 < n && y[k + run + 1] - y[k + run] == d) ++run;
      tok.clear();
      append_dif(tok, d);
      if (run > 1) append_dup(tok, static_cast<long long>(run));
      if (line.size() + tok.size() > kMaxLine) {
        // A long run may still fit in part; otherwise the line is full.
        std::size_t fit = 0;
        for (std::size_t r = run - 1; r >= 1 && fit == 0; --r) {
          tok.clear();
          append_dif(tok, d);
          if (r > 1) append_dup(tok, static_cast<long long>(r));
          if (line.size() + tok.size() <= kMaxLine) fit = r;
        }
        if (fit == 0) break;
        run = fit;
      }
      line += tok;
      k += run;
    }
    out += line;
    out += '\n';
    j = k;
    if (k + 1 >= n) break;
  }
  // The last line ends with a DIF: close the table with its Y check.
  std::string check = x_text(x[n - 1]);
  append_sqz(check, y[n - 1]);
  out += check;
  out += '\n';
}

}  // namespace

std::string format_jcamp_dx(const SampledSpectrum &spectrum, const JcampOptions &options) {
  detail::check_sampled(spectrum, "JCAMP-DX");
  check_text(options.title, "title", true);
  check_text(options.origin, "origin", true);
  check_text(options.owner, "owner", true);
  check_text(options.solvent_name, "solvent name", false);
  if (options.encoding != JcampEncoding::Affn && options.encoding != JcampEncoding::DifDup)
    throw ArgumentError(fmt::format("JCAMP-DX: unknown encoding {}", static_cast<int>(options.encoding)));
  if (spectrum.nucleus != Nucleus::H1 && spectrum.nucleus != Nucleus::C13)
    throw ArgumentError(fmt::format("JCAMP-DX: unknown nucleus {}", static_cast<int>(spectrum.nucleus)));
  const auto &ppm = spectrum.ppm;
  const std::size_t n = ppm.size();
  // X++ means equal steps; a hand-made axis may not have them.
  const double step = (ppm.back() - ppm.front()) / static_cast<double>(n - 1);
  for (std::size_t i = 0; i < n; ++i) {
    const double expect = ppm.front() + static_cast<double>(i) * step;
    if (std::fabs(ppm[i] - expect) > 1e-6 * step)
      throw ArgumentError(fmt::format("JCAMP-DX: the ppm axis is not equally spaced (point {})", i));
  }
  const double mhz = spectrum.field_mhz;
  // Written from the high-ppm end: point j is ppm[n - 1 - j].
  std::vector<double> x(n);
  for (std::size_t j = 0; j < n; ++j) x[j] = ppm[n - 1 - j] * mhz;
  double max_abs = 0;
  for (double v : spectrum.intensity) max_abs = std::max(max_abs, std::fabs(v));
  // Scale with the factor as printed, so that Y * YFACTOR reads back exactly.
  const std::string yfactor_text = fmt::format("{:.12g}", max_abs > 0 ? max_abs / kYMax : 1.0);
  double yfactor = 1;
  std::from_chars(yfactor_text.data(), yfactor_text.data() + yfactor_text.size(), yfactor);
  std::vector<long long> y(n);
  for (std::size_t j = 0; j < n; ++j) y[j] = std::llround(spectrum.intensity[n - 1 - j] / yfactor);

  const std::string shape = spectrum.shape == LineShape::Gaussian ? "Gaussian" : "Lorentzian";
  std::string out;
  out.reserve(n * (options.encoding == JcampEncoding::Affn ? 11 : 4) + 1024);
  out += fmt::format("##TITLE={}\n", options.title);
  out += "##JCAMP-DX=5.01\n";
  out += "##DATA TYPE=NMR SPECTRUM\n";
  out += "##DATA CLASS=XYDATA\n";
  out += fmt::format("##ORIGIN={}\n", options.origin);
  out += fmt::format("##OWNER={}\n", options.owner);
  out += fmt::format("$$ simulated spectrum: {} lines, FWHM {:g} Hz (broad signals {:g} Hz)\n", shape,
                     spectrum.line_width_hz, spectrum.broad_line_width_hz);
  out += fmt::format("##.OBSERVE FREQUENCY={:.9g}\n", mhz);
  out += fmt::format("##.OBSERVE NUCLEUS=^{}\n", spectrum.nucleus == Nucleus::C13 ? "13C" : "1H");
  if (!options.solvent_name.empty()) out += fmt::format("##.SOLVENT NAME={}\n", options.solvent_name);
  // The chemical shift of data point 1 (the high-ppm end), relative to TMS.
  out += fmt::format("##.SHIFT REFERENCE=(INTERNAL, TMS, 1, {:.9g})\n", ppm.back());
  out += "##XUNITS=HZ\n";
  out += "##YUNITS=ARBITRARY UNITS\n";
  out += "##XFACTOR=1\n";
  out += fmt::format("##YFACTOR={}\n", yfactor_text);
  out += fmt::format("##FIRSTX={:.12g}\n", x.front());
  out += fmt::format("##LASTX={:.12g}\n", x.back());
  out += fmt::format("##DELTAX={:.12g}\n", (x.back() - x.front()) / static_cast<double>(n - 1));
  out += fmt::format("##NPOINTS={}\n", n);
  out += fmt::format("##FIRSTY={:.12g}\n", static_cast<double>(y.front()) * yfactor);
  out += "##XYDATA=(X++(Y..Y))\n";
  if (options.encoding == JcampEncoding::DifDup)
    write_difdup(out, y, x);
  else
    write_affn(out, y, x);
  out += "##END=\n";
  return out;
}

}  // namespace nmrpred
