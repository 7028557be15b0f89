// Sampled spectra, solvent signals, JCAMP-DX and SVG output
// (libnmrpred/src/simulation/spectrum_*.cpp).
//
// References outside the project:
//  * Line shapes (common practice, as every NMR text defines them): the
//    absorption Lorentzian (A/pi) g / (d^2 + g^2) with half width g = FWHM/2,
//    whose integral is (A/pi) atan(d/g); the Gaussian A exp(-d^2/2s^2) /
//    (s sqrt(2 pi)) with FWHM = 2 sqrt(2 ln 2) s. Both are written out again
//    here, independently of the library. 1/L(d) and ln G(d) are parabolas in
//    d, so three samples around a maximum give the exact centre.
//  * Solvent shifts: FULMER-2010 and GOTTLIEB-1997 (tables/SOURCES.md), values
//    from memory, as tests/test_solvents.cpp uses them; J(H,D) and J(C,D):
//    COMMON-PRACTICE values of tables/solvents.tsv.
//  * Coupling to n deuterons (spin 1): 2n+1 lines with the intensities of the
//    trinomial triangle, 1:1:1, 1:2:3:2:1, 1:3:6:7:6:3:1 (common practice).
//  * JCAMP-DX: McDonald & Wilks, Appl. Spectrosc. 1988, 42, 151 (labels,
//    order, X++(Y..Y), SQZ/DIF/DUP, Y check, 80-character lines) and Davies &
//    Lampen, Appl. Spectrosc. 1993, 47, 1093 (NMR labels); from memory. The
//    reader below is written from the standard, not from the writer.
//  * SVG 1.1 (W3C) and XML 1.0 escaping; tests/python/test_spectrum_formats.py
//    parses the files of the last case with xml.etree and reads the JCAMP-DX
//    files with its own reader.
// Multiplets built in these tests are invented demo data.

#include <doctest/doctest.h>

#include <nmrpred/error.hpp>
#include <nmrpred/solvents.hpp>
#include <nmrpred/spectrum.hpp>
#include <nmrpred/tables.hpp>

#include <algorithm>
#include <cctype>
#include <charconv>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <functional>
#include <limits>
#include <map>
#include <optional>
// GCC 12 reports a false maybe-uninitialized inside libstdc++'s <regex> when
// the file is built with the sanitizers; the diagnostic points into the
// standard library, not at this file's code.
#if defined(__GNUC__) && !defined(__clang__)
#pragma GCC diagnostic ignored "-Wmaybe-uninitialized"
#endif
#include <regex>
#include <sstream>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "check.hpp"

