// Spin-system simulation (nmrpred/spin.hpp): closed forms of small spin
// systems, first-order patterns, magnetic equivalence, the cap on exact
// clusters, molecules, and bad input.
//
// Sources of the expected values:
//  [AB]     The AB quartet: lines at centre +- (C + J)/2 and centre +- (C - J)/2
//           with C = sqrt(dnu^2 + J^2); inner/outer intensity ratio
//           (1 + sin 2theta)/(1 - sin 2theta) with sin 2theta = J/C.
//           H. Gunther, "NMR Spectroscopy", 3rd ed., Wiley-VCH 2013, ch. 4;
//           R. J. Abraham, J. Fisher, P. Loftus, "Introduction to NMR
//           Spectroscopy", Wiley 1988, ch. 3 (from memory).
//  [AAXX]   The A half of AA'XX' (Gunther, ch. 4; Abraham/Fisher/Loftus, ch. 3;
//           from memory): with N = J_AX + J_AX', L = J_AX - J_AX',
//           K = J_AA' + J_XX', M = J_AA' - J_XX' it is symmetric about nu_A
//           with lines at +-N/2, +-(sqrt(K^2 + L^2) +- K)/2 and
//           +-(sqrt(M^2 + L^2) +- M)/2: ten lines, the two N lines strongest.
//  [CP]     Common practice (any NMR text): n equivalent spin-1/2 neighbours
//           split a signal into n + 1 lines with binomial intensities
//           (Pascal's triangle; 1:2:1 triplet, 1:3:3:1 quartet); one spin-1
//           neighbour (2H) gives a 1:1:1 triplet (2I + 1 equally populated
//           states); integrals are proportional to the number of nuclei;
//           spins with no coupling give one line at their shift; chemically
//           and magnetically equivalent spins give one line whatever their
//           mutual coupling; first-order labels (s, d, t, q, ..., dd, br s);
//           proton-decoupled 13C spectra show couplings to 19F; exchangeable
//           OH protons appear as broad singlets; the AA'XX' halves of a
//           para-disubstituted benzene are reported as doublets with
//           J of about the ortho coupling (how papers write such rings), and
//           a strongly coupled ABC or AA'BB' as a multiplet.
//  [PRETSCH] E. Pretsch, P. Buhlmann, M. Badertscher, "Structure Determination
//           of Organic Compounds", 4th ed., Springer 2009, 1H NMR chapter:
//           aromatic H,H couplings ortho 6.5-9.5, meta 1-3, para 0-1 Hz;
//           shifts of para-disubstituted benzenes (from memory).
#include <algorithm>
#include <chrono>
#include <cmath>
#include <memory>
#include <numeric>
#include <string>
#include <vector>

#include <doctest/doctest.h>
#include <nlohmann/json.hpp>

#include <nmrpred/error.hpp>
#include <nmrpred/io.hpp>
#include <nmrpred/predict.hpp>
#include <nmrpred/spin.hpp>

#include "check.hpp"

