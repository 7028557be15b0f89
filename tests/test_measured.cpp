// Measured peak lists (nmrpred/measured.hpp): reading the trade's prose style,
// CSV and JSON; writing a list the same way; predictions as peak lists.
//
// Sources of the expected values:
//  [CORPUS]  tests/data/measured_corpus.json: formatting examples typed in the
//            style of journal experimental sections, each with the parse a
//            chemist reads in it (common practice: how 1H and 13C peak lists
//            are written; the numbers are formatting examples, not data).
//            Expected error positions are where a reader would put the fault,
//            counted in bytes, lines and characters of the input.
//  [CP]      Common practice: a 1H peak list is written "1H NMR (400 MHz,
//            CDCl3) δ 7.31 (d, J = 8.5 Hz, 2H), ..." with 2 decimals, a 13C
//            list with 1 decimal and "(2C)" for coinciding carbons; integrals
//            of a molecule's 1H signals add up to its proton count; anisole
//            (C7H8O) has 8 protons and, by its mirror symmetry, 5 distinct
//            carbons, two of them standing for 2 carbons each.

#include <doctest/doctest.h>

#include <nmrpred/error.hpp>
#include <nmrpred/io.hpp>
#include <nmrpred/measured.hpp>
#include <nmrpred/predict.hpp>
#include <nmrpred/spin.hpp>
#include <nmrpred/tables.hpp>

#include <nlohmann/json.hpp>

#include <cmath>
#include <fstream>
#include <limits>
#include <random>
#include <sstream>
#include <string>
#include <vector>

#include "check.hpp"

