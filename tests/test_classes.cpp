// Equivalent atoms: topological classes and stereo-aware chemical classes.
//
// Expected topicity relations are the standard textbook examples. Sources:
//  [EW]  E. L. Eliel, S. H. Wilen, Stereochemistry of Organic Compounds, Wiley 1994,
//        ch. 8, "Heterotopic ligands and faces" (from memory)
//  [CGW] J. Clayden, N. Greeves, S. Warren, Organic Chemistry, 2nd ed., OUP 2012,
//        ch. 31, diastereotopic protons (from memory)
//  [SIL] SILVERSTEIN-2014 (tables/SOURCES.md), ch. 3, chemical and magnetic
//        equivalence (from memory)
// Signal counts of simple molecules are common practice.

#include <doctest/doctest.h>

#include <nmrpred/classes.hpp>
#include <nmrpred/io.hpp>

#include "graph/heavy_classes.hpp"
#include "nci.hpp"

#include <set>
#include <string>
#include <vector>

namespace {

struct Counts {
  std::size_t carbon = 0;
  std::size_t proton = 0;
};

// Distinct chemical classes among carbons and among protons (1H, not 2H).
Counts signal_counts(const nmrpred::Molecule &m, const nmrpred::AtomClasses &c) {
  std::set<std::uint32_t> carbons, protons;
  for (std::size_t i = 0; i < m.atom_count(); ++i) {
    const auto &a = m.atom(i);
    if (a.atomic_number == 6) carbons.insert(c.chemical[i]);
    if (a.atomic_number == 1 && (a.isotope == 0 || a.isotope == 1)) protons.insert(c.chemical[i]);
  }
  return {carbons.size(), protons.size()};
}

// Hydrogens on heavy atom `heavy`, in index order.
std::vector<std::size_t> hydrogens_on(const nmrpred::Molecule &m, std::size_t heavy) {
  std::vector<std::size_t> hs;
  for (std::size_t i = m.heavy_atom_count(); i < m.atom_count(); ++i)
    if (m.attached_to(i) == static_cast<std::int64_t>(heavy)) hs.push_back(i);
  return hs;
}

struct TopicityRow {
  const char *smiles;
  std::size_t heavy;  // heavy atom carrying the two protons compared
  bool same_class;    // true: homotopic or enantiotopic; false: diastereotopic
  const char *source;
};

struct CountRow {
  const char *smiles;
  std::size_t carbon_signals;
  std::size_t proton_signals;
  const char *source;
};

}  // namespace

