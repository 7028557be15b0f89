// Solvent residual and water signals against the published tables.
// Sources: GOTTLIEB-1997 (J. Org. Chem. 1997, 62, 7512) and FULMER-2010
// (Organometallics 2010, 29, 2176), values from memory; multiplicities by the
// 2nI+1 rule with I(2H) = 1 (common practice).

#include <doctest/doctest.h>

#include <nmrpred/error.hpp>
#include <nmrpred/solvents.hpp>
#include <nmrpred/tables.hpp>

#include <string>

#include "check.hpp"

namespace {

struct Row {
  const char *name;
  double h1, c13, water;  // c13 < 0: none
  const char *h1_mult, *c13_mult;
  const char *source;
};

}  // namespace

TEST_SUITE("solvents") {
  TEST_CASE("residual and water signals match the published values") {
    const auto tables = nmrpred::Tables::builtin();
    const Row rows[] = {
        {"CDCl3", 7.26, 77.16, 1.56, "s", "t", "FULMER-2010 (from memory)"},
        {"DMSO-d6", 2.50, 39.52, 3.33, "p", "sept", "FULMER-2010 (from memory)"},
        {"CD3OD", 3.31, 49.00, 4.87, "p", "sept", "FULMER-2010 (from memory)"},
        {"D2O", 4.79, -1, 4.79, "s", "", "FULMER-2010 (from memory)"},
        {"acetone-d6", 2.05, 29.84, 2.84, "p", "sept", "FULMER-2010 (from memory)"},
        {"C6D6", 7.16, 128.06, 0.40, "s", "t", "FULMER-2010 (from memory)"},
        {"CD3CN", 1.94, 1.32, 2.13, "p", "sept", "FULMER-2010 (from memory)"},
    };
    for (const auto &r : rows) {
      const std::string where = std::string(r.name) + "  " + r.source;
      INFO(where);
      const auto s = nmrpred::find_solvent(*tables, r.name);
      REQUIRE(!s.h1_residual.empty());
      check_close(s.h1_residual[0].shift_ppm, r.h1, 0.005);
      check_close(s.water_h1_ppm, r.water, 0.005);
      if (r.c13 < 0) {
        CHECK(s.c13.empty());
      } else {
        REQUIRE(!s.c13.empty());
        check_close(s.c13[0].shift_ppm, r.c13, 0.005);
        CHECK(s.c13[0].multiplicity == r.c13_mult);
      }
      if (std::string(r.h1_mult) != "s") CHECK(s.h1_residual[0].multiplicity == r.h1_mult);
    }
  }

  TEST_CASE("solvents are found by name, alias or id, whatever the case") {
    const auto tables = nmrpred::Tables::builtin();
    CHECK(nmrpred::find_solvent(*tables, " chloroform-d ").name == "CDCl3");
    CHECK(nmrpred::find_solvent(*tables, "DMSO").name == "DMSO-d6");
    CHECK(nmrpred::find_solvent(*tables, "cd3od").exchanges_labile_protons);
    CHECK(nmrpred::find_solvent(*tables, "d2o").exchanges_labile_protons);
    CHECK_FALSE(nmrpred::find_solvent(*tables, "CDCl3").exchanges_labile_protons);
  }

  TEST_CASE("an unknown solvent is an ArgumentError naming the known ones") {
    const auto tables = nmrpred::Tables::builtin();
    try {
      nmrpred::find_solvent(*tables, "heavy water vapour");
      FAIL("no error");
    } catch (const nmrpred::ArgumentError &e) {
      const std::string what = e.what();
      CHECK(what.find("heavy water vapour") != std::string::npos);
      CHECK(what.find("CDCl3") != std::string::npos);
    }
  }
}