namespace {

using nmrpred::MeasuredFormat;
using nmrpred::MeasuredPeak;
using nmrpred::MeasuredSpectrum;
using nmrpred::Nucleus;

const nlohmann::json &corpus() {
  static const nlohmann::json doc = [] {
    std::ifstream in(std::string(NMRPRED_TEST_DATA_DIR) + "/measured_corpus.json", std::ios::binary);
    REQUIRE(in.good());
    std::stringstream ss;
    ss << in.rdbuf();
    return nlohmann::json::parse(ss.str());
  }();
  return doc;
}

Nucleus nucleus_of(const std::string &s) {
  REQUIRE((s == "1H" || s == "13C"));
  return s == "1H" ? Nucleus::H1 : Nucleus::C13;
}

MeasuredFormat format_of(const nlohmann::json &c) {
  const std::string f = c.value("format", "auto");
  if (f == "csv") return MeasuredFormat::Csv;
  if (f == "json") return MeasuredFormat::Json;
  if (f == "text") return MeasuredFormat::Text;
  return MeasuredFormat::Auto;
}

std::optional<Nucleus> default_of(const nlohmann::json &c) {
  if (!c.contains("default_nucleus") || c["default_nucleus"].is_null()) return std::nullopt;
  return nucleus_of(c["default_nucleus"].get<std::string>());
}

std::string input_of(const nlohmann::json &c) {
  if (c.contains("input")) return c["input"].get<std::string>();
  const std::string hex = c["input_hex"].get<std::string>();
  std::string out;
  for (std::size_t i = 0; i + 1 < hex.size(); i += 2)
    out += static_cast<char>(std::stoi(hex.substr(i, 2), nullptr, 16));
  return out;
}

// Parsing decimals the way the corpus writes them gives the same doubles.
constexpr double kExact = 1e-9;

void check_peak(const MeasuredPeak &got, const nlohmann::json &want) {
  INFO("peak as read: " << got.text);
  double low, high, ppm;
  if (want.contains("low")) {
    low = want["low"].get<double>();
    high = want["high"].get<double>();
    ppm = want.contains("ppm") ? want["ppm"].get<double>() : (low + high) / 2;
  } else {
    ppm = low = high = want["ppm"].get<double>();
  }
  check_close(got.ppm, ppm, kExact);
  check_close(got.ppm_low, low, kExact);
  check_close(got.ppm_high, high, kExact);
  if (want.contains("integral")) {
    REQUIRE(got.integral.has_value());
    check_close(*got.integral, want["integral"].get<double>(), kExact);
  } else {
    CHECK_FALSE(got.integral.has_value());
  }
  CHECK(got.multiplicity == want.value("multiplicity", std::string()));
  const auto j = want.value("j", std::vector<double>());
  REQUIRE(got.j_hz.size() == j.size());
  for (std::size_t k = 0; k < j.size(); ++k) check_close(got.j_hz[k], j[k], kExact);
  const auto partner = want.value("j_partner", std::vector<std::string>(j.size()));
  CHECK(got.j_partner == partner);
  if (want.contains("attached_h")) {
    REQUIRE(got.attached_h.has_value());
    CHECK(*got.attached_h == want["attached_h"].get<int>());
  } else {
    CHECK_FALSE(got.attached_h.has_value());
  }
  CHECK(got.assignment == want.value("assignment", std::string()));
}

void check_spectra(const std::vector<MeasuredSpectrum> &got, const nlohmann::json &want) {
  REQUIRE(got.size() == want.size());
  for (std::size_t s = 0; s < got.size(); ++s) {
    const auto &w = want[s];
    CHECK(got[s].nucleus == nucleus_of(w["nucleus"].get<std::string>()));
    if (w.contains("mhz")) {
      REQUIRE(got[s].mhz.has_value());
      check_close(*got[s].mhz, w["mhz"].get<double>(), kExact);
    } else {
      CHECK_FALSE(got[s].mhz.has_value());
    }
    CHECK(got[s].solvent == w.value("solvent", std::string()));
    REQUIRE(got[s].peaks.size() == w["peaks"].size());
    for (std::size_t p = 0; p < got[s].peaks.size(); ++p) check_peak(got[s].peaks[p], w["peaks"][p]);
  }
}

// parse(format(x)) == x up to the written rounding (2 decimals for 1H shifts,
// 1 for 13C, 1 for J, 2 for integrals and fields).
void check_round_trip(const MeasuredSpectrum &x) {
  const std::string written = nmrpred::format_measured(x);
  INFO("written: " << written);
  const auto back = nmrpred::parse_measured(written, MeasuredFormat::Text);
  REQUIRE(back.size() == 1);
  const auto &y = back[0];
  const double tol = (x.nucleus == Nucleus::H1 ? 0.005 : 0.05) + 1e-9;
  CHECK(y.nucleus == x.nucleus);
  CHECK(y.mhz.has_value() == x.mhz.has_value());
  if (x.mhz && y.mhz) check_close(*y.mhz, *x.mhz, 0.005 + 1e-9);
  CHECK(y.solvent == x.solvent);
  REQUIRE(y.peaks.size() == x.peaks.size());
  for (std::size_t k = 0; k < x.peaks.size(); ++k) {
    const auto &a = x.peaks[k];
    const auto &b = y.peaks[k];
    check_close(b.ppm_low, a.ppm_low, tol);
    check_close(b.ppm_high, a.ppm_high, tol);
    check_close(b.ppm, a.ppm, tol);
    CHECK(b.integral.has_value() == a.integral.has_value());
    if (a.integral && b.integral) check_close(*b.integral, *a.integral, 0.005 + 1e-9);
    CHECK(b.multiplicity == a.multiplicity);
    REQUIRE(b.j_hz.size() == a.j_hz.size());
    for (std::size_t j = 0; j < a.j_hz.size(); ++j) check_close(b.j_hz[j], a.j_hz[j], 0.05 + 1e-9);
    CHECK(b.j_partner == a.j_partner);
    if (x.nucleus == Nucleus::C13) CHECK(b.attached_h == a.attached_h);
    CHECK(b.assignment == a.assignment);
  }
}

bool valid_utf8(const std::string &s) {
  for (std::size_t i = 0; i < s.size();) {
    const auto c = static_cast<unsigned char>(s[i]);
    std::size_t n = c < 0x80 ? 1 : (c >= 0xC2 && c <= 0xDF) ? 2 : (c >= 0xE0 && c <= 0xEF) ? 3 : (c >= 0xF0 && c <= 0xF4) ? 4 : 0;
    if (n == 0 || i + n > s.size()) return false;
    for (std::size_t k = 1; k < n; ++k)
      if ((static_cast<unsigned char>(s[i + k]) & 0xC0) != 0x80) return false;
    i += n;
  }
  return true;
}

}  // namespace

