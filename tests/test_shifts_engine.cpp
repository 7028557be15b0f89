// The shift engine as a whole: order of sources, provenance and behaviour on
// carbons no table describes. Expected behaviours are the library's contract
// (include/nmrpred/shifts.hpp); numeric expectations name their source.

#include <doctest/doctest.h>

#include <nmrpred/classes.hpp>
#include <nmrpred/error.hpp>
#include <nmrpred/io.hpp>
#include <nmrpred/shifts.hpp>
#include <nmrpred/tables.hpp>

#include <algorithm>
#include <cmath>
#include <fstream>
#include <memory>
#include <string>
#include <utility>
#include <vector>

#include "check.hpp"

namespace {

const nmrpred::Tables &tables() {
  static const std::shared_ptr<const nmrpred::Tables> t = nmrpred::Tables::builtin();
  return *t;
}

std::vector<nmrpred::Shift> c13(const std::string &smiles, const nmrpred::ShiftOptions &opt,
                                std::vector<std::string> *warnings = nullptr) {
  const auto m = nmrpred::read_molecule(smiles, nmrpred::Format::Smiles);
  return nmrpred::predict_c13(m, nmrpred::compute_classes(m), tables(), opt, warnings);
}

// 1H shifts of the protons on heavy atom `heavy` (SMILES order), in proton
// index order, each with its chemical class.
struct ProtonShift {
  double ppm, uncertainty_ppm;
  std::uint32_t cls;
  std::string method;
};
std::vector<ProtonShift> h1_on(const std::string &smiles, std::size_t heavy, const nmrpred::ShiftOptions &opt) {
  const auto m = nmrpred::read_molecule(smiles, nmrpred::Format::Smiles);
  const auto classes = nmrpred::compute_classes(m);
  std::vector<ProtonShift> out;
  for (const auto &s : nmrpred::predict_h1(m, classes, tables(), opt))
    if (m.attached_to(s.atom) == static_cast<std::int64_t>(heavy))
      out.push_back({s.ppm, s.uncertainty_ppm, classes.chemical[s.atom], s.method.str()});
  return out;
}

// Molecules for the tests that hold a combined call to the single calls:
// the NCI sample rows of tests/data (RDKit's rdkit-data) and a few that
// reach the rarer paths: exchangeable and deuterated protons,
// diastereotopic CH2 pairs, a radical, boron and a metal (class averages
// and warnings), a charged group, user reference records.
std::vector<std::string> engine_smiles() {
  std::vector<std::string> smiles = {
      "CCO", "CC[C@@H](C)O", "Cc1ccc(cc1)C1CO1", "CC(C)Cc1ccc(cc1)C(C)C(=O)O", "[2H]C([2H])([2H])C(=O)O",
      "[CH2]CC", "CCB(CC)CC", "C[Hg]C", "C[N+](C)(C)CC(=O)[O-]", "OC[C@H]1OC(O)[C@H](O)[C@@H](O)[C@@H]1O",
      "c1ccc2[nH]ccc2c1", "Cc1ccccc1", "CSc1ccccc1", "O=C1CCCCC1", "C=CC(=O)OC", "N#CCC(N)=O"};
  std::ifstream nci(std::string(NMRPRED_TEST_DATA_DIR) + "/nci_hydrogen_counts.tsv");
  REQUIRE(nci.good());
  for (std::string line; std::getline(nci, line);)
    if (!line.empty() && line[0] != '#' && line.rfind("smiles\t", 0) != 0) smiles.push_back(line.substr(0, line.find('\t')));
  REQUIRE(smiles.size() == 16 + 25);
  return smiles;
}

// The settings those tests run in; `user` holds the user records' tables.
struct Setting {
  const char *name;
  const nmrpred::Tables *tables;
  nmrpred::ShiftOptions options;
};
std::vector<Setting> engine_settings(std::shared_ptr<const nmrpred::Tables> &user) {
  user = tables().with_user_reference(
      "id\tsmiles\tsolvent\tc13\th1\tsource\n"
      "demo-user-toluene\tCc1ccccc1\tCDCl3\t0=10.0;1=20.0;2,6=30.0;3,5=40.0;4=50.0\t-\tdemo data (invented)\n",
      "demo.tsv");
  std::vector<Setting> settings(6, Setting{"default", &tables(), {}});
  settings[1].name = "blind", settings[1].options.blind = true;
  settings[2].name = "D2O", settings[2].options.solvent = "D2O";
  settings[3].name = "increments only", settings[3].options.use_reference = false;
  settings[4].name = "no increments", settings[4].options.use_increments = false;
  settings[5].name = "user records", settings[5].tables = user.get();
  return settings;
}

// Field by field: a combined call is the same computation as the single
// calls, so every value is compared exactly.
void same_shifts(const std::vector<nmrpred::Shift> &got, const std::vector<nmrpred::Shift> &want) {
  REQUIRE(got.size() == want.size());
  for (std::size_t i = 0; i < got.size(); ++i) {
    const auto &g = got[i], &w = want[i];
    INFO("atom " << w.atom << ": " << w.method);
    CHECK(g.atom == w.atom);
    CHECK(g.nucleus == w.nucleus);
    CHECK(g.ppm == w.ppm);
    CHECK(g.uncertainty_ppm == w.uncertainty_ppm);
    CHECK(g.source == w.source);
    CHECK(g.sphere == w.sphere);
    CHECK(g.method == w.method);
    CHECK(g.references == w.references);
    CHECK(g.exchangeable == w.exchangeable);
    CHECK(g.observed == w.observed);
  }
}

}  // namespace