TEST_SUITE("spin") {
  namespace {

  using nmrpred::SimulationOptions;
  using nmrpred::SpectralLine;
  using nmrpred::Spin;
  using nmrpred::SpinNucleus;
  using nmrpred::SpinSystem;

  Spin proton(double ppm) {
    Spin s;
    s.shift_ppm = ppm;
    return s;
  }

  Spin of(SpinNucleus nucleus, double ppm) {
    Spin s;
    s.shift_ppm = ppm;
    s.nucleus = nucleus;
    return s;
  }

  double total(const std::vector<SpectralLine> &lines) {
    double t = 0;
    for (const auto &l : lines) t += l.intensity;
    return t;
  }

  /// Lines of at least `floor` times the strongest line.
  std::vector<SpectralLine> visible(const std::vector<SpectralLine> &lines, double floor = 1e-6) {
    double top = 0;
    for (const auto &l : lines) top = std::max(top, l.intensity);
    std::vector<SpectralLine> out;
    for (const auto &l : lines)
      if (l.intensity >= floor * top) out.push_back(l);
    return out;
  }

  const nmrpred::Multiplet &multiplet_of(const nmrpred::Simulation &sim, std::size_t spin) {
    for (const auto &m : sim.multiplets)
      if (std::find(m.atoms.begin(), m.atoms.end(), spin) != m.atoms.end()) return m;
    throw std::runtime_error("no multiplet for spin " + std::to_string(spin));
  }

  const nmrpred::Tables &builtin_tables() {
    static const std::shared_ptr<const nmrpred::Tables> tables = nmrpred::Tables::builtin();
    return *tables;
  }

  }  // namespace

  TEST_CASE("an AB quartet has the textbook line positions and roof effect at every dnu/J") {
    struct Row {
      double ratio;  // dnu / J
      const char *source;
    };
    const Row rows[] = {{0.2, "[AB]"}, {0.5, "[AB]"}, {1, "[AB]"}, {2, "[AB]"}, {5, "[AB]"}, {10, "[AB]"}};
    const double mhz = 400, j = 10, nu_a = 800;
    for (const Row &row : rows) {
      INFO("dnu/J = " << row.ratio << " " << row.source);
      const double dnu = row.ratio * j;
      SpinSystem sys{{proton(nu_a / mhz), proton((nu_a + dnu) / mhz)}, {{0, 1, j}}};
      SimulationOptions opt;
      opt.field_mhz = mhz;
      const auto sim = nmrpred::simulate(sys, SpinNucleus::H1, opt);
      const auto lines = visible(sim.lines);
      REQUIRE(lines.size() == 4);
      const double centre = nu_a + dnu / 2, c = std::sqrt(dnu * dnu + j * j);
      const double want_hz[] = {centre - (c + j) / 2, centre - (c - j) / 2, centre + (c - j) / 2, centre + (c + j) / 2};
      for (int k = 0; k < 4; ++k) check_close(lines[static_cast<std::size_t>(k)].hz, want_hz[k], 1e-6);
      const double sin2theta = j / c;
      check_close(lines[1].intensity / lines[0].intensity, (1 + sin2theta) / (1 - sin2theta), 1e-6);
      check_close(lines[2].intensity / lines[3].intensity, (1 + sin2theta) / (1 - sin2theta), 1e-6);
      check_close(total(sim.lines), 2.0, 1e-9);
    }
  }

  TEST_CASE("first-order A2X3 gives a 1:3:3:1 quartet and a 1:2:1 triplet with areas 2:3") {
    // Ethyl-like: X3 at 1.2 ppm, A2 at 3.6 ppm, J = 7 Hz at 400 MHz ([CP]).
    SpinSystem sys;
    for (int k = 0; k < 3; ++k) sys.spins.push_back(proton(1.2));
    for (int k = 0; k < 2; ++k) sys.spins.push_back(proton(3.6));
    for (std::size_t x = 0; x < 3; ++x)
      for (std::size_t a = 3; a < 5; ++a) sys.couplings.push_back({x, a, 7.0});
    const auto sim = nmrpred::simulate(sys, SpinNucleus::H1);
    REQUIRE(sim.multiplets.size() == 2);
    struct Row {
      std::size_t spin;
      const char *label;
      std::vector<double> weights;  // Pascal's triangle
      double integral;
      double ppm;
      const char *source;
    };
    const Row rows[] = {{3, "q", {1, 3, 3, 1}, 2, 3.6, "[CP] quartet from three equivalent neighbours"},
                        {0, "t", {1, 2, 1}, 3, 1.2, "[CP] triplet from two equivalent neighbours"}};
    for (const Row &row : rows) {
      INFO(row.label << " " << row.source);
      const auto &m = multiplet_of(sim, row.spin);
      CHECK(m.label == row.label);
      REQUIRE(m.j_hz.size() == 1);
      check_close(m.j_hz[0], 7.0, 1e-9);
      check_close(m.integral, row.integral, 1e-12);
      check_close(total(m.lines), row.integral, 1e-9);
      check_close(m.ppm, row.ppm, 1e-9);
      REQUIRE(m.lines.size() == row.weights.size());
      const double sum = std::accumulate(row.weights.begin(), row.weights.end(), 0.0);
      const double first = row.ppm * 400 - 3.5 * (row.weights.size() - 1);
      for (std::size_t k = 0; k < m.lines.size(); ++k) {
        check_close(m.lines[k].intensity, row.integral * row.weights[k] / sum, 1e-9);
        check_close(m.lines[k].hz, first + 7.0 * static_cast<double>(k), 1e-6);
      }
    }
    CHECK(sim.multiplets[0].label == "q");  // downfield first
  }

  TEST_CASE("a proton coupled to one deuteron is a 1:1:1 triplet") {
    // [CP] spin-1 neighbour; J(H,D) = 2.2 Hz is an invented demo value.
    SpinSystem sys{{proton(5.3), of(SpinNucleus::H2, 5.3)}, {{0, 1, 2.2}}};
    const auto sim = nmrpred::simulate(sys, SpinNucleus::H1);
    REQUIRE(sim.lines.size() == 3);
    for (int k = 0; k < 3; ++k) {
      check_close(sim.lines[static_cast<std::size_t>(k)].intensity, 1.0 / 3.0, 1e-12);
      check_close(sim.lines[static_cast<std::size_t>(k)].hz, 5.3 * 400 + 2.2 * (k - 1), 1e-9);
    }
    REQUIRE(sim.multiplets.size() == 1);
    CHECK(sim.multiplets[0].label == "t");
    // The 2H spectrum of the same pair: a doublet at the 2H frequency.
    const auto d = nmrpred::simulate(sys, SpinNucleus::H2);
    REQUIRE(d.lines.size() == 2);
    check_close(d.lines[1].hz - d.lines[0].hz, 2.2, 1e-9);
    check_close(d.observed_mhz, 400 * nmrpred::frequency_ratio(SpinNucleus::H2), 1e-12);
    check_close(total(d.lines), 1.0, 1e-12);
  }

  TEST_CASE("as J goes to zero the lines go to the shifts, as dnu goes to zero they become one line") {
    // [CP] and [AB] in the limits J -> 0 (two singlets) and dnu -> 0 (one line).
    {
      SpinSystem sys{{proton(2.000), proton(2.005)}, {{0, 1, 1e-4}}};
      const auto sim = nmrpred::simulate(sys, SpinNucleus::H1);
      const auto lines = visible(sim.lines, 1e-3);
      REQUIRE(lines.size() == 2);
      check_close(lines[0].ppm, 2.000, 1e-6);
      check_close(lines[1].ppm, 2.005, 1e-6);
      CHECK(sim.multiplets[0].label == "s");
    }
    {
      SpinSystem sys{{proton(2.0), proton(2.0)}, {{0, 1, 7.0}}};
      const auto sim = nmrpred::simulate(sys, SpinNucleus::H1);
      REQUIRE(sim.lines.size() == 1);
      check_close(sim.lines[0].ppm, 2.0, 1e-12);
      check_close(sim.lines[0].intensity, 2.0, 1e-12);
      REQUIRE(sim.multiplets.size() == 1);
      CHECK(sim.multiplets[0].label == "s");
      check_close(sim.multiplets[0].integral, 2.0, 1e-12);
    }
    {
      // 0.01 Hz apart (not equivalent by the shift tolerance) and J = 7 Hz.
      SpinSystem sys{{proton(2.0), proton(2.0 + 0.01 / 400)}, {{0, 1, 7.0}}};
      const auto sim = nmrpred::simulate(sys, SpinNucleus::H1);
      const auto lines = visible(sim.lines, 1e-4);
      REQUIRE(lines.size() == 1);
      check_close(lines[0].hz, 800.005, 1e-4);
      check_close(lines[0].intensity, 2.0, 1e-5);
    }
  }

  TEST_CASE("AA'XX' is kept apart from A2X2 and follows its closed form") {
    const double mhz = 400, nu_a = 7.0 * mhz, nu_x = 7.6 * mhz;
    const double jaa = 2.0, jxx = 9.0, jax = 8.0, jax2 = 1.5;
    SpinSystem aaxx{{proton(7.0), proton(7.0), proton(7.6), proton(7.6)},
                    {{0, 1, jaa}, {2, 3, jxx}, {0, 2, jax}, {1, 3, jax}, {0, 3, jax2}, {1, 2, jax2}}};
    const auto sim = nmrpred::simulate(aaxx, SpinNucleus::H1);
    std::vector<SpectralLine> a_lines;
    for (const auto &l : visible(sim.lines))
      if (std::fabs(l.hz - nu_a) < 60) a_lines.push_back(l);
    const double n = jax + jax2, l = jax - jax2, k = jaa + jxx, m = jaa - jxx;
    std::vector<double> want = {n / 2, (std::sqrt(k * k + l * l) + k) / 2, (std::sqrt(k * k + l * l) - k) / 2,
                                (std::sqrt(m * m + l * l) + m) / 2, (std::sqrt(m * m + l * l) - m) / 2};
    for (std::size_t i = 0, size = want.size(); i < size; ++i) want.push_back(-want[i]);
    std::sort(want.begin(), want.end());
    INFO("[AAXX]");
    REQUIRE(a_lines.size() == 10);
    for (std::size_t i = 0; i < 10; ++i) check_close(a_lines[i].hz - nu_a, want[i], 1e-6);
    check_close(total(a_lines), 2.0, 1e-6);
    // The N lines are the strongest of the A half.
    const auto strongest = std::max_element(a_lines.begin(), a_lines.end(), [](const auto &x, const auto &y) {
      return x.intensity < y.intensity;
    });
    check_close(std::fabs(strongest->hz - nu_a), n / 2, 1e-6);
    CHECK(multiplet_of(sim, 0).label == "m");
    CHECK(multiplet_of(sim, 0).atoms == std::vector<std::size_t>{0, 1});

    // A2X2: the same shifts with equal couplings: magnetically equivalent,
    // a 1:2:1 triplet ([CP]) whatever J_AA' and J_XX'.
    SpinSystem a2x2 = aaxx;
    for (auto &c : a2x2.couplings)
      if (c.j_hz == jax2) c.j_hz = jax;
    const auto sim2 = nmrpred::simulate(a2x2, SpinNucleus::H1);
    const auto &t = multiplet_of(sim2, 0);
    CHECK(t.label == "t");
    REQUIRE(t.lines.size() == 3);
    check_close(t.lines[1].intensity / t.lines[0].intensity, 2.0, 1e-9);
    check_close(t.lines[2].hz - t.lines[1].hz, jax, 1e-9);
    (void)nu_x;
  }

  TEST_CASE("thirty strongly coupled spins come back promptly through the documented cluster cap") {
    // A chain of 30 protons 0.003 ppm apart, 7 Hz to each neighbour and
    // -1.5 Hz to the next but one: every coupling strong at 400 MHz.
    SpinSystem sys;
    for (int k = 0; k < 30; ++k) sys.spins.push_back(proton(1.0 + 0.003 * k));
    for (std::size_t k = 0; k + 1 < 30; ++k) sys.couplings.push_back({k, k + 1, 7.0});
    for (std::size_t k = 0; k + 2 < 30; ++k) sys.couplings.push_back({k, k + 2, -1.5});
    const auto start = std::chrono::steady_clock::now();
    const auto sim = nmrpred::simulate(sys, SpinNucleus::H1);
    const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
    MESSAGE("30 strongly coupled spins: " << seconds << " s, " << sim.lines.size() << " lines");
    bool told = false;
    for (const auto &w : sim.warnings) told |= w.find("max_block_size") != std::string::npos;
    CHECK(told);
    CHECK(sim.multiplets.size() == 30);
    // [CP] the integral is still the number of spins (less the transitions
    // below kMinLineIntensity that were dropped).
    check_close(total(sim.lines), 30.0, 1e-4);
    for (const auto &m : sim.multiplets) CHECK(m.label == "m");
  }

  TEST_CASE("a molecule's 1H spectrum: ethanol's triplet, quartet and broad OH singlet") {
    // Couplings given by hand (3J(H,H) = 7.0 Hz, an invented demo value close
    // to the typical ethyl coupling) so that this test does not depend on the
    // coupling estimator; the shifts are the library's. [CP] labels.
    const auto p = nmrpred::predict(nmrpred::read_molecule("CCO", nmrpred::Format::Smiles), builtin_tables());
    std::vector<nmrpred::Coupling> couplings;
    std::vector<std::size_t> methyl, methylene, hydroxyl;
    for (std::size_t a = 0; a < p.molecule.atom_count(); ++a) {
      if (!p.molecule.is_hydrogen(a)) continue;
      const auto heavy = static_cast<std::size_t>(p.molecule.attached_to(a));
      (heavy == 0 ? methyl : heavy == 1 ? methylene : hydroxyl).push_back(a);
    }
    for (std::size_t x : methyl)
      for (std::size_t y : methylene) couplings.push_back({x, y, 3, 7.0, 0, "", "", ""});
    for (std::size_t y : methylene) couplings.push_back({y, hydroxyl[0], 3, 5.0, 0, "", "", ""});
    const auto sim = nmrpred::simulate(p, couplings, nmrpred::Nucleus::H1);
    REQUIRE(sim.multiplets.size() == 3);
    struct Row {
      std::vector<std::size_t> atoms;
      const char *label;
      double integral;
    };
    const Row rows[] = {{methyl, "t", 3}, {methylene, "q", 2}, {hydroxyl, "br s", 1}};
    for (const Row &row : rows) {
      INFO(row.label << " [CP]");
      const auto it = std::find_if(sim.multiplets.begin(), sim.multiplets.end(),
                                   [&](const auto &m) { return m.atoms == row.atoms; });
      REQUIRE(it != sim.multiplets.end());
      CHECK(it->label == row.label);
      check_close(it->integral, row.integral, 1e-12);
      check_close(total(it->lines), row.integral, 1e-9);
      CHECK(it->nucleus == nmrpred::Nucleus::H1);
    }
  }

  TEST_CASE("a proton-decoupled 13C spectrum shows the CF3 quartet and nothing from protons") {
    // [CP] one-bond J(C,F) of a CF3 group is near 270-285 Hz; 280 Hz and
    // 2J(C,F) = 35 Hz are demo values. The C-H couplings given must not show.
    const auto p = nmrpred::predict(nmrpred::read_molecule("FC(F)(F)CO", nmrpred::Format::Smiles), builtin_tables());
    std::vector<nmrpred::Coupling> couplings;
    for (std::size_t a = 0; a < p.molecule.atom_count(); ++a) {
      if (p.molecule.atom(a).atomic_number == 9) {
        couplings.push_back({std::min<std::size_t>(a, 1), std::max<std::size_t>(a, 1), 1, 280.0, 0, "", "", ""});
        couplings.push_back({std::min<std::size_t>(a, 4), std::max<std::size_t>(a, 4), 2, 35.0, 0, "", "", ""});
      }
      if (p.molecule.is_hydrogen(a) && p.molecule.attached_to(a) == 4) couplings.push_back({4, a, 1, 140.0, 0, "", "", ""});
    }
    const auto sim = nmrpred::simulate(p, couplings, nmrpred::Nucleus::C13);
    REQUIRE(sim.multiplets.size() == 2);
    for (const auto &m : sim.multiplets) {
      INFO("atoms " << m.atoms[0]);
      CHECK(m.label == "q");
      CHECK(m.nucleus == nmrpred::Nucleus::C13);
      REQUIRE(m.lines.size() == 4);
      check_close(m.lines[1].intensity / m.lines[0].intensity, 3.0, 1e-9);
      check_close(m.j_hz[0], m.atoms[0] == 1 ? 280.0 : 35.0, 1e-9);
    }
  }

  TEST_CASE("first-order labels name the resolved splittings, largest coupling first") {
    // [CP] the trade's first-order notation. The observed proton sits at
    // 5.0 ppm; its partners far away (8.0 ppm and beyond) at 400 MHz, so every
    // coupling is first-order. Couplings below the line width (1 Hz) are not
    // resolved.
    struct Row {
      std::vector<double> partner_j;  // one partner proton per entry
      const char *label;
      std::vector<double> j_hz;
      const char *source;
    };
    const Row rows[] = {
        {{}, "s", {}, "[CP]"},
        {{7.0}, "d", {7.0}, "[CP]"},
        {{7.0, 0.4}, "d", {7.0}, "[CP] 0.4 Hz is below the line width"},
        {{10.0, 4.0}, "dd", {10.0, 4.0}, "[CP]"},
        {{10.0, 4.0, 4.0}, "dt", {10.0, 4.0}, "[CP]"},
        {{10.0, 10.0, 4.0}, "td", {10.0, 4.0}, "[CP]"},
        {{12.0, 7.0, 2.5}, "ddd", {12.0, 7.0, 2.5}, "[CP]"},
        {{8.0, 8.0, 2.0, 2.0}, "tt", {8.0, 2.0}, "[CP]"},
        {{7.0, 7.0, 7.0, 7.0, 7.0, 7.0}, "sept", {7.0}, "[CP] isopropyl CH"},
        {{7.0, 7.2, 6.9, 7.1}, "p", {7.05}, "[CP] couplings within a line width look equal"},
        {{14.0, 9.0, 5.0, 2.0}, "m", {}, "[CP] four distinct splittings"},
    };
    for (const Row &row : rows) {
      INFO(row.label << " " << row.source);
      SpinSystem sys{{proton(5.0)}, {}};
      for (std::size_t k = 0; k < row.partner_j.size(); ++k) {
        sys.spins.push_back(proton(8.0 + 0.5 * static_cast<double>(k)));
        sys.couplings.push_back({0, k + 1, row.partner_j[k]});
      }
      const auto sim = nmrpred::simulate(sys, SpinNucleus::H1);
      const auto &m = multiplet_of(sim, 0);
      CHECK(m.label == row.label);
      REQUIRE(m.j_hz.size() == row.j_hz.size());
      for (std::size_t k = 0; k < m.j_hz.size(); ++k) check_close(m.j_hz[k], row.j_hz[k], 1e-9);
    }
    // [CP] strongly coupled partners (dnu / J = 1) make a second-order "m".
    const auto strong = nmrpred::simulate(SpinSystem{{proton(5.0), proton(5.0 + 7.0 / 400)}, {{0, 1, 7.0}}},
                                          SpinNucleus::H1);
    CHECK(multiplet_of(strong, 0).label == "m");
  }

  TEST_CASE("bad spin systems and options are refused with a message naming the problem") {
    struct Row {
      const char *what;
      SpinSystem system;
      SimulationOptions options;
      const char *message;  // a part of the expected message
    };
    const double nan = std::nan("");
    SimulationOptions field0, field2000, width0, block0, ratio_nan;
    field0.field_mhz = 0;
    field2000.field_mhz = 2000;
    width0.line_width_hz = 0;
    block0.max_block_size = 0;
    ratio_nan.weak_coupling_ratio = nan;
    const std::vector<Row> rows = {
        {"no spins", {}, {}, "no spins"},
        {"NaN shift", {{proton(nan)}, {}}, {}, "spin 0: shift is not a finite number"},
        {"infinite J", {{proton(1), proton(2)}, {{0, 1, INFINITY}}}, {}, "J is not a finite number"},
        {"index out of range", {{proton(1), proton(2)}, {{0, 2, 7}}}, {}, "out of range"},
        {"self coupling", {{proton(1), proton(2)}, {{1, 1, 7}}}, {}, "coupled to itself"},
        {"pair given twice", {{proton(1), proton(2)}, {{0, 1, 7}, {1, 0, 7}}}, {}, "repeats coupling 0"},
        {"absurd J", {{proton(1), proton(2)}, {{0, 1, 1e6}}}, {}, "out of range"},
        {"field 0", {{proton(1)}, {}}, field0, "field_mhz"},
        {"field 2000", {{proton(1)}, {}}, field2000, "field_mhz"},
        {"line width 0", {{proton(1)}, {}}, width0, "line_width_hz"},
        {"block size 0", {{proton(1)}, {}}, block0, "max_block_size"},
        {"NaN ratio", {{proton(1)}, {}}, ratio_nan, "weak_coupling_ratio"},
        {"unknown isotope", {{of(static_cast<SpinNucleus>(7), 1)}, {}}, {}, "is not one of"},
    };
    for (const Row &row : rows) {
      INFO(row.what);
      try {
        nmrpred::simulate(row.system, SpinNucleus::H1, row.options);
        FAIL("no error");
      } catch (const nmrpred::ArgumentError &e) {
        INFO(e.what());
        CHECK(std::string(e.what()).find(row.message) != std::string::npos);
      }
    }
    CHECK_THROWS_AS(nmrpred::parse_spin_nucleus("15N"), nmrpred::ArgumentError);
    CHECK(nmrpred::parse_spin_nucleus(" 19F ") == SpinNucleus::F19);
    CHECK_THROWS_AS(nmrpred::simulate(SpinSystem{{proton(1)}, {}}, static_cast<SpinNucleus>(3)),
                    nmrpred::ArgumentError);
  }

  TEST_CASE("a spectrum of an isotope the system lacks is empty and says so") {
    const auto sim = nmrpred::simulate(SpinSystem{{proton(1)}, {}}, SpinNucleus::F19);
    CHECK(sim.lines.empty());
    CHECK(sim.multiplets.empty());
    REQUIRE(sim.warnings.size() == 1);
    CHECK(sim.warnings[0].find("19F") != std::string::npos);
  }

  TEST_CASE("a molecule's 1H lines do not depend on the order its atoms are written") {
    // Common practice: a spectrum belongs to the compound, not to the way its
    // structure is written. These spin systems have degenerate energy levels:
    // bromocyclopentane's protons cis and trans to Br on C2/C5 and on C3/C4
    // make pairs of signals at one predicted shift, and 1,3-diethylurea and
    // tetraethylene glycol are made of two identical halves. Inside such a
    // level the eigensolver may return any basis, and the order of the atoms
    // decides which; the lines must not follow it. Before transitions were
    // summed over degenerate levels the two writings of tetraethylene glycol
    // gave other lines (intensities up to 0.02 apart, lines of their own),
    // and 232 of the first 2,000 NCI records differed between one and two
    // OpenBLAS threads (benchmarks/README.md, exact spin simulation). The
    // pentadecyl chain of 2-pentadecyl-4-hydroxyaniline makes clusters that
    // reach the size limit, where ties between couplings are settled in spin
    // order: before the spins were put in the order of the invariant ranks,
    // its two writings gave the CH3 triplet 3 lines and 117 lines.
    struct SignalLines {
      double ppm;
      int count;
      std::string label;
      std::vector<SpectralLine> lines;
    };
    auto signals_of = [](const char *smiles) {
      const auto p = nmrpred::predict(nmrpred::read_molecule(smiles, nmrpred::Format::Smiles), builtin_tables());
      std::vector<SignalLines> out;
      for (const auto &s : p.h1_signals) out.push_back({s.ppm, s.count, s.multiplicity, s.lines});
      // Signals at one shift come in the order of their atoms, which the
      // writings number differently: ordered by their lines too.
      std::sort(out.begin(), out.end(), [](const SignalLines &a, const SignalLines &b) {
        if (a.ppm != b.ppm) return a.ppm < b.ppm;
        if (a.count != b.count) return a.count < b.count;
        return std::lexicographical_compare(
            a.lines.begin(), a.lines.end(), b.lines.begin(), b.lines.end(),
            [](const SpectralLine &x, const SpectralLine &y) {
              return x.hz != y.hz ? x.hz < y.hz : x.intensity < y.intensity;
            });
      });
      return out;
    };
    const std::pair<const char *, const char *> writings[] = {
        {"BrC1CCCC1", "C1CCC(C1)Br"},
        {"CCNC(=O)NCC", "N(CC)C(=O)NCC"},
        {"OCCOCCOCCOCCO", "C(COCCO)OCCOCCO"},
        {"CCCCCCCCCCCCCCCc1cc(O)ccc1N", "C(CCCCCCCCC)CCCCCc1c(ccc(c1)O)N"}};
    for (const auto &[first, second] : writings) {
      INFO(std::string(first) << " against " << second << " [CP]");
      const auto a = signals_of(first), b = signals_of(second);
      REQUIRE(a.size() == b.size());
      for (std::size_t s = 0; s < a.size(); ++s) {
        INFO("signal at " << a[s].ppm << " ppm");
        CHECK(a[s].ppm == b[s].ppm);
        CHECK(a[s].count == b[s].count);
        CHECK(a[s].label == b[s].label);
        REQUIRE(a[s].lines.size() == b[s].lines.size());
        CHECK(!a[s].lines.empty());
        for (std::size_t l = 0; l < a[s].lines.size(); ++l) {
          check_close(a[s].lines[l].hz, b[s].lines[l].hz, 1e-9);
          check_close(a[s].lines[l].intensity, b[s].lines[l].intensity, 1e-12);
        }
      }
    }
  }

  TEST_CASE("issue 5: the two protons of a diastereotopic CH2 at one shift each get their multiplet") {
    // Two protons of one CH2 in different chemical classes (diastereotopic)
    // but predicted at the same shift, like the OCH2 of an ethyl ester in a
    // chiral molecule. Geminal -10.8 Hz and 3J = 7.1 Hz are demo values close
    // to the typical ones ([PRETSCH] geminal -10..-15 Hz, ethyl 3J about 7 Hz).
    const auto ethyl = [](double j_to_a, double j_to_b) {
      SpinSystem sys;
      for (std::int64_t c : {0, 1}) {
        Spin h = proton(4.15);
        h.equivalence_class = c;
        sys.spins.push_back(h);
      }
      for (int k = 0; k < 3; ++k) {
        Spin h = proton(1.25);
        h.equivalence_class = 2;
        sys.spins.push_back(h);
      }
      sys.couplings.push_back({0, 1, -10.8});
      for (std::size_t x = 2; x < 5; ++x) {
        sys.couplings.push_back({0, x, j_to_a});
        sys.couplings.push_back({1, x, j_to_b});
      }
      return sys;
    };
    struct Row {
      double j_to_a, j_to_b;
      const char *label;  // of each CH2 proton; empty: not checked
      const char *source;
    };
    const Row rows[] = {
        {7.1, 7.1, "q", "[CP] the OCH2 of an ethyl ester is a quartet; integrals count protons"},
        {6.0, 8.0, "", "[CP] integrals count protons (the two couple differently: an ABX3 at one shift)"},
    };
    for (const Row &row : rows) {
      INFO(row.source << ", J " << row.j_to_a << "/" << row.j_to_b);
      const auto sim = nmrpred::simulate(ethyl(row.j_to_a, row.j_to_b), SpinNucleus::H1);
      REQUIRE(sim.multiplets.size() == 3);
      double integrals = 0;
      for (const auto &m : sim.multiplets) {
        integrals += m.integral;
        check_close(total(m.lines), m.integral, 1e-9);
      }
      check_close(integrals, 5.0, 1e-12);
      for (std::size_t spin : {0, 1}) {
        const auto &m = multiplet_of(sim, spin);
        CHECK(m.atoms == std::vector<std::size_t>{spin});
        check_close(m.integral, 1.0, 1e-12);
        check_close(m.ppm, 4.15, 1e-6);
        if (*row.label) {
          CHECK(m.label == row.label);
          REQUIRE(m.j_hz.size() == 1);
          check_close(m.j_hz[0], 7.1, 0.05);
        }
      }
    }
  }

  TEST_CASE("issue 5: every 1H signal of a molecule with a diastereotopic CH2 gets its multiplet") {
    // Molecules whose CH2 protons next to (or near) a stereocentre fall into
    // two classes at one predicted shift. [CP] integrals count protons.
    const char *const molecules[] = {
        "CCOC(=O)C[C@@H](C)c1ccc(F)cc1",  // ethyl 3-(4-fluorophenyl)butanoate
        "CCOC(=O)C(C)Br",                 // ethyl 2-bromopropanoate
        "CC[C@@H](C)O",                   // 2-butanol
    };
    std::size_t same_shift_pairs = 0;
    for (const char *smiles : molecules) {
      INFO(smiles << " [CP]");
      const auto p = nmrpred::predict(nmrpred::read_molecule(smiles, nmrpred::Format::Smiles), builtin_tables());
      for (const auto &w : p.warnings) CHECK(w.find("got no simulated multiplet") == std::string::npos);
      REQUIRE(p.h1_simulation.has_value());
      double integrals = 0, protons = 0;
      for (const auto &g : p.h1_signals) {
        if (!g.observed) continue;
        INFO("signal at " << g.ppm << " ppm");
        CHECK(!g.multiplicity.empty());
        protons += g.count;
      }
      for (const auto &m : p.h1_simulation->multiplets) {
        integrals += m.integral;
        check_close(total(m.lines), m.integral, 1e-6);
      }
      check_close(integrals, protons, 1e-12);
      for (std::size_t a = 0; a < p.h1_signals.size(); ++a)
        for (std::size_t b = a + 1; b < p.h1_signals.size(); ++b) {
          const auto &x = p.h1_signals[a], &y = p.h1_signals[b];
          if (x.ppm == y.ppm && p.molecule.attached_to(x.atoms[0]) == p.molecule.attached_to(y.atoms[0]))
            ++same_shift_pairs;
        }
    }
    // The case of issue 5 must be among them, or this test checks nothing new.
    CHECK(same_shift_pairs >= 2);
  }

  TEST_CASE("issue 5: the AA'XX' halves of a para-disubstituted benzene read as doublets at 400-600 MHz") {
    // [PRETSCH] typical shifts and couplings (from memory); [CP] papers write
    // these rings as two doublets with J of about the ortho coupling; the
    // apparent splitting is N = J_ortho + J_para, the spacing of the two
    // strongest lines of each half ([AAXX]). 4-chlorotoluene's halves are
    // only some 7.6 J apart at 400 MHz, and papers still write doublets.
    struct Row {
      const char *ring;
      double ppm_a, ppm_x, ortho, meta_a, meta_x, para;
    };
    const Row rings[] = {
        {"4-nitroanisole", 8.19, 6.95, 9.2, 2.5, 2.5, 0.4},
        {"4-methylanisole", 7.09, 6.81, 8.6, 2.4, 2.6, 0.5},
        {"4-chlorotoluene", 7.24, 7.08, 8.4, 2.2, 2.2, 0.5},
    };
    for (const Row &r : rings)
      for (double mhz : {400.0, 500.0, 600.0}) {
        INFO(r.ring << " at " << mhz << " MHz [PRETSCH] [CP] [AAXX]");
        SpinSystem sys;
        for (int k = 0; k < 2; ++k) {
          Spin a = proton(r.ppm_a);
          a.equivalence_class = 0;
          sys.spins.push_back(a);
        }
        for (int k = 0; k < 2; ++k) {
          Spin x = proton(r.ppm_x);
          x.equivalence_class = 1;
          sys.spins.push_back(x);
        }
        sys.couplings = {{0, 1, r.meta_a}, {2, 3, r.meta_x}, {0, 2, r.ortho},
                         {1, 3, r.ortho},  {0, 3, r.para},   {1, 2, r.para}};
        SimulationOptions opt;
        opt.field_mhz = mhz;
        const auto sim = nmrpred::simulate(sys, SpinNucleus::H1, opt);
        REQUIRE(sim.multiplets.size() == 2);
        for (const auto &m : sim.multiplets) {
          CHECK(m.label == "d");
          REQUIRE(m.j_hz.size() == 1);
          // Between J_ortho (the predicted coupling) and N (the apparent spacing).
          CHECK(m.j_hz[0] >= r.ortho - 0.05);
          CHECK(m.j_hz[0] <= r.ortho + r.para + 0.05);
        }
      }
    // The same rings predicted by the library (its shifts and couplings).
    for (const char *smiles : {"COc1ccc(cc1)[N+](=O)[O-]", "COc1ccc(C)cc1", "Cc1ccc(Cl)cc1", "COc1ccc(Cl)cc1"})
      for (double mhz : {400.0, 600.0}) {
        INFO(smiles << " at " << mhz << " MHz [CP]");
        nmrpred::PredictOptions po;
        po.field_mhz = mhz;
        const auto p = nmrpred::predict(nmrpred::read_molecule(smiles, nmrpred::Format::Smiles), builtin_tables(), po);
        int ring = 0;
        for (const auto &g : p.h1_signals) {
          if (!p.molecule.atom(static_cast<std::size_t>(p.molecule.attached_to(g.atoms[0]))).aromatic) continue;
          ++ring;
          CHECK(g.multiplicity == "d");
          CHECK(g.count == 2);
        }
        CHECK(ring == 2);
      }
  }

  TEST_CASE("issue 5: strongly coupled ABC and AA'BB' signals stay multiplets") {
    // [CP] three aromatic protons within 0.07 ppm at 400 MHz (ortho 8.0 and
    // 7.5 Hz, meta 1.5 Hz, [PRETSCH] ranges) and a para ring whose halves are
    // 0.02 ppm apart: no first-order reading.
    SpinSystem abc{{proton(7.00), proton(7.03), proton(7.07)}, {{0, 1, 8.0}, {1, 2, 7.5}, {0, 2, 1.5}}};
    const auto sim = nmrpred::simulate(abc, SpinNucleus::H1);
    REQUIRE(sim.multiplets.size() == 3);
    for (const auto &m : sim.multiplets) {
      INFO("ABC spin " << m.atoms[0] << " [CP]");
      CHECK(m.label == "m");
      CHECK(m.j_hz.empty());
    }
    SpinSystem aabb;
    for (double ppm : {7.30, 7.30, 7.28, 7.28}) aabb.spins.push_back(proton(ppm));
    aabb.couplings = {{0, 1, 2.5}, {2, 3, 2.5}, {0, 2, 8.5}, {1, 3, 8.5}, {0, 3, 0.5}, {1, 2, 0.5}};
    const auto sim2 = nmrpred::simulate(aabb, SpinNucleus::H1);
    REQUIRE(sim2.multiplets.size() == 2);
    for (const auto &m : sim2.multiplets) {
      INFO("AA'BB' 0.02 ppm apart [CP]");
      CHECK(m.label == "m");
    }
  }

  TEST_CASE("the spin-system JSON reader builds the system and names what is wrong") {
    const auto in = nmrpred::parse_spin_system_json(
        R"({"mhz": 600, "observe": "19F", "line_width_hz": 0.5,
            "spins": [1.2, {"shift": -120.5, "nucleus": "19F", "class": 3}, {"shift": 2.0, "exchangeable": true}],
            "couplings": [[0, 1, 48.0]]})");
    check_close(in.options.field_mhz, 600, 0);
    check_close(in.options.line_width_hz, 0.5, 0);
    CHECK(in.observe == SpinNucleus::F19);
    REQUIRE(in.system.spins.size() == 3);
    check_close(in.system.spins[0].shift_ppm, 1.2, 0);
    CHECK(in.system.spins[0].nucleus == SpinNucleus::H1);
    CHECK(in.system.spins[1].nucleus == SpinNucleus::F19);
    CHECK(in.system.spins[1].equivalence_class == 3);
    CHECK(in.system.spins[2].exchangeable);
    REQUIRE(in.system.couplings.size() == 1);
    CHECK(in.system.couplings[0] == nmrpred::SpinCoupling{0, 1, 48.0});
    // Keys left out keep the caller's defaults.
    SimulationOptions defaults;
    defaults.field_mhz = 300;
    check_close(nmrpred::parse_spin_system_json(R"({"spins": [1.0]})", defaults).options.field_mhz, 300, 0);

    struct Row {
      const char *text;
      const char *message;  // a part of the expected message
    };
    const Row rows[] = {
        {R"({"mhz": 400, "spins": [1.0])", "not valid JSON"},
        {"[1, 2]", "must be a JSON object"},
        {R"({"mhz": 400, "spins": [1.0], "field": 400})", "unknown key \"field\""},
        {R"({"spins": [1.0]})", "\"mhz\" (1H frequency of the spectrometer, MHz) is missing"},
        {R"({"mhz": 400, "couplings": []})", "\"spins\" must be an array"},
        {R"({"mhz": 400, "spins": [1.0, {"nucleus": "1H"}]})", "spin 1: \"shift\" is missing"},
        {R"({"mhz": 400, "spins": [{"shift": "1.0"}]})", "spin 0: \"shift\" must be a number"},
        {R"({"mhz": 400, "spins": [{"shift": 1.0, "nucleus": "15N"}]})", "spin 0: \"nucleus\": unknown nucleus '15N'"},
        {R"({"mhz": 400, "spins": [1.0, 2.0], "couplings": [[0, 1]]})", "coupling 0 must be [i, j, J_Hz]"},
        {R"({"mhz": 400, "spins": [1.0, 2.0], "couplings": [[0, -1, 7]]})", "coupling 0: j must not be negative"},
        {R"({"spins": [1.0], "mhz": true})", "\"mhz\" must be a number"},
        // Found by mutation fuzzing: the JSON parser's range error escaped as
        // an internal error.
        {R"({"mhz": 1e999, "spins": [1.0]})", "a number beyond the range of a double"},
    };
    for (const Row &row : rows) {
      INFO(row.text);
      try {
        nmrpred::parse_spin_system_json(row.text);
        FAIL("no error");
      } catch (const nmrpred::ArgumentError &e) {
        INFO(e.what());
        CHECK(std::string(e.what()).rfind("spin system JSON: ", 0) == 0);
        CHECK(std::string(e.what()).find(row.message) != std::string::npos);
      }
    }
  }
  TEST_CASE("a simulation written as JSON carries its lines and multiplets") {
    // AX at 400 MHz, J = 7 Hz, shifts 1.2 and 3.6 ppm: two first-order doublets
    // of equal area (any NMR textbook), one line pair each.
    const auto in = nmrpred::parse_spin_system_json(
        R"({"mhz": 400, "spins": [{"shift": 1.2}, {"shift": 3.6}], "couplings": [[0, 1, 7.0]]})");
    const auto sim = nmrpred::simulate(in.system, in.observe, in.options);
    const auto j = nlohmann::json::parse(nmrpred::to_json(sim));
    CHECK(j["observe"] == "1H");
    check_close(j["mhz"].get<double>(), 400, 0);
    REQUIRE(j["lines"].size() == 4);
    double total = 0;
    for (const auto &l : j["lines"]) total += l["intensity"].get<double>();
    check_close(total, 2, 1e-9);
    REQUIRE(j["multiplets"].size() == 2);
    for (const auto &m : j["multiplets"]) {
      CHECK(m["label"] == "d");
      check_close(m["j_hz"][0].get<double>(), 7, 1e-9);
      CHECK(m["atoms"].size() == 1);
      CHECK(m["lines"].size() == 2);
    }
    CHECK(j["warnings"].is_array());
  }
}