TEST_SUITE("measured") {
  TEST_CASE("every corpus case reads as the peaks a chemist reads in it") {
    const auto &cases = corpus()["cases"];
    CHECK(cases.size() >= 40);
    for (const auto &c : cases) {
      const std::string id = c["id"].get<std::string>();
      const std::string input = input_of(c);
      INFO(id << "  [CORPUS]\n" << input);
      std::vector<MeasuredSpectrum> got;
      try {
        got = nmrpred::parse_measured(input, format_of(c), default_of(c));
      } catch (const nmrpred::Error &e) {
        FAIL_CHECK("unexpected error: " << std::string(e.what()));
        continue;
      }
      check_spectra(got, c["expect"]);
      // Each peak remembers where it was written.
      for (const auto &s : got)
        for (const auto &p : s.peaks) {
          CHECK(p.position < input.size());
          CHECK(input.compare(p.position, p.text.size(), p.text) == 0);
        }
    }
  }

  TEST_CASE("issue 5: a quintet is written \"p\" as simulated multiplets are, and read in every spelling") {
    // Common practice: "p", "quint", "quin", "pent" and the words "quintet" /
    // "pentet" all name a 1:4:6:4:1 quintet; the library writes one letter,
    // the one its simulated multiplets use.
    nmrpred::SpinSystem sys{{nmrpred::Spin{}}, {}};
    sys.spins[0].shift_ppm = 1.6;
    for (std::size_t k = 1; k <= 4; ++k) {
      nmrpred::Spin partner;
      partner.shift_ppm = 3.4;
      partner.equivalence_class = 1;
      sys.spins.push_back(partner);
      sys.couplings.push_back({0, k, 7.4});
    }
    const auto sim = nmrpred::simulate(sys, nmrpred::SpinNucleus::H1);
    std::string simulated;
    for (const auto &m : sim.multiplets)
      if (m.atoms == std::vector<std::size_t>{0}) simulated = m.label;
    CHECK(simulated == "p");
    for (const char *written : {"p", "quint", "quin", "pent", "quintet", "pentet", "dquint", "quintd"}) {
      INFO(written << " [common practice]");
      const std::string text = std::string("1H NMR (CDCl3) δ 1.62 (") + written + ", J = 7.4 Hz, 2H).";
      const auto got = nmrpred::parse_measured(text);
      REQUIRE(got.size() == 1);
      REQUIRE(got[0].peaks.size() == 1);
      const std::string want = std::string(written).find('d') == 0   ? "dp"
                               : std::string(written).back() == 'd' ? "pd"
                                                                   : "p";
      CHECK(got[0].peaks[0].multiplicity == want);
      // Written back in the library's spelling.
      CHECK(nmrpred::format_measured(got[0]).find("(" + want + ",") != std::string::npos);
    }
  }

  TEST_CASE("malformed text is refused with the byte, line and column of the fault") {
    for (const auto &c : corpus()["errors"]) {
      const std::string id = c["id"].get<std::string>();
      const std::string input = input_of(c);
      INFO(id << "  [CORPUS]\n" << input);
      const std::string where = "at line " + std::to_string(c["line"].get<int>()) + ", column " +
                                std::to_string(c["column"].get<int>()) + " (byte " +
                                std::to_string(c["byte"].get<int>()) + ")";
      try {
        nmrpred::parse_measured(input, format_of(c), default_of(c));
        FAIL_CHECK("no error for malformed input");
      } catch (const nmrpred::InputError &e) {
        const std::string msg = e.what();
        INFO("message: " << msg);
        CHECK(e.status() == nmrpred::Status::Input);
        CHECK(msg.find(c["message"].get<std::string>()) != std::string::npos);
        CHECK(msg.find(where) != std::string::npos);
        CHECK(msg.find("found ") != std::string::npos);
      }
    }
  }

  TEST_CASE("every corpus case survives format_measured then parse_measured up to the written rounding") {
    for (const auto &c : corpus()["cases"]) {
      INFO(c["id"].get<std::string>() << "  [CORPUS]");
      for (const auto &s : nmrpred::parse_measured(input_of(c), format_of(c), default_of(c))) check_round_trip(s);
    }
  }

  TEST_CASE("format_measured writes the trade's layout") {
    // [CP] the layout of journal experimental sections.
    MeasuredSpectrum h;
    h.nucleus = Nucleus::H1;
    h.mhz = 400;
    h.solvent = "CDCl3";
    MeasuredPeak a;
    a.ppm = a.ppm_low = a.ppm_high = 7.31;
    a.multiplicity = "d";
    a.j_hz = {8.5};
    a.j_partner = {""};
    a.integral = 2;
    MeasuredPeak b;
    b.ppm_low = 7.28;
    b.ppm_high = 7.40;
    b.ppm = 7.34;
    b.multiplicity = "m";
    b.integral = 5;
    MeasuredPeak m;
    m.ppm = m.ppm_low = m.ppm_high = 3.8;
    m.multiplicity = "s";
    m.integral = 3;
    m.assignment = "OCH3";
    MeasuredPeak dd;
    dd.ppm = dd.ppm_low = dd.ppm_high = 2.054;
    dd.multiplicity = "dd";
    dd.j_hz = {8.46, 2.1};
    dd.j_partner = {"", ""};
    dd.integral = 1;
    h.peaks = {a, b, m, dd};
    CHECK(nmrpred::format_measured(h) ==
          "1H NMR (400 MHz, CDCl3) \u03B4 7.31 (d, J = 8.5 Hz, 2H), 7.40\u20137.28 (m, 5H), 3.80 (s, 3H, OCH3), "
          "2.05 (dd, J = 8.5, 2.1 Hz, 1H).");

    MeasuredSpectrum c;
    c.nucleus = Nucleus::C13;
    c.mhz = 100.6;
    MeasuredPeak q;
    q.ppm = q.ppm_low = q.ppm_high = 159.07;
    MeasuredPeak two;
    two.ppm = two.ppm_low = two.ppm_high = 128.5;
    two.integral = 2;
    two.attached_h = 1;
    MeasuredPeak cf;
    cf.ppm = cf.ppm_low = cf.ppm_high = 162.4;
    cf.multiplicity = "d";
    cf.j_hz = {247.5};
    cf.j_partner = {"F"};
    c.peaks = {q, two, cf};
    CHECK(nmrpred::format_measured(c) ==
          "13C NMR (100.6 MHz) \u03B4 159.1, 128.5 (2C, CH), 162.4 (d, J(C,F) = 247.5 Hz).");
  }

  TEST_CASE("format_measured refuses values that would not read back as written") {
    MeasuredSpectrum s;
    s.nucleus = Nucleus::H1;
    MeasuredPeak p;
    p.ppm = p.ppm_low = p.ppm_high = 1.0;
    s.peaks = {p};
    CHECK_NOTHROW(nmrpred::format_measured(s));
    auto bad = s;
    bad.peaks[0].ppm = bad.peaks[0].ppm_low = bad.peaks[0].ppm_high = std::numeric_limits<double>::quiet_NaN();
    CHECK_THROWS_AS(nmrpred::format_measured(bad), nmrpred::InputError);
    bad = s;
    bad.peaks[0].assignment = "2H";  // would read back as an integral
    CHECK_THROWS_AS(nmrpred::format_measured(bad), nmrpred::InputError);
    bad = s;
    bad.peaks[0].assignment = "H-3 (ax";
    CHECK_THROWS_AS(nmrpred::format_measured(bad), nmrpred::InputError);
    bad = s;
    bad.peaks[0].multiplicity = "wobbly";
    CHECK_THROWS_AS(nmrpred::format_measured(bad), nmrpred::InputError);
    bad = s;
    bad.solvent = "CDCl3, 25 mM";
    CHECK_THROWS_AS(nmrpred::format_measured(bad), nmrpred::InputError);
  }

  TEST_CASE("arguments outside the enumerations are refused as ArgumentError") {
    CHECK_THROWS_AS(nmrpred::parse_measured("7.26", MeasuredFormat::Text, static_cast<Nucleus>(7)),
                    nmrpred::ArgumentError);
    CHECK_THROWS_AS(nmrpred::parse_measured("7.26", static_cast<MeasuredFormat>(9), Nucleus::H1),
                    nmrpred::ArgumentError);
  }

  TEST_CASE("a prediction becomes a peak list whose integrals add up to the proton count") {
    static const auto tables = nmrpred::Tables::builtin();
    const auto pred = nmrpred::predict(nmrpred::read_molecule("COc1ccccc1", nmrpred::Format::Smiles), *tables);
    const auto h = nmrpred::as_measured(pred, Nucleus::H1, 400.0);
    CHECK(h.nucleus == Nucleus::H1);
    REQUIRE(h.mhz.has_value());
    CHECK(*h.mhz == 400.0);
    CHECK(h.solvent == pred.solvent.name);
    REQUIRE(h.peaks.size() == pred.h1_signals.size());
    double total = 0;
    for (const auto &p : h.peaks) {
      REQUIRE(p.integral.has_value());
      total += *p.integral;
      CHECK(p.ppm_low == p.ppm);
      CHECK(p.ppm_high == p.ppm);
      CHECK(p.j_partner.size() == p.j_hz.size());
    }
    check_close(total, 8, 0);  // [CP] anisole C7H8O
    const auto c = nmrpred::as_measured(pred, Nucleus::C13, std::nullopt);
    REQUIRE(c.peaks.size() == 5);  // [CP] OCH3, ipso, 2 ortho, 2 meta, para
    int doubled = 0, methyl = 0, quaternary = 0;
    for (const auto &p : c.peaks) {
      REQUIRE(p.attached_h.has_value());
      if (p.integral) {
        CHECK(*p.integral == 2);
        ++doubled;
      }
      methyl += *p.attached_h == 3;
      quaternary += *p.attached_h == 0;
    }
    CHECK(doubled == 2);
    CHECK(methyl == 1);
    CHECK(quaternary == 1);
    check_round_trip(h);
    check_round_trip(c);
  }

  TEST_CASE("signals that would be written alike become one peak with the summed integral") {
    // [CP] a chemist writes coinciding signals once, with their integrals
    // added ("4.15 (q, J = 7.0 Hz, 2H)" for two diastereotopic OCH2 protons
    // predicted at one shift). The tie is made by hand so that the check does
    // not depend on the predicted values.
    static const auto tables = nmrpred::Tables::builtin();
    auto pred = nmrpred::predict(nmrpred::read_molecule("COc1ccccc1", nmrpred::Format::Smiles), *tables);
    const auto before = nmrpred::as_measured(pred, Nucleus::H1, 400.0);
    REQUIRE(pred.h1_signals.size() >= 3);
    auto &a = pred.h1_signals[0];
    auto &b = pred.h1_signals[1];
    b.ppm = a.ppm + 0.001;  // the same at two decimals
    b.multiplicity = a.multiplicity;
    b.j_hz = a.j_hz;
    const auto tied = nmrpred::as_measured(pred, Nucleus::H1, 400.0);
    REQUIRE(tied.peaks.size() == before.peaks.size() - 1);
    REQUIRE(tied.peaks[0].integral.has_value());
    CHECK(*tied.peaks[0].integral == static_cast<double>(a.count + b.count));
    CHECK(tied.peaks[0].text.find(std::to_string(a.count + b.count) + "H)") != std::string::npos);
    double total = 0;
    for (const auto &p : tied.peaks) total += p.integral.value_or(0);
    check_close(total, 8, 0);  // [CP] anisole C7H8O
    check_round_trip(tied);
    // 13C: the same for two classes with one written value and one attached-H
    // count ("(2C)"), but not across attached-H counts.
    auto &c0 = pred.c13_signals[0];
    auto &c1 = pred.c13_signals[1];
    const auto c_before = nmrpred::as_measured(pred, Nucleus::C13, std::nullopt);
    c1.ppm = c0.ppm;
    c1.attached_h = c0.attached_h == 3 ? 2 : 3;
    CHECK(nmrpred::as_measured(pred, Nucleus::C13, std::nullopt).peaks.size() == c_before.peaks.size());
    c1.attached_h = c0.attached_h;
    const auto c_tied = nmrpred::as_measured(pred, Nucleus::C13, std::nullopt);
    REQUIRE(c_tied.peaks.size() == c_before.peaks.size() - 1);
    CHECK(c_tied.peaks[0].integral.value_or(1) == static_cast<double>(c0.count + c1.count));
  }

  TEST_CASE("random mutations of the corpus give a result or an InputError, never anything else") {
    std::vector<std::string> seeds;
    for (const auto &c : corpus()["cases"]) seeds.push_back(input_of(c));
    for (const auto &c : corpus()["errors"]) seeds.push_back(input_of(c));
    const std::vector<std::string> pieces = {"(", ")", ",", ";", ".", "-", "\xE2\x80\x93", "\xCE\xB4", " ", "\n",
                                             "J", "J =", "Hz", "H", "C", "d", "1H NMR", "13C NMR", "0", "7.",
                                             "\"", "{", "}", "[", "]", ":", "x", "each", "\xC2\xA0", "999999"};
    std::mt19937 rng(20240611u);
    auto pick = [&](std::size_t n) { return static_cast<std::size_t>(rng() % (n ? n : 1)); };
    int results = 0, errors = 0;
    for (int round = 0; round < 3000; ++round) {
      std::string t = seeds[pick(seeds.size())];
      const int edits = 1 + static_cast<int>(pick(3));
      for (int e = 0; e < edits; ++e) {
        const std::size_t at = pick(t.size() + 1);
        switch (pick(5)) {
          case 0:
            if (!t.empty()) t.erase(std::min(at, t.size() - 1), 1 + pick(3));
            break;
          case 1:
            t.insert(at, pieces[pick(pieces.size())]);
            break;
          case 2:
            t.insert(at, 1, static_cast<char>(pick(256)));
            break;
          case 3:
            t = t.substr(0, at);
            break;
          default:
            if (at < t.size()) t.insert(at, t.substr(at, 1 + pick(12)));
            break;
        }
      }
      const std::optional<Nucleus> dn =
          pick(3) == 0 ? std::nullopt : std::optional<Nucleus>(pick(2) ? Nucleus::H1 : Nucleus::C13);
      INFO("input: " << t);
      try {
        const auto got = nmrpred::parse_measured(t, MeasuredFormat::Auto, dn);
        ++results;
        REQUIRE(!got.empty());
        for (const auto &s : got) {
          for (const auto &p : s.peaks) {
            CHECK(std::isfinite(p.ppm));
            CHECK(p.ppm_low <= p.ppm);
            CHECK(p.ppm <= p.ppm_high);
            CHECK(p.j_partner.size() == p.j_hz.size());
            CHECK(valid_utf8(p.text));
            CHECK(valid_utf8(p.assignment));
          }
          CHECK(valid_utf8(s.solvent));
          // Whatever was read can be written, or is refused as InputError.
          try {
            const std::string w = nmrpred::format_measured(s);
            if (!s.peaks.empty()) CHECK_NOTHROW(nmrpred::parse_measured(w, MeasuredFormat::Text));
          } catch (const nmrpred::InputError &) {
          }
        }
      } catch (const nmrpred::InputError &e) {
        ++errors;
        CHECK(valid_utf8(e.what()));
      } catch (const std::exception &e) {
        FAIL_CHECK("unexpected exception: " << std::string(e.what()));
      }
    }
    CHECK(results > 0);
    CHECK(errors > 0);
  }
}