namespace {

using nmrpred::LineShape;
using nmrpred::Multiplet;
using nmrpred::Nucleus;
using nmrpred::SampledSpectrum;
using nmrpred::SamplingOptions;
using nmrpred::SpectralLine;

constexpr double kPi = 3.14159265358979323846;

double lorentzian(double d, double fwhm) {
  const double g = fwhm / 2;
  return g / (kPi * (d * d + g * g));
}
double gaussian(double d, double fwhm) {
  const double s = fwhm / (2 * std::sqrt(2 * std::log(2.0)));
  return std::exp(-d * d / (2 * s * s)) / (s * std::sqrt(2 * kPi));
}
double shape_value(LineShape shape, double d, double fwhm) {
  return shape == LineShape::Gaussian ? gaussian(d, fwhm) : lorentzian(d, fwhm);
}

SpectralLine line(double ppm, double intensity) {
  SpectralLine l;
  l.ppm = ppm;
  l.intensity = intensity;
  return l;
}

SamplingOptions options(LineShape shape, double width_hz, double mhz, double low, double high, std::size_t points) {
  SamplingOptions o;
  o.shape = shape;
  o.line_width_hz = width_hz;
  o.field_mhz = mhz;
  o.ppm_low = low;
  o.ppm_high = high;
  o.points = points;
  return o;
}

const nmrpred::Tables &tables() {
  static const auto t = nmrpred::Tables::builtin();
  return *t;
}

std::string shape_name(LineShape s) { return s == LineShape::Gaussian ? "Gaussian" : "Lorentzian"; }

// ---- A JCAMP-DX reader written from the standard (see the header) ----

struct Jcamp {
  std::vector<std::pair<std::string, std::string>> labels;  // in file order, data lines excluded
  std::map<std::string, std::string> value;
  std::vector<double> line_x;           // abscissa written at the start of each data line
  std::vector<std::size_t> line_first;  // index of the first new ordinate on that line
  std::vector<bool> line_checked;       // the line opens with a Y check
  std::vector<long long> y;
  std::size_t longest_line = 0;
  bool y_checks_ok = true;
};

double to_double(const std::string &s) {
  double v = std::numeric_limits<double>::quiet_NaN();
  std::size_t b = 0;
  while (b < s.size() && s[b] == ' ') ++b;
  std::from_chars(s.data() + b, s.data() + s.size(), v);
  return v;
}

// Decodes one data line of X++(Y..Y) in AFFN or SQZ/DIF/DUP form. `prev_dif`
// says whether the previous line ended with a DIF value (then the first
// ordinate here is a Y check, dropped after comparison).
void read_xy_line(const std::string &text, Jcamp &j, bool &prev_dif) {
  std::size_t i = 0;
  // The abscissa: a plain decimal number (E and e would be SQZ digits).
  std::size_t e = i;
  if (e < text.size() && (text[e] == '-' || text[e] == '+')) ++e;
  while (e < text.size() && (std::isdigit(static_cast<unsigned char>(text[e])) || text[e] == '.')) ++e;
  j.line_x.push_back(to_double(text.substr(i, e - i)));
  i = e;
  std::vector<long long> vals;
  bool last_dif = false;
  long long last_dif_value = 0;
  auto push_number = [&](char kind, const std::string &digits) {
    // kind: 'v' absolute value, 'd' difference, 'u' dup count
    const long long v = std::stoll(digits);
    if (kind == 'v') {
      vals.push_back(v);
      last_dif = false;
    } else if (kind == 'd') {
      REQUIRE(!vals.empty());
      vals.push_back(vals.back() + v);
      last_dif = true;
      last_dif_value = v;
    } else {
      REQUIRE(!vals.empty());
      for (long long r = 1; r < v; ++r) vals.push_back(last_dif ? vals.back() + last_dif_value : vals.back());
    }
  };
  while (i < text.size()) {
    const char c = text[i];
    char kind = 0;
    std::string digits;
    if (c == ' ') {
      ++i;
      continue;
    }
    if (c == '+' || c == '-' || std::isdigit(static_cast<unsigned char>(c))) {
      kind = 'v';
      digits += c;
    } else if (c == '@') {
      kind = 'v', digits = "0";
    } else if (c >= 'A' && c <= 'I') {
      kind = 'v', digits = std::to_string(c - 'A' + 1);
    } else if (c >= 'a' && c <= 'i') {
      kind = 'v', digits = "-" + std::to_string(c - 'a' + 1);
    } else if (c == '%') {
      kind = 'd', digits = "0";
    } else if (c >= 'J' && c <= 'R') {
      kind = 'd', digits = std::to_string(c - 'J' + 1);
    } else if (c >= 'j' && c <= 'r') {
      kind = 'd', digits = "-" + std::to_string(c - 'j' + 1);
    } else if (c >= 'S' && c <= 'Z') {
      kind = 'u', digits = std::to_string(c - 'S' + 1);
    } else if (c == 's') {
      kind = 'u', digits = "9";
    } else {
      FAIL("unexpected character '" << c << "' in data line: " << text);
    }
    ++i;
    while (i < text.size() && std::isdigit(static_cast<unsigned char>(text[i]))) digits += text[i++];
    push_number(kind, digits);
  }
  std::size_t start = 0;
  if (prev_dif && !vals.empty()) {
    if (j.y.empty() || vals.front() != j.y.back()) j.y_checks_ok = false;
    start = 1;
  }
  j.line_first.push_back(j.y.size());
  j.line_checked.push_back(start == 1);
  j.y.insert(j.y.end(), vals.begin() + static_cast<long>(start), vals.end());
  prev_dif = last_dif;
}

Jcamp read_jcamp(const std::string &text) {
  Jcamp j;
  std::istringstream in(text);
  std::string l;
  bool in_data = false, prev_dif = false;
  while (std::getline(in, l)) {
    j.longest_line = std::max(j.longest_line, l.size());
    if (l.rfind("$$", 0) == 0) continue;
    if (l.rfind("##", 0) == 0) {
      const auto eq = l.find('=');
      REQUIRE(eq != std::string::npos);
      const std::string label = l.substr(2, eq - 2), value = l.substr(eq + 1);
      j.labels.emplace_back(label, value);
      j.value[label] = value;
      in_data = label == "XYDATA";
      continue;
    }
    if (in_data) read_xy_line(l, j, prev_dif);
  }
  return j;
}

std::size_t label_index(const Jcamp &j, const std::string &label) {
  for (std::size_t i = 0; i < j.labels.size(); ++i)
    if (j.labels[i].first == label) return i;
  return std::numeric_limits<std::size_t>::max();
}

// Checks a JCAMP-DX text against the standard and against the spectrum.
void check_jcamp(const std::string &text, const SampledSpectrum &s, const char *nucleus) {
  const Jcamp j = read_jcamp(text);
  // Required labels and their order: TITLE first, JCAMP-DX second, then
  // DATA TYPE, ORIGIN and OWNER before the data; END last.
  REQUIRE(j.labels.size() >= 10);
  CHECK(j.labels[0].first == "TITLE");
  CHECK(j.labels[1].first == "JCAMP-DX");
  CHECK(j.labels[1].second == "5.01");
  CHECK(j.labels.back().first == "END");
  const char *order[] = {"TITLE",   "JCAMP-DX", "DATA TYPE", "ORIGIN",  "OWNER",  "XUNITS", "YUNITS", "XFACTOR",
                         "YFACTOR", "FIRSTX",   "LASTX",     "NPOINTS", "FIRSTY", "XYDATA", "END"};
  std::size_t last = 0;
  for (const char *label : order) {
    INFO("label ", std::string(label));
    const auto at = label_index(j, label);
    REQUIRE(at != std::numeric_limits<std::size_t>::max());
    CHECK(at >= last);
    last = at;
  }
  for (const char *label : {".OBSERVE FREQUENCY", ".OBSERVE NUCLEUS", ".SHIFT REFERENCE"}) {
    INFO("label ", std::string(label));
    CHECK(label_index(j, label) < label_index(j, "XYDATA"));
  }
  CHECK(j.value.at("DATA TYPE") == "NMR SPECTRUM");
  CHECK(j.value.at("XUNITS") == "HZ");
  CHECK(j.value.at("YUNITS") == "ARBITRARY UNITS");
  CHECK(j.value.at("XYDATA") == "(X++(Y..Y))");
  CHECK(j.value.at(".OBSERVE NUCLEUS") == nucleus);
  CHECK(j.longest_line <= 80);
  CHECK(j.y_checks_ok);

  const double mhz = to_double(j.value.at(".OBSERVE FREQUENCY"));
  check_close(mhz, s.field_mhz, 1e-9);
  const auto n = static_cast<std::size_t>(to_double(j.value.at("NPOINTS")));
  CHECK(n == s.ppm.size());
  REQUIRE(j.y.size() == n);
  const double firstx = to_double(j.value.at("FIRSTX")), lastx = to_double(j.value.at("LASTX"));
  const double xfactor = to_double(j.value.at("XFACTOR")), yfactor = to_double(j.value.at("YFACTOR"));
  const double deltax = (lastx - firstx) / static_cast<double>(n - 1);
  // Hz from TMS at the observe frequency, from the high-ppm end.
  check_close(firstx / mhz, s.ppm.back(), 1e-9);
  check_close(lastx / mhz, s.ppm.front(), 1e-9);
  check_close(deltax / mhz, -(s.ppm[1] - s.ppm[0]), 1e-9);
  check_close(deltax, to_double(j.value.at("DELTAX")), 1e-9);
  // Each line's abscissa is that of its first ordinate (the Y check, when
  // the line opens with one).
  std::size_t bad_x = 0;
  for (std::size_t k = 0; k < j.line_x.size(); ++k) {
    const double idx = static_cast<double>(j.line_first[k]) - (j.line_checked[k] ? 1 : 0);
    if (std::fabs(j.line_x[k] * xfactor - (firstx + idx * deltax)) > 1e-5) ++bad_x;
  }
  CHECK(bad_x == 0);
  check_close(to_double(j.value.at("FIRSTY")), static_cast<double>(j.y.front()) * yfactor, 1e-12);
  double worst = 0;
  for (std::size_t k = 0; k < n; ++k)
    worst = std::max(worst, std::fabs(static_cast<double>(j.y[k]) * yfactor - s.intensity[n - 1 - k]));
  INFO("largest difference " << worst << ", YFACTOR " << yfactor);
  CHECK(worst <= yfactor * 0.5 * (1 + 1e-9));
}

// A demo 1H spectrum: a doublet, a triplet, a singlet and a broad singlet.
std::vector<Multiplet> demo_signals() {
  auto mk = [](double ppm, const char *label, std::vector<double> j, double integral, std::vector<double> offsets_hz,
               std::vector<double> weights) {
    Multiplet m;
    m.nucleus = Nucleus::H1;
    m.ppm = ppm;
    m.label = label;
    m.j_hz = std::move(j);
    m.integral = integral;
    double total = 0;
    for (double w : weights) total += w;
    for (std::size_t i = 0; i < offsets_hz.size(); ++i) {
      SpectralLine l;
      l.ppm = ppm + offsets_hz[i] / 400.0;
      l.hz = l.ppm * 400.0;
      l.intensity = integral * weights[i] / total;
      m.lines.push_back(l);
    }
    m.ppm_low = m.lines.front().ppm;
    m.ppm_high = m.lines.back().ppm;
    return m;
  };
  return {mk(7.31, "d", {8.5}, 2, {-4.25, 4.25}, {1, 1}), mk(7.12, "d", {8.5}, 2, {-4.25, 4.25}, {1, 1}),
          mk(7.08, "s", {}, 1, {0}, {1}), mk(1.25, "t", {7.1}, 3, {-7.1, 0, 7.1}, {1, 2, 1}),
          mk(2.05, "br s", {}, 1, {0}, {1})};
}

std::vector<SpectralLine> all_lines(const std::vector<Multiplet> &ms) {
  std::vector<SpectralLine> out;
  for (const auto &m : ms) out.insert(out.end(), m.lines.begin(), m.lines.end());
  return out;
}

template <class E, class F>
void check_throws_naming(F f, const std::string &word) {
  INFO("expected a message naming '" << word << "'");
  try {
    f();
    FAIL("no error");
  } catch (const E &e) {
    const std::string what = e.what();
    INFO("message: " << what);
    CHECK(what.find(word) != std::string::npos);
  }
}

}  // namespace