TEST_SUITE("classes") {
  TEST_CASE("geminal protons are grouped by their topicity") {
    const TopicityRow rows[] = {
        {"CCO", 1, true, "[EW] ethanol CH2: enantiotopic"},
        {"CC(O)CC", 3, false, "[EW] 2-butanol C3 H2: diastereotopic (racemate too)"},
        {"C[C@@H](O)CC", 3, false, "[EW] (R)-2-butanol C3 H2: diastereotopic"},
        {"C=CC", 0, false, "[EW] propene =CH2: one H cis to the methyl"},
        {"ClCCl", 1, true, "[EW] dichloromethane: homotopic (C2 axis)"},
        {"FCCl", 1, true, "[EW] chlorofluoromethane: enantiotopic"},
        {"C=C(F)Cl", 0, false, "[EW] 1-chloro-1-fluoroethene: diastereotopic"},
        {"C=C(Cl)Cl", 0, true, "[EW] 1,1-dichloroethene: homotopic"},
        {"CCOCC", 1, true, "[SIL] diethyl ether CH2: enantiotopic"},
        {"OCc1ccccc1", 1, true, "[SIL] benzyl alcohol CH2: enantiotopic"},
        {"OCC(O)CO", 1, false, "[CGW] glycerol CH2 protons: diastereotopic"},
        {"OC(=O)CC(O)(CC(=O)O)C(=O)O", 3, false, "[CGW] citric acid CH2: diastereotopic AB"},
        {"CCS(C)=O", 1, false, "[EW] ethyl methyl sulfoxide CH2: diastereotopic (stereogenic S)"},
        {"C1CCCCC1", 0, true, "[EW] cyclohexane (averaged): one proton environment"},
        {"CC1CCCCC1", 2, false, "[EW] methylcyclohexane C2 H2: cis/trans to methyl"},
        {"CC1CC1", 2, false, "[EW] methylcyclopropane ring CH2: cis/trans to methyl"},
        {"C[C@@H](O)C[C@@H](O)C", 3, false, "[EW] meso-2,4-pentanediol C3 H2: diastereotopic"},
        {"C[C@@H](O)C[C@H](O)C", 3, true, "[EW] (2R,4R)-2,4-pentanediol C3 H2: homotopic (C2 axis)"},
        {"CC(=O)OCC", 4, true, "[SIL] ethyl acetate OCH2: enantiotopic"},
        {"N[C@@H](Cc1ccccc1)C(=O)O", 2, false, "[CGW] phenylalanine beta-CH2: diastereotopic"},
        {"ClCC(Cl)(Br)CCl", 1, false, "[EW] CH2 next to a stereocentre: diastereotopic"},
    };
    for (const auto &row : rows) {
      const std::string where = std::string(row.smiles) + "  " + row.source;
      INFO(where);
      const auto m = nmrpred::read_molecule(row.smiles, nmrpred::Format::Smiles);
      const auto c = nmrpred::compute_classes(m);
      const auto hs = hydrogens_on(m, row.heavy);
      REQUIRE(hs.size() == 2);
      CHECK(c.topological[hs[0]] == c.topological[hs[1]]);
      CHECK((c.chemical[hs[0]] == c.chemical[hs[1]]) == row.same_class);
    }
  }

  TEST_CASE("chemical classes give the expected numbers of 13C and 1H signals") {
    const CountRow rows[] = {
        {"C", 1, 1, "common practice: methane"},
        {"CC", 1, 1, "common practice: ethane"},
        {"CCO", 2, 3, "common practice: ethanol (CH3, CH2, OH)"},
        {"c1ccccc1", 1, 1, "common practice: benzene"},
        {"Cc1ccccc1", 5, 4, "common practice: toluene"},
        {"Cc1ccc(C)cc1", 3, 2, "common practice: p-xylene"},
        {"Cc1cccc(C)c1", 5, 4, "common practice: m-xylene"},
        {"Cc1ccccc1C", 4, 3, "common practice: o-xylene"},
        {"CC(C)=C", 3, 2, "common practice: isobutene"},
        {"CC=C(C)C", 5, 4, "[SIL] 2-methyl-2-butene: gem methyls differ"},
        {"C/C=C/C", 2, 2, "common practice: (E)-2-butene"},
        {"C/C=C\\C", 2, 2, "common practice: (Z)-2-butene"},
        {"CC(C)=NO", 3, 3, "[EW] acetone oxime: methyls cis and trans to OH differ"},
        {"CC(O)C(C)C", 5, 6, "[CGW] 3-methyl-2-butanol: diastereotopic isopropyl methyls"},
        {"CC(C)(C)C", 2, 1, "common practice: neopentane"},
        {"ClCCCl", 1, 1, "common practice: 1,2-dichloroethane"},
        {"CS(C)=O", 1, 1, "[EW] DMSO: enantiotopic methyls"},
        {"C[C@@H](O)[C@@H](O)C", 2, 3, "[EW] meso-2,3-butanediol"},
        {"C[C@@H](O)[C@H](O)C", 2, 3, "[EW] (2R,3R)-2,3-butanediol"},
        {"O=C1CCCCC1", 4, 3, "common practice: cyclohexanone (averaged ring)"},
    };
    for (const auto &row : rows) {
      const std::string where = std::string(row.smiles) + "  " + row.source;
      INFO(where);
      const auto m = nmrpred::read_molecule(row.smiles, nmrpred::Format::Smiles);
      const auto c = nmrpred::compute_classes(m);
      const auto n = signal_counts(m, c);
      CHECK(n.carbon == row.carbon_signals);
      CHECK(n.proton == row.proton_signals);
    }
  }

  TEST_CASE("classes and ranks do not depend on the input atom order") {
    // The same molecules written from different starting atoms.
    const std::pair<const char *, const char *> pairs[] = {
        {"CC(O)CC", "CCC(C)O"},
        {"C[C@@H](O)CC", "CC[C@@H](C)O"},
        {"OCC(O)CO", "C(O)C(O)CO"},
    };
    for (const auto &p : pairs) {
      const std::string where = std::string(p.first) + " vs " + p.second;
      INFO(where);
      const auto a = nmrpred::read_molecule(p.first, nmrpred::Format::Smiles);
      const auto b = nmrpred::read_molecule(p.second, nmrpred::Format::Smiles);
      const auto ca = nmrpred::compute_classes(a);
      const auto cb = nmrpred::compute_classes(b);
      CHECK(ca.topological_count == cb.topological_count);
      CHECK(ca.chemical_count == cb.chemical_count);
      std::multiset<std::uint32_t> ra(ca.invariant_rank.begin(), ca.invariant_rank.end());
      std::multiset<std::uint32_t> rb(cb.invariant_rank.begin(), cb.invariant_rank.end());
      CHECK(ra == rb);
    }
  }

  TEST_CASE("unspecified stereocentres are reported and still make protons diastereotopic") {
    const auto m = nmrpred::read_molecule("CC(O)CC", nmrpred::Format::Smiles);
    const auto c = nmrpred::compute_classes(m);
    CHECK(c.notes.size() == 1);
  }

  TEST_CASE("copies of one fragment share classes") {
    // common practice: identical molecules in one sample give one spectrum.
    const auto m = nmrpred::read_molecule("CCO.OCC.[Na+].[Na+]", nmrpred::Format::Smiles);
    const auto c = nmrpred::compute_classes(m);
    CHECK(c.chemical[0] == c.chemical[5]);
    CHECK(c.chemical[1] == c.chemical[4]);
    CHECK(c.chemical[6] == c.chemical[7]);
  }

  TEST_CASE("long chains and many fragments finish quickly") {
    std::string chain(5000, 'C');
    const auto a = nmrpred::read_molecule(chain, nmrpred::Format::Smiles);
    const auto ca = nmrpred::compute_classes(a);
    CHECK(ca.topological_count == 5000);  // 2500 carbon + 2500 proton classes
    std::string frags = "C";
    for (int i = 1; i < 1000; ++i) frags += ".C";
    const auto b = nmrpred::read_molecule(frags, nmrpred::Format::Smiles);
    const auto cb = nmrpred::compute_classes(b);
    CHECK(cb.topological_count == 2);
    CHECK(cb.chemical_count == 2);
  }

  // The shortcut of the 13C batch path (src/graph/heavy_classes.hpp): where
  // it answers, its heavy-atom classes are compute_classes()'s (the
  // reference here), and so are the topological classes of every atom.
  void check_heavy_shortcut(const nmrpred::Molecule &m, const nmrpred::AtomClasses &h) {
    const auto full = nmrpred::compute_classes(m);
    CHECK(h.topological == full.topological);
    CHECK(h.topological_count == full.topological_count);
    REQUIRE(h.chemical.size() == m.atom_count());
    for (std::size_t a = 0; a < m.heavy_atom_count(); ++a) {
      INFO("atom " << a);
      CHECK(h.chemical[a] == full.chemical[a]);
    }
  }

  TEST_CASE("the heavy-atom shortcut gives compute_classes' heavy-atom classes, or declines") {
    // Applies: no stereo; an unspecified centre and a given one; a
    // pseudo-asymmetric ring atom whose CH2 protons are diastereotopic
    // ([EW] ch. 8, from memory: the heavy atoms' classes do not depend on
    // them); twin leaves; unspecified and given double bonds; a salt of two
    // different ions; two isopropyl groups that a symmetry exchanges, whose
    // methyls share a class whichever way their atoms are configured.
    for (const char *smi : {"CC(C)C", "CC(O)CC", "C[C@@H](O)CC", "ClC1CC1", "CC(C)(C)C(F)(F)F", "CC=CCl",
                            "OC(=O)C(C)(C)C1=CC=CC=C1", "C/C=C/C(C)C", "CC[NH3+].[Cl-]", "CC(C)CC(C)(C)CC(C)C"}) {
      INFO(smi);
      const auto m = nmrpred::read_molecule(smi, nmrpred::Format::Smiles);
      nmrpred::AtomClasses h;
      REQUIRE(nmrpred::detail::heavy_atom_classes(m, h));
      check_heavy_shortcut(m, h);
    }
    // Declines: two copies of one molecule (compute_classes() merges them);
    // a deuterium; two unspecified centres or double bonds that a symmetry
    // exchanges (meso or racemic 2,3-butanediol, cis- or
    // trans-1,3-dichlorocyclobutane, the three hexa-2,4-dienes: the
    // configuration picked for one relative to the other changes the
    // classes); a phosphine, whose hydrogen and lone pair the graph without
    // hydrogens cannot tell apart.
    for (const char *smi : {"CCO.OCC", "[2H]C(Cl)Cl", "CC(O)C(O)C", "ClC1CC(Cl)C1", "CC=CC=CC", "C[PH]CC"}) {
      INFO(smi);
      const auto m = nmrpred::read_molecule(smi, nmrpred::Format::Smiles);
      nmrpred::AtomClasses h;
      CHECK_FALSE(nmrpred::detail::heavy_atom_classes(m, h));
    }
    // And a hydrogen on another bond than a single one (a graph no reader
    // makes, but one the API accepts; the input fuzzer found it): the
    // colours of the heavy graph do not carry the bond.
    nmrpred::MoleculeData d;
    d.atoms.resize(5);
    d.atoms[0].atomic_number = 6;
    d.atoms[1].atomic_number = 6;
    for (int k = 2; k < 5; ++k) d.atoms[k].atomic_number = 1;
    d.bonds = {{0, 1, nmrpred::BondOrder::Single}, {0, 2, nmrpred::BondOrder::Single},
               {0, 3, nmrpred::BondOrder::Triple}, {1, 4, nmrpred::BondOrder::Single}};
    nmrpred::AtomClasses h;
    CHECK_FALSE(nmrpred::detail::heavy_atom_classes(nmrpred::Molecule(std::move(d)), h));
  }

  TEST_CASE("the heavy-atom shortcut agrees with compute_classes over the NCI sample") {
    INFO("NCI sample: " << nci::path());
    const auto mols = nci::molecules(0, nci::lines().size());
    REQUIRE(mols.size() > 4900);
    std::size_t answered = 0;
    for (std::size_t i = 0; i < mols.size(); ++i) {
      nmrpred::AtomClasses h;
      if (!nmrpred::detail::heavy_atom_classes(mols[i], h)) continue;
      ++answered;
      INFO("molecule " << i);
      check_heavy_shortcut(mols[i], h);
    }
    // It must answer for most molecules to be worth having: 4,746 of the
    // 4,999 when it was written (95 %).
    MESSAGE("heavy-atom shortcut answered for " << answered << " of " << mols.size() << " molecules");
    CHECK(answered >= mols.size() * 90 / 100);
  }
}

