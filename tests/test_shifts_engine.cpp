// The shift engine as a whole: order of sources, provenance and behaviour on
// carbons no table describes. Expected behaviours are the library's contract
// (include/nmrpred/shifts.hpp); numeric expectations name their source.

#include <doctest/doctest.h>

#include <nmrpred/classes.hpp>
#include <nmrpred/io.hpp>
#include <nmrpred/shifts.hpp>
#include <nmrpred/tables.hpp>

#include <cmath>
#include <memory>
#include <string>
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

}  // namespace

TEST_SUITE("shifts_engine") {
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