TEST_SUITE("spectrum") {
  TEST_CASE("sampled lines equal the analytic Lorentzian and Gaussian everywhere, tails included") {
    struct Row {
      LineShape shape;
      double width_hz, mhz, low, high;
      std::size_t points;
      std::vector<double> centres;  // ppm; some outside the axis on purpose
      double tol;                   // of the tallest line's height
      const char *source;
    };
    const Row rows[] = {
        {LineShape::Lorentzian, 1.0, 400, -0.5, 12, 65536, {5.123456, -3, 11.99}, 1e-6, "common practice"},
        {LineShape::Lorentzian, 30.0, 400, -0.5, 12, 65536, {5.123456, 0.2}, 4e-6, "common practice"},
        {LineShape::Lorentzian, 60.0, 400, -0.5, 12, 65536, {5.123456}, 4e-6, "common practice"},
        {LineShape::Lorentzian, 10.0, 400, -0.5, 12, 1 << 20, {5.123456}, 4e-6, "common practice"},
        {LineShape::Lorentzian, 0.5, 600, 0, 10, 4000, {2.5, 7.77}, 1e-9, "common practice"},
        {LineShape::Lorentzian, 2.0, 100.6, -5, 225, 1 << 17, {77.16, 250}, 1e-6, "common practice"},
        {LineShape::Gaussian, 1.0, 400, -0.5, 12, 65536, {5.123456, 11.999}, 1e-9, "common practice"},
        {LineShape::Gaussian, 20.0, 400, 0, 10, 20000, {0.01, 5}, 1e-9, "common practice"},
    };
    for (const auto &r : rows) {
      INFO(shape_name(r.shape), " ", r.width_hz, " Hz, ", r.points, " points  ", std::string(r.source));
      std::vector<SpectralLine> lines;
      for (double c : r.centres) lines.push_back(line(c, 1.5));
      const auto s = nmrpred::sample_lines(lines, options(r.shape, r.width_hz, r.mhz, r.low, r.high, r.points));
      REQUIRE(s.ppm.size() == r.points);
      REQUIRE(s.intensity.size() == r.points);
      check_close(s.ppm.front(), r.low, 1e-12);
      check_close(s.ppm.back(), r.high, 1e-12);
      const double fwhm = r.width_hz / r.mhz;
      const double height = 1.5 * shape_value(r.shape, 0, fwhm);
      double worst = 0;
      for (std::size_t i = 0; i < s.ppm.size(); ++i) {
        double want = 0;
        for (const auto &l : lines) want += l.intensity * shape_value(r.shape, s.ppm[i] - l.ppm, fwhm);
        worst = std::max(worst, std::fabs(s.intensity[i] - want));
      }
      INFO("worst difference / height = " << worst / height);
      CHECK(worst <= r.tol * height);
    }
  }

  TEST_CASE("the width at half height of a sampled line is the requested FWHM") {
    struct Row {
      LineShape shape;
      double width_hz, mhz;
      const char *source;
    };
    const Row rows[] = {{LineShape::Lorentzian, 1.0, 400, "common practice"},
                        {LineShape::Lorentzian, 0.3, 600, "common practice"},
                        {LineShape::Gaussian, 1.0, 400, "common practice"},
                        {LineShape::Gaussian, 5.0, 100.6, "common practice"}};
    for (const auto &r : rows) {
      INFO(shape_name(r.shape), " ", r.width_hz, " Hz at ", r.mhz, " MHz  ", std::string(r.source));
      const double fwhm = r.width_hz / r.mhz, centre = 5.00037;
      // About 80 samples across the half-height width.
      const double span = 4000 * fwhm;
      const auto s = nmrpred::sample_lines(
          {line(centre, 1)}, options(r.shape, r.width_hz, r.mhz, centre - span / 2.3, centre + span / 1.7, 50001));
      const auto top =
          static_cast<std::size_t>(std::max_element(s.intensity.begin(), s.intensity.end()) - s.intensity.begin());
      const double half = s.intensity[top] / 2;
      std::size_t a = top, b = top;
      while (a > 0 && s.intensity[a] > half) --a;
      while (b + 1 < s.ppm.size() && s.intensity[b] > half) ++b;
      auto cross = [&](std::size_t i, std::size_t k) {
        return s.ppm[i] + (half - s.intensity[i]) / (s.intensity[k] - s.intensity[i]) * (s.ppm[k] - s.ppm[i]);
      };
      const double width = cross(b, b - 1) - cross(a, a + 1);
      check_close(width * r.mhz, r.width_hz, 2e-3 * r.width_hz);
    }
  }

  TEST_CASE("each line encloses its intensity as area over ppm") {
    struct Row {
      LineShape shape;
      double width_hz, mhz, low, high;
      std::size_t points;
      double tol;  // relative
      const char *source;
    };
    const Row rows[] = {
        {LineShape::Lorentzian, 1.0, 400, -0.5, 12, 65536, 1e-5, "common practice: arctangent integral"},
        {LineShape::Lorentzian, 15.0, 400, -0.5, 12, 65536, 1e-5, "common practice: arctangent integral"},
        {LineShape::Lorentzian, 2.0, 100.6, -5, 225, 262144, 1e-5, "common practice: arctangent integral"},
        {LineShape::Gaussian, 1.0, 400, -0.5, 12, 65536, 1e-6, "common practice: Gaussian integral"},
        {LineShape::Gaussian, 4.0, 100.6, -5, 225, 262144, 1e-6, "common practice: Gaussian integral"},
    };
    for (const auto &r : rows) {
      INFO(shape_name(r.shape), " ", r.width_hz, " Hz  ", std::string(r.source));
      const std::vector<SpectralLine> lines{line(r.low + 0.31 * (r.high - r.low), 2.0),
                                            line(r.low + 0.77 * (r.high - r.low), 3.0)};
      const auto s = nmrpred::sample_lines(lines, options(r.shape, r.width_hz, r.mhz, r.low, r.high, r.points));
      const double step = s.ppm[1] - s.ppm[0];
      double area = 0;
      for (std::size_t i = 0; i < s.ppm.size(); ++i)
        area += s.intensity[i] * step * (i == 0 || i + 1 == s.ppm.size() ? 0.5 : 1.0);
      // What lies inside the axis: all of a Gaussian, the arctangent share of a Lorentzian.
      double want = 0;
      const double g = r.width_hz / r.mhz / 2;
      for (const auto &l : lines)
        want += r.shape == LineShape::Gaussian
                    ? l.intensity
                    : l.intensity / kPi * (std::atan((r.high - l.ppm) / g) - std::atan((r.low - l.ppm) / g));
      check_close(area, want, r.tol * want);
      if (r.shape == LineShape::Lorentzian) CHECK(want < 5.0 - 1e-4);  // the tails beyond the axis are real
    }
  }

  TEST_CASE("a sampled line peaks exactly at its position") {
    struct Row {
      LineShape shape;
      double ppm;
      const char *source;
    };
    const Row rows[] = {{LineShape::Lorentzian, 7.26, "common practice: 1/L is a parabola"},
                        {LineShape::Lorentzian, 1.2345678, "common practice: 1/L is a parabola"},
                        {LineShape::Gaussian, 7.26, "common practice: ln G is a parabola"},
                        {LineShape::Gaussian, 3.3333333, "common practice: ln G is a parabola"}};
    for (const auto &r : rows) {
      INFO(shape_name(r.shape), " at ", r.ppm, "  ", std::string(r.source));
      const auto s = nmrpred::sample_lines({line(r.ppm, 1)}, options(r.shape, 1.0, 400, 0, 10, 65536));
      const double step = s.ppm[1] - s.ppm[0];
      const auto k =
          static_cast<std::size_t>(std::max_element(s.intensity.begin(), s.intensity.end()) - s.intensity.begin());
      // The nearest sample is the tallest one.
      CHECK(std::fabs(s.ppm[k] - r.ppm) <= step / 2 + 1e-12);
      auto f = [&](std::size_t i) {
        return r.shape == LineShape::Gaussian ? std::log(s.intensity[i]) : -1.0 / s.intensity[i];
      };
      const double y0 = f(k - 1), y1 = f(k), y2 = f(k + 1);
      const double vertex = s.ppm[k] + step * 0.5 * (y0 - y2) / (y0 - 2 * y1 + y2);
      check_close(vertex, r.ppm, 1e-4 * step);
    }
    // A line on a sample: that sample and its neighbours are symmetric.
    const auto o = options(LineShape::Lorentzian, 1.0, 400, 0, 10, 10001);
    const auto s = nmrpred::sample_lines({line(5.0, 1)}, o);
    const std::size_t mid = 5000;
    check_close(s.ppm[mid], 5.0, 1e-12);
    check_close(s.intensity[mid - 1] / s.intensity[mid + 1], 1.0, 1e-9);
    CHECK(s.intensity[mid] > s.intensity[mid - 1]);
  }

  TEST_CASE("solvent signals split by deuterium follow spin-1 statistics") {
    struct Row {
      const char *solvent;
      Nucleus nucleus;
      double ppm;
      std::vector<double> pattern;
      double j_hz;
      const char *label;
      const char *source;
    };
    const Row rows[] = {
        {"CDCl3", Nucleus::C13, 77.16, {1, 1, 1}, 32.0, "t", "FULMER-2010 (from memory); J(C,D) COMMON-PRACTICE"},
        {"CDCl3", Nucleus::H1, 7.26, {1}, 0, "s", "FULMER-2010 (from memory)"},
        {"DMSO-d6",
         Nucleus::C13,
         39.52,
         {1, 3, 6, 7, 6, 3, 1},
         21.0,
         "sept",
         "FULMER-2010 (from memory); trinomial triangle (common practice)"},
        {"DMSO-d6", Nucleus::H1, 2.50, {1, 2, 3, 2, 1}, 1.9, "p", "FULMER-2010 (from memory); CHD2 quintet"},
        {"CD3OD", Nucleus::H1, 3.31, {1, 2, 3, 2, 1}, 1.7, "p", "FULMER-2010 (from memory); CHD2 quintet"},
        {"CD3OD", Nucleus::C13, 49.00, {1, 3, 6, 7, 6, 3, 1}, 21.4, "sept", "FULMER-2010 (from memory)"},
        {"acetone-d6", Nucleus::H1, 2.05, {1, 2, 3, 2, 1}, 2.2, "p", "FULMER-2010 (from memory); CHD2 quintet"},
        {"acetone-d6", Nucleus::C13, 29.84, {1, 3, 6, 7, 6, 3, 1}, 19.4, "sept", "FULMER-2010 (from memory)"},
        {"CD3CN", Nucleus::H1, 1.94, {1, 2, 3, 2, 1}, 2.5, "p", "FULMER-2010 (from memory); CHD2 quintet"},
        {"CD2Cl2", Nucleus::H1, 5.32, {1, 1, 1}, 1.0, "t", "FULMER-2010 (from memory); CHDCl2 1:1:1 triplet"},
        {"CD2Cl2", Nucleus::C13, 53.84, {1, 2, 3, 2, 1}, 27.2, "p", "FULMER-2010 (from memory); CD2 quintet"},
        {"THF-d8", Nucleus::C13, 25.31, {1, 2, 3, 2, 1}, 20.2, "p", "FULMER-2010 (from memory); CD2 quintet"},
        {"C6D6", Nucleus::C13, 128.06, {1, 1, 1}, 24.3, "t", "FULMER-2010 (from memory)"},
    };
    const double mhz = 100.6, area = 0.8;
    for (const auto &r : rows) {
      INFO(std::string(r.solvent), std::string(r.nucleus == Nucleus::C13 ? " 13C " : " 1H "), r.ppm, "  ",
           std::string(r.source));
      nmrpred::SolventPeakOptions po;
      po.residual_area = area;
      po.water = false;
      const auto peaks = nmrpred::solvent_peaks(nmrpred::find_solvent(tables(), r.solvent), r.nucleus, mhz, po);
      const nmrpred::SolventPeak *p = nullptr;
      for (const auto &c : peaks)
        if (std::fabs(c.signal.ppm - r.ppm) < 0.005) p = &c;
      REQUIRE(p != nullptr);
      CHECK(p->kind == nmrpred::SolventPeakKind::Residual);
      CHECK(p->signal.label == r.label);
      CHECK(p->deuterons == static_cast<int>(r.pattern.size() - 1) / 2);
      const auto &ls = p->signal.lines;
      REQUIRE(ls.size() == r.pattern.size());
      double sum = 0, centre = 0;
      for (std::size_t i = 0; i < ls.size(); ++i) {
        check_close(ls[i].intensity / ls[0].intensity, r.pattern[i] / r.pattern[0], 1e-12);
        if (i > 0) check_close((ls[i].ppm - ls[i - 1].ppm) * mhz, r.j_hz, 1e-9);
        if (i > 0) check_close(ls[i].hz - ls[i - 1].hz, r.j_hz, 1e-9);
        sum += ls[i].intensity;
        centre += ls[i].intensity * ls[i].ppm;
      }
      check_close(sum, area, 1e-12);
      check_close(centre / sum, r.ppm, 1e-9);
      if (r.j_hz > 0) {
        REQUIRE(p->signal.j_hz.size() == 1);
        check_close(p->signal.j_hz[0], r.j_hz, 1e-12);
      }
    }
  }

  TEST_CASE("water is one broad singlet, given once where it is the residual signal") {
    struct Row {
      const char *solvent;
      double water_ppm;
      const char *text;
      std::size_t peaks;  // residual 1H signals + water
      const char *source;
    };
    const Row rows[] = {
        {"CDCl3", 1.56, "H2O", 2, "FULMER-2010 (from memory)"},
        {"DMSO-d6", 3.33, "H2O", 2, "FULMER-2010 (from memory)"},
        {"CD3OD", 4.87, "HDO", 2, "FULMER-2010 (from memory); exchange with O-D (common practice)"},
        {"D2O", 4.79, "HDO", 1, "FULMER-2010 (from memory); HDO is the residual signal"},
        {"C6D6", 0.40, "H2O", 2, "FULMER-2010 (from memory)"},
    };
    for (const auto &r : rows) {
      INFO(std::string(r.solvent), "  ", std::string(r.source));
      nmrpred::SolventPeakOptions po;
      po.water_area = 2.5;
      const auto peaks = nmrpred::solvent_peaks(nmrpred::find_solvent(tables(), r.solvent), Nucleus::H1, 400, po);
      CHECK(peaks.size() == r.peaks);
      REQUIRE(!peaks.empty());
      const auto &w = peaks.back();
      CHECK(w.kind == nmrpred::SolventPeakKind::Water);
      CHECK(w.text == r.text);
      CHECK(w.signal.label == "br s");
      REQUIRE(w.signal.lines.size() == 1);
      check_close(w.signal.lines[0].ppm, r.water_ppm, 0.005);
      check_close(w.signal.lines[0].intensity, 2.5, 1e-12);
    }
    // 13C lists have no water.
    for (const auto &p : nmrpred::solvent_peaks(nmrpred::find_solvent(tables(), "CDCl3"), Nucleus::C13, 100.6))
      CHECK(p.kind == nmrpred::SolventPeakKind::Residual);
  }

  TEST_CASE("a solvent multiplicity that deuterium cannot produce is a TablesError naming the solvent") {
    nmrpred::Solvent s;
    s.name = "demo-solvent";
    s.h1_residual = {{2.0, "q", 2.0}};
    check_throws_naming<nmrpred::TablesError>([&] { nmrpred::solvent_peaks(s, Nucleus::H1, 400); }, "demo-solvent");
    s.h1_residual = {{2.0, "t", 0.0}};
    check_throws_naming<nmrpred::TablesError>([&] { nmrpred::solvent_peaks(s, Nucleus::H1, 400); }, "coupling");
    s.h1_residual = {{2.0, "s", 0.0}};
    check_throws_naming<nmrpred::ArgumentError>([&] { nmrpred::solvent_peaks(s, Nucleus::H1, 0); }, "field_mhz");
    nmrpred::SolventPeakOptions po;
    po.water_area = std::nan("");
    check_throws_naming<nmrpred::ArgumentError>([&] { nmrpred::solvent_peaks(s, Nucleus::H1, 400, po); }, "water_area");
  }

  TEST_CASE("broad signals are sampled with the broad line width") {
    // A "br s" line of width W has height 2/(pi W) per unit area (Lorentzian, common practice).
    auto o = options(LineShape::Lorentzian, 1.0, 400, 0, 10, 65536);
    o.broad_line_width_hz = 20;
    const auto signals = demo_signals();
    const auto s = nmrpred::sample_signals(signals, o);
    auto at = [&](double ppm) {
      const auto i = static_cast<std::size_t>(std::lround((ppm - o.ppm_low) / (s.ppm[1] - s.ppm[0])));
      return s.intensity[i];
    };
    // The nearest sample is within 1e-3 of the broad peak's height and 2 % of
    // the narrow one's (off-grid centres; other lines' tails add 2e-4).
    check_close(at(2.05), 1.0 * 2 / (kPi * 20.0 / 400), 1e-3 * 2 / (kPi * 20.0 / 400));
    check_close(at(7.08), 1.0 * 2 / (kPi * 1.0 / 400), 0.02 * 2 / (kPi * 1.0 / 400));
    // The same lines through sample_lines all get the narrow width.
    const auto narrow = nmrpred::sample_lines(all_lines(signals), o);
    CHECK(narrow.intensity != s.intensity);
  }

  TEST_CASE("JCAMP-DX files carry the required labels in order and read back within YFACTOR") {
    struct Row {
      nmrpred::JcampEncoding encoding;
      Nucleus nucleus;
      double mhz;
      const char *observe;
    };
    const Row rows[] = {{nmrpred::JcampEncoding::Affn, Nucleus::H1, 400.13, "^1H"},
                        {nmrpred::JcampEncoding::DifDup, Nucleus::H1, 400.13, "^1H"},
                        {nmrpred::JcampEncoding::DifDup, Nucleus::C13, 100.61, "^13C"},
                        {nmrpred::JcampEncoding::Affn, Nucleus::C13, 100.61, "^13C"}};
    for (const auto &r : rows) {
      INFO(std::string(r.encoding == nmrpred::JcampEncoding::Affn ? "AFFN " : "DIFDUP "), std::string(r.observe),
           "  McDonald & Wilks 1988; Davies & Lampen 1993 (from memory)");
      auto o = nmrpred::sampling_defaults(r.nucleus, r.mhz);
      o.points = 8192;
      std::vector<SpectralLine> lines = all_lines(demo_signals());
      if (r.nucleus == Nucleus::C13) lines = {line(77.16, 1), line(128.4, 2), line(21.3, 1), line(-2, -0.5)};
      const auto s = nmrpred::sample_lines(lines, o);
      nmrpred::JcampOptions jo;
      jo.encoding = r.encoding;
      jo.title = "demo spectrum";
      jo.solvent_name = "CDCl3";
      const auto text = nmrpred::format_jcamp_dx(s, jo);
      check_jcamp(text, s, r.observe);
      CHECK(text.find("##.SOLVENT NAME=CDCl3\n") != std::string::npos);
      CHECK(text.substr(text.size() - 7) == "##END=\n");
      // Equal input, equal file (no date or other varying field).
      CHECK(nmrpred::format_jcamp_dx(s, jo) == text);
    }
  }

  TEST_CASE("DIFDUP files compress runs and flat baselines") {
    // A spectrum with exact zeros and a ramp: DUP must repeat values and differences.
    SampledSpectrum s;
    s.field_mhz = 400;
    for (int i = 0; i < 300; ++i) {
      s.ppm.push_back(i * 0.01);
      s.intensity.push_back(i < 100 ? 0.0 : i < 200 ? (i - 100) * 1.0 : (i == 250 ? -7.5 : 3.0));
    }
    nmrpred::JcampOptions jo;
    jo.encoding = nmrpred::JcampEncoding::DifDup;
    const auto text = nmrpred::format_jcamp_dx(s, jo);
    check_jcamp(text, s, "^1H");
    CHECK(text.size() < 2000);  // 300 AFFN values would need about 3000 characters
  }

  TEST_CASE("bad JCAMP-DX options are ArgumentErrors naming the field") {
    const auto s = nmrpred::sample_lines({line(1, 1)}, options(LineShape::Lorentzian, 1, 400, 0, 2, 64));
    nmrpred::JcampOptions jo;
    jo.title = "two\nlines";
    check_throws_naming<nmrpred::ArgumentError>([&] { nmrpred::format_jcamp_dx(s, jo); }, "title");
    jo.title = "a $$ comment";
    check_throws_naming<nmrpred::ArgumentError>([&] { nmrpred::format_jcamp_dx(s, jo); }, "title");
    jo.title = "ok";
    jo.owner = "";
    check_throws_naming<nmrpred::ArgumentError>([&] { nmrpred::format_jcamp_dx(s, jo); }, "owner");
    jo.owner = "x";
    jo.origin = "caf\xC3\xA9";
    check_throws_naming<nmrpred::ArgumentError>([&] { nmrpred::format_jcamp_dx(s, jo); }, "origin");
    check_throws_naming<nmrpred::ArgumentError>([&] { nmrpred::format_jcamp_dx(SampledSpectrum{}, {}); }, "points");
    auto uneven = s;
    uneven.ppm[10] += 1e-3;
    check_throws_naming<nmrpred::ArgumentError>([&] { nmrpred::format_jcamp_dx(uneven, {}); }, "equally spaced");
    auto nan = s;
    nan.intensity[3] = std::nan("");
    check_throws_naming<nmrpred::ArgumentError>([&] { nmrpred::format_jcamp_dx(nan, {}); }, "point 3");
  }

  TEST_CASE("the SVG drawing is escaped, decreasing to the right, and its labels do not overlap") {
    auto o = nmrpred::sampling_defaults(Nucleus::H1, 400);
    o.ppm_low = 0;
    o.ppm_high = 9;
    auto signals = demo_signals();
    const auto solvent = nmrpred::solvent_peaks(nmrpred::find_solvent(tables(), "CDCl3"), Nucleus::H1, 400);
    auto all = signals;
    for (const auto &p : solvent) all.push_back(p.signal);
    const auto s = nmrpred::sample_signals(all, o);
    nmrpred::PlotOptions po;
    po.title = "demo <&> \"quoted\" \x01 bad\xFF byte";
    const double font = 12;
    po.font_px = font;
    const auto svg = nmrpred::format_svg(s, signals, solvent, po);
    CHECK(svg.rfind("<?xml version=\"1.0\" encoding=\"UTF-8\"", 0) == 0);
    CHECK(svg.find("xmlns=\"http://www.w3.org/2000/svg\"") != std::string::npos);
    CHECK(svg.find("version=\"1.1\"") != std::string::npos);
    CHECK(svg.find("<script") == std::string::npos);
    CHECK(svg.find("demo &lt;&amp;&gt; &quot;quoted&quot; ? bad? byte") != std::string::npos);
    CHECK(svg.find('\x01') == std::string::npos);
    // Every signal labelled as chemists write it (demo data).
    CHECK(svg.find(">7.31 d J=8.5 2H<") != std::string::npos);
    CHECK(svg.find(">1.25 t J=7.1 3H<") != std::string::npos);
    CHECK(svg.find(">2.05 br s 1H<") != std::string::npos);
    CHECK(svg.find(">CDCl3<") != std::string::npos);
    CHECK(svg.find(">H2O<") != std::string::npos);
    // Vertical labels: their baselines are at least one text height apart.
    const std::regex label_re(
        "<text class=\"(signal|solvent)-label\" x=\"([0-9.]+)\" y=\"[0-9.]+\" "
        "transform=\"rotate\\(-90 [0-9.]+ [0-9.]+\\)\" font-size=\"([0-9.]+)\"");
    std::vector<double> xs;
    double size = 0;
    for (auto it = std::sregex_iterator(svg.begin(), svg.end(), label_re); it != std::sregex_iterator(); ++it) {
      xs.push_back(std::stod((*it)[2]));
      size = std::stod((*it)[3]);
    }
    CHECK(xs.size() == signals.size() + solvent.size());
    std::sort(xs.begin(), xs.end());
    for (std::size_t i = 1; i < xs.size(); ++i) CHECK(xs[i] - xs[i - 1] >= size - 1e-6);
    // Tick values decrease from left to right.
    const auto g = svg.find("<g class=\"tick-values\"");
    REQUIRE(g != std::string::npos);
    const auto g_end = svg.find("</g>", g);
    const std::string ticks = svg.substr(g, g_end - g);
    const std::regex tick_re("<text x=\"([0-9.]+)\" y=\"[0-9.]+\">([-0-9.]+)</text>");
    std::vector<std::pair<double, double>> tv;
    for (auto it = std::sregex_iterator(ticks.begin(), ticks.end(), tick_re); it != std::sregex_iterator(); ++it)
      tv.emplace_back(std::stod((*it)[1]), std::stod((*it)[2]));
    REQUIRE(tv.size() >= 4);
    std::sort(tv.begin(), tv.end());
    for (std::size_t i = 1; i < tv.size(); ++i) CHECK(tv[i].second < tv[i - 1].second);
    CHECK(svg.find("chemical shift") != std::string::npos);
    // Integral values under the axis.
    CHECK(svg.find(">2.00<") != std::string::npos);
    CHECK(svg.find(">3.00<") != std::string::npos);
  }

  TEST_CASE("crowded labels are pushed apart and stay inside the picture") {
    auto o = nmrpred::sampling_defaults(Nucleus::H1, 400);
    std::vector<Multiplet> many;
    for (int i = 0; i < 60; ++i) {
      Multiplet m;
      m.ppm = 7.0 + 0.004 * i;  // 60 signals within 0.24 ppm (demo data)
      m.label = "s";
      m.integral = 1;
      m.lines = {line(m.ppm, 1)};
      m.ppm_low = m.ppm_high = m.ppm;
      many.push_back(m);
    }
    nmrpred::PlotOptions po;
    po.width_px = 600;
    const auto svg = nmrpred::format_svg(nmrpred::sample_signals(many, o), many, {}, po);
    const std::regex label_re("<text class=\"signal-label\" x=\"([0-9.]+)\"[^>]*font-size=\"([0-9.]+)\"");
    std::vector<double> xs;
    double size = 0;
    for (auto it = std::sregex_iterator(svg.begin(), svg.end(), label_re); it != std::sregex_iterator(); ++it) {
      xs.push_back(std::stod((*it)[1]));
      size = std::stod((*it)[2]);
    }
    REQUIRE(xs.size() == many.size());
    std::sort(xs.begin(), xs.end());
    for (std::size_t i = 1; i < xs.size(); ++i) CHECK(xs[i] - xs[i - 1] >= size - 1e-6);
    CHECK(xs.front() >= 0);
    CHECK(xs.back() <= po.width_px);
  }

  TEST_CASE("bad sampling and drawing options are ArgumentErrors naming the option") {
    struct Row {
      std::function<void(SamplingOptions &)> change;
      const char *word;
    };
    const double nan = std::nan(""), inf = std::numeric_limits<double>::infinity();
    const Row rows[] = {
        {[&](SamplingOptions &o) { o.ppm_low = nan; }, "ppm_low"},
        {[&](SamplingOptions &o) { o.ppm_high = inf; }, "ppm_high"},
        {[&](SamplingOptions &o) { o.ppm_low = 5, o.ppm_high = 5; }, "ppm_low"},
        {[&](SamplingOptions &o) { o.ppm_low = 6, o.ppm_high = 5; }, "ppm_low"},
        {[&](SamplingOptions &o) { o.line_width_hz = 0; }, "line_width_hz"},
        {[&](SamplingOptions &o) { o.line_width_hz = -1; }, "line_width_hz"},
        {[&](SamplingOptions &o) { o.line_width_hz = nan; }, "line_width_hz"},
        {[&](SamplingOptions &o) { o.points = 0; }, "points"},
        {[&](SamplingOptions &o) { o.points = 15; }, "points"},
        {[&](SamplingOptions &o) { o.points = (std::size_t{1} << 22) + 1; }, "points"},
        {[&](SamplingOptions &o) { o.field_mhz = 0; }, "field_mhz"},
        {[&](SamplingOptions &o) { o.field_mhz = nan; }, "field_mhz"},
        {[&](SamplingOptions &o) { o.ppm_low = -1e308, o.ppm_high = 1e308; }, "window"},
    };
    for (const auto &r : rows) {
      INFO(std::string(r.word));
      auto o = nmrpred::sampling_defaults(Nucleus::H1, 400);
      r.change(o);
      check_throws_naming<nmrpred::ArgumentError>([&] { nmrpred::sample_lines({line(1, 1)}, o); }, r.word);
    }
    const auto o = nmrpred::sampling_defaults(Nucleus::H1, 400);
    check_throws_naming<nmrpred::ArgumentError>(
        [&] {
          nmrpred::sample_lines({line(1, 1), line(nan, 1)}, o);
        },
        "line 1");
    check_throws_naming<nmrpred::ArgumentError>([&] { nmrpred::sample_lines({line(1, inf)}, o); }, "intensity");
    auto broad = o;
    broad.broad_line_width_hz = -3;
    check_throws_naming<nmrpred::ArgumentError>([&] { nmrpred::sample_signals(demo_signals(), broad); },
                                                "broad_line_width_hz");
    check_throws_naming<nmrpred::ArgumentError>([&] { nmrpred::sampling_defaults(Nucleus::C13, -1); }, "field_mhz");
    const auto s = nmrpred::sample_lines({line(1, 1)}, o);
    for (auto [w, h, f, word] : {std::tuple{10.0, 500.0, 12.0, "width_px"}, std::tuple{1000.0, nan, 12.0, "height_px"},
                                 std::tuple{1000.0, 500.0, 0.0, "font_px"}}) {
      nmrpred::PlotOptions po;
      po.width_px = w;
      po.height_px = h;
      po.font_px = f;
      check_throws_naming<nmrpred::ArgumentError>([&] { nmrpred::format_svg(s, {}, {}, po); }, word);
    }
    nmrpred::PlotOptions tiny;
    tiny.height_px = 150;
    tiny.font_px = 72;
    check_throws_naming<nmrpred::ArgumentError>([&] { nmrpred::format_svg(s, demo_signals(), {}, tiny); }, "height_px");
  }

  // tests/python/test_spectrum_formats.py creates spectrum-format-samples/
  // in a temporary folder, runs this case alone there and checks the files
  // it leaves with its own JCAMP-DX reader and xml.etree. Without that
  // folder (ctest, a run from anywhere else) the files go to a TempDir.
  TEST_CASE("sample JCAMP-DX and SVG files are written for the format checks") {
    const auto requested = std::filesystem::current_path() / "spectrum-format-samples";
    std::optional<TempDir> temp;
    if (!std::filesystem::is_directory(requested)) temp.emplace("spectrum-samples");
    const auto dir = temp ? temp->path : requested;
    // Written files must hold exactly what the formatters returned.
    auto write = [&](const std::string &name, const std::string &text) {
      std::ofstream(dir / name, std::ios::binary) << text;
      std::ifstream in(dir / name, std::ios::binary);
      std::ostringstream back;
      back << in.rdbuf();
      CHECK(back.str() == text);
    };
    nlohmann::json index = nlohmann::json::array();
    struct Case {
      const char *file;
      LineShape shape;
      nmrpred::JcampEncoding encoding;
      double width_hz, mhz, low, high;
      std::size_t points;
      std::vector<std::pair<double, double>> lines;  // ppm, intensity (demo data)
    };
    const Case cases[] = {
        {"lorentzian-affn.jdx",
         LineShape::Lorentzian,
         nmrpred::JcampEncoding::Affn,
         1.5,
         400.13,
         -0.5,
         10,
         16384,
         {{7.26, 1.0}, {1.2345, 3.0}, {11.5, 2.0}}},
        {"lorentzian-difdup.jdx",
         LineShape::Lorentzian,
         nmrpred::JcampEncoding::DifDup,
         0.8,
         600.0,
         0,
         8,
         65536,
         {{3.14159, 2.0}, {3.16, 1.0}, {6.9, 0.5}}},
        {"gaussian-difdup.jdx",
         LineShape::Gaussian,
         nmrpred::JcampEncoding::DifDup,
         3.0,
         100.61,
         -5,
         225,
         32768,
         {{77.16, 1.0}, {128.3, 2.0}, {20.9, 1.0}}},
    };
    for (const auto &c : cases) {
      auto o = options(c.shape, c.width_hz, c.mhz, c.low, c.high, c.points);
      if (c.mhz < 200) o.nucleus = Nucleus::C13;
      std::vector<SpectralLine> lines;
      nlohmann::json jl = nlohmann::json::array();
      for (auto [p, i] : c.lines) {
        lines.push_back(line(p, i));
        jl.push_back({p, i});
      }
      nmrpred::JcampOptions jo;
      jo.title = std::string("demo ") + c.file;
      jo.encoding = c.encoding;
      jo.solvent_name = "CDCl3";
      const auto spectrum = nmrpred::sample_lines(lines, o);
      const auto text = nmrpred::format_jcamp_dx(spectrum, jo);
      write(c.file, text);
      INFO(std::string(c.file));
      check_jcamp(text, spectrum, o.nucleus == Nucleus::C13 ? "^13C" : "^1H");
      index.push_back({{"file", c.file},
                       {"shape", shape_name(c.shape)},
                       {"width_hz", c.width_hz},
                       {"mhz", c.mhz},
                       {"ppm_low", c.low},
                       {"ppm_high", c.high},
                       {"points", c.points},
                       {"lines", jl}});
    }
    auto o = nmrpred::sampling_defaults(Nucleus::H1, 400);
    o.ppm_low = 0;
    o.ppm_high = 9;
    const auto signals = demo_signals();
    const auto solvent = nmrpred::solvent_peaks(nmrpred::find_solvent(tables(), "CDCl3"), Nucleus::H1, 400);
    auto all = signals;
    for (const auto &p : solvent) all.push_back(p.signal);
    nmrpred::PlotOptions po;
    po.title = "demo <&> 'quoted' \xCE\xB1-pinene";
    write("demo.svg", nmrpred::format_svg(nmrpred::sample_signals(all, o), signals, solvent, po));
    nlohmann::json labels = nlohmann::json::array();
    for (const auto &m : signals) labels.push_back(m.ppm);
    write("index.json", nlohmann::json{{"jcamp", index},
                                       {"svg",
                                        {{"file", "demo.svg"},
                                         {"title", po.title},
                                         {"signals", labels.size()},
                                         {"solvent_peaks", solvent.size()}}}}
                            .dump(1));
  }
}