TEST_SUITE("shifts_engine") {
  TEST_CASE("the two protons of a diastereotopic ring CH2 get the two values of a matched published pair") {
    // Ring CH2 cis and trans to the substituent: propylene oxide 2.74 and
    // 2.42, styrene oxide 3.14 and 2.80 (CDCl3, PRETSCH-2009, from memory;
    // both in tables/reference). Which proton is which is not stated there,
    // so only the sorted values are compared; the lower value goes to the
    // proton of the first chemical class, by the documented convention.
    struct Row {
      const char *smiles;
      std::size_t ch2;
      double low, high;
    };
    for (const Row &r : {Row{"CC1CO1", 2, 2.42, 2.74}, Row{"C1OC1c1ccccc1", 0, 2.80, 3.14}}) {
      INFO(std::string(r.smiles));
      const auto hs = h1_on(r.smiles, r.ch2, nmrpred::ShiftOptions{});
      REQUIRE(hs.size() == 2);
      CHECK(hs[0].cls != hs[1].cls);
      const auto &lo = hs[0].ppm < hs[1].ppm ? hs[0] : hs[1];
      const auto &hi = hs[0].ppm < hs[1].ppm ? hs[1] : hs[0];
      INFO(lo.method);
      check_close(lo.ppm, r.low, 0.02);
      check_close(hi.ppm, r.high, 0.02);
      CHECK(lo.cls < hi.cls);
      CHECK(lo.method.find("which proton is which is not known") != std::string::npos);
      // Blind (the compound itself left out), no other reference compound
      // shares the CH2's environment to HOSE sphere 4, so the two protons
      // share one value and the method says why.
      nmrpred::ShiftOptions blind;
      blind.blind = true;
      const auto bh = h1_on(r.smiles, r.ch2, blind);
      REQUIRE(bh.size() == 2);
      CHECK(bh[0].ppm == bh[1].ppm);
      CHECK(bh[0].method.find("diastereotopic CH2: no matched reference lists such a pair") != std::string::npos);
    }
    // 2-(4-methylphenyl)oxirane is not a reference compound; its ring CH2
    // matches styrene oxide's to sphere 4 or deeper and takes that pair's
    // spread (0.34 ppm), with an uncertainty that covers the opposite
    // assignment.
    const auto tol = h1_on("Cc1ccc(cc1)C1CO1", 8, nmrpred::ShiftOptions{});
    REQUIRE(tol.size() == 2);
    check_close(std::fabs(tol[0].ppm - tol[1].ppm), 3.14 - 2.80, 0.01);
    for (const auto &h : tol) CHECK(h.uncertainty_ppm >= 0.17);
  }

  TEST_CASE("homotopic and enantiotopic protons share one value; a diastereotopic CH2 without a pair says so") {
    // Enantiotopic CH2 protons (ethanol, diethyl ether, the ring CH2 of
    // cyclohexanone) and homotopic ones (propane) are exchanged by a symmetry
    // of the molecule: one class, one value [common practice].
    const std::pair<const char *, std::size_t> ch2s[] = {{"CCO", 1}, {"CCOCC", 1}, {"O=C1CCCCC1", 2}, {"CCC", 1}};
    for (const auto &[smiles, heavy] : ch2s) {
      INFO(std::string(smiles));
      const auto hs = h1_on(smiles, heavy, nmrpred::ShiftOptions{});
      REQUIRE(hs.size() == 2);
      CHECK(hs[0].cls == hs[1].cls);
      CHECK(hs[0].ppm == hs[1].ppm);
      CHECK(hs[0].method.find("diastereotopic") == std::string::npos);
    }
    // The CH2 of 2-butanol (next to a stereocentre) is diastereotopic; the
    // reference records list it, like most open-chain CH2 groups, with one
    // value (1.48, PRETSCH-2009, from memory), and the method says why both
    // protons share it.
    const auto hs = h1_on("CC[C@@H](C)O", 1, nmrpred::ShiftOptions{});
    REQUIRE(hs.size() == 2);
    CHECK(hs[0].cls != hs[1].cls);
    CHECK(hs[0].ppm == hs[1].ppm);
    for (const auto &h : hs) CHECK(h.method.find("diastereotopic CH2") != std::string::npos);
  }

  TEST_CASE("carbons next to boron, a metal or at a radical centre get a finite value, a wide uncertainty and a warning") {
    // None of these environments is in the reference set or the rule tables.
    const char *unusual[] = {"CCB(CC)CC", "C[Sn](C)(C)C", "[CH2]CC", "C[Hg]C"};
    for (const char *smiles : unusual) {
      INFO(smiles);
      std::vector<std::string> warnings;
      const auto shifts = c13(smiles, {}, &warnings);
      REQUIRE(!shifts.empty());
      bool any_fallback = false;
      for (const auto &s : shifts) {
        CHECK(std::isfinite(s.ppm));
        CHECK(s.uncertainty_ppm > 0);
        if (s.source == nmrpred::ShiftSourceKind::ClassAverage) {
          any_fallback = true;
          CHECK(s.uncertainty_ppm >= 10.0);
        }
      }
      CHECK(any_fallback);
      CHECK(!warnings.empty());
    }
    std::vector<std::string> warnings;
    c13("[CH2]CC", {}, &warnings);
    bool radical_warned = false;
    for (const auto &w : warnings) radical_warned |= w.find("unpaired electrons") != std::string::npos;
    CHECK(radical_warned);
  }

  TEST_CASE("every carbon carries a method and a positive uncertainty, and equivalent carbons agree") {
    const auto m = nmrpred::read_molecule("CC(C)Cc1ccc(cc1)C(C)C(=O)O", nmrpred::Format::Smiles);  // ibuprofen
    const auto classes = nmrpred::compute_classes(m);
    nmrpred::ShiftOptions blind;
    blind.blind = true;
    const auto shifts = nmrpred::predict_c13(m, classes, tables(), blind);
    CHECK(shifts.size() == 13);
    for (const auto &a : shifts) {
      CHECK(!a.method.empty());
      CHECK(a.uncertainty_ppm > 0);
      for (const auto &b : shifts)
        if (classes.chemical[a.atom] == classes.chemical[b.atom]) CHECK(a.ppm == b.ppm);
    }
  }

  TEST_CASE("a shallow reference match corrects the increment rules by the matched residuals") {
    // Blind, 4-ethyltoluene is not matched deeply; its ring carbons come from
    // benzene increments corrected by reference residuals, and the method says so.
    nmrpred::ShiftOptions blind;
    blind.blind = true;
    const auto shifts = c13("CCc1ccc(C)cc1", blind);
    bool corrected = false;
    for (const auto &s : shifts)
      if (s.method.find("benzene increments") != std::string::npos && s.method.find("corrected by") != std::string::npos)
        corrected = true;
    CHECK(corrected);
  }

  TEST_CASE("1H shifts come one per proton in atom order, those on O, N and S marked exchangeable") {
    // The contract of predict_h1 (include/nmrpred/shifts.hpp). The
    // exchangeable and the carbon-bound protons are estimated in separate
    // runs, so molecules whose two kinds alternate along the proton list
    // test that they come back in atom order; deuterium gives no 1H signal
    // and has no entry. That protons on O, N and S exchange is common
    // practice.
    for (const char *smiles : {"OC(N)CS", "NCC(O)C(=O)O", "[2H]OCC(N)c1ccc(O)cc1S", "OCCO", "CC"}) {
      INFO(smiles);
      const auto m = nmrpred::read_molecule(smiles, nmrpred::Format::Smiles);
      const auto classes = nmrpred::compute_classes(m);
      const auto shifts = nmrpred::predict_h1(m, classes, tables());
      std::vector<std::size_t> want;
      for (std::size_t a = m.heavy_atom_count(); a < m.atom_count(); ++a)
        if (m.atom(a).isotope <= 1) want.push_back(a);
      REQUIRE(shifts.size() == want.size());
      for (std::size_t i = 0; i < shifts.size(); ++i) {
        const auto &s = shifts[i];
        CHECK(s.atom == want[i]);
        const auto z = m.atom(static_cast<std::size_t>(m.attached_to(s.atom))).atomic_number;
        CHECK(s.exchangeable == (z == 7 || z == 8 || z == 16));
        CHECK(!s.method.empty());
        for (const auto &t : shifts)
          if (classes.chemical[t.atom] == classes.chemical[s.atom]) CHECK(t.ppm == s.ppm);
      }
    }
  }

  TEST_CASE("predict_c13_h1 gives exactly what predict_c13 and predict_h1 give, field by field") {
    // The contract of predict_c13_h1 (include/nmrpred/shifts.hpp): the two
    // single calls are the reference.
    const auto smiles = engine_smiles();
    std::shared_ptr<const nmrpred::Tables> user;
    const auto settings = engine_settings(user);
    std::size_t compared = 0;
    for (const auto &setting : settings)
      for (const auto &smi : smiles) {
        INFO(setting.name << " | " << smi);
        const auto m = nmrpred::read_molecule(smi, nmrpred::Format::Smiles);
        const auto classes = nmrpred::compute_classes(m);
        std::vector<std::string> both_warnings, single_warnings;
        const auto both = nmrpred::predict_c13_h1(m, classes, *setting.tables, setting.options, &both_warnings);
        const auto c13 = nmrpred::predict_c13(m, classes, *setting.tables, setting.options, &single_warnings);
        const auto h1 = nmrpred::predict_h1(m, classes, *setting.tables, setting.options, &single_warnings);
        same_shifts(both.c13, c13);
        same_shifts(both.h1, h1);
        CHECK(both_warnings == single_warnings);
        compared += c13.size() + h1.size();
      }
    CHECK(compared > 2000);
    // The same errors as the single calls.
    const auto m = nmrpred::read_molecule("CCO", nmrpred::Format::Smiles);
    CHECK_THROWS_AS(nmrpred::predict_c13_h1(m, nmrpred::compute_classes(nmrpred::read_molecule("CC")), tables()),
                    nmrpred::ArgumentError);
    nmrpred::ShiftOptions unknown;
    unknown.solvent = "no such solvent";
    CHECK_THROWS_AS(nmrpred::predict_c13_h1(m, nmrpred::compute_classes(m), tables(), unknown), nmrpred::ArgumentError);
    CHECK_THROWS_AS(nmrpred::predict_h1(m, nmrpred::compute_classes(m), tables(), unknown), nmrpred::ArgumentError);
  }

  TEST_CASE("predict_c13_set gives exactly what compute_classes and predict_c13 give, molecule by molecule") {
    // The contract of predict_c13_set (include/nmrpred/shifts.hpp): the
    // single calls are the reference. The list is repeated so that the set
    // spans several of the blocks its stages run over (256 molecules), and
    // a block ends in the middle of a repeat.
    const auto smiles = engine_smiles();
    std::vector<nmrpred::Molecule> molecules;
    for (int repeat = 0; repeat < 7; ++repeat)
      for (const auto &smi : smiles) molecules.push_back(nmrpred::read_molecule(smi, nmrpred::Format::Smiles));
    REQUIRE(molecules.size() > 256);
    std::shared_ptr<const nmrpred::Tables> user;
    std::size_t compared = 0;
    for (const auto &setting : engine_settings(user)) {
      const auto set = nmrpred::predict_c13_set(molecules, *setting.tables, setting.options);
      REQUIRE(set.size() == molecules.size());
      for (std::size_t i = 0; i < molecules.size(); ++i) {
        INFO(setting.name << " | molecule " << i << " | " << smiles[i % smiles.size()]);
        const auto classes = nmrpred::compute_classes(molecules[i]);
        std::vector<std::string> warnings;
        const auto c13 = nmrpred::predict_c13(molecules[i], classes, *setting.tables, setting.options, &warnings);
        CHECK(set[i].error == nmrpred::Status::Ok);
        CHECK(set[i].error_message.empty());
        const std::vector<std::uint32_t> heavy(classes.chemical.begin(),
                                               classes.chemical.begin() + molecules[i].heavy_atom_count());
        CHECK(set[i].classes == heavy);
        same_shifts(set[i].shifts, c13);
        CHECK(set[i].warnings == warnings);
        compared += c13.size();
      }
    }
    CHECK(compared > 10000);
    CHECK(nmrpred::predict_c13_set({}, tables()).empty());
    // An unknown solvent fails the call before any molecule, as predict_c13
    // fails it for each.
    nmrpred::ShiftOptions unknown;
    unknown.solvent = "no such solvent";
    CHECK_THROWS_AS(nmrpred::predict_c13_set(molecules, tables(), unknown), nmrpred::ArgumentError);
  }

  TEST_CASE("blind predictions of p-xylene stay close to the published values") {
    // p-xylene in CDCl3: CH3 21.0, C1/C4 134.7, C2/3/5/6 129.0 (PRETSCH-2009, from memory).
    nmrpred::ShiftOptions blind;
    blind.blind = true;
    const auto m = nmrpred::read_molecule("Cc1ccc(C)cc1", nmrpred::Format::Smiles);
    const auto shifts = nmrpred::predict_c13(m, nmrpred::compute_classes(m), tables(), blind);
    for (const auto &s : shifts) {
      const double want = s.atom == 0 || s.atom == 5 ? 21.0 : (s.atom == 1 || s.atom == 4 ? 134.7 : 129.0);
      INFO("atom " << s.atom << ": " << s.method);
      check_close(s.ppm, want, 1.5);
    }
  }
}
