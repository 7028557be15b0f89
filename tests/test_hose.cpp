// HOSE-style environment codes (docs/hose.md).
//
// Sources of the expected codes:
//  [BREMSER]  BREMSER-1978 (tables/SOURCES.md): the sphere layout, the bond
//             symbols '=', '%', '*', ring closure '&' and the element
//             priority C, O, N, S, P, Si, B, F, Cl, Br, I (from memory).
//  [RULES]    The codes were derived by hand, before running the code, from
//             the rules in docs/hose.md, which follow [BREMSER] (from memory).
//             docs/hose.md shows each derivation under "Worked examples".
//  [CP]       Common practice: facts of the trade (benzene's Kekule and
//             aromatic forms are one structure; equivalent atoms have one
//             environment; an environment code does not depend on how the
//             atoms were numbered).
// The NCI entries are from the NCI sample shipped with rdkit-data
// (Data/NCI/first_5K.smi).

#include <doctest/doctest.h>

#include <nmrpred/classes.hpp>
#include <nmrpred/error.hpp>
#include <nmrpred/hose.hpp>
#include <nmrpred/io.hpp>

#include <algorithm>
#include <array>
#include <cmath>
#include <map>
#include <random>
#include <set>
#include <string>
#include <vector>

namespace {

using nmrpred::Atom;
using nmrpred::Bond;
using nmrpred::BondOrder;
using nmrpred::Molecule;
using nmrpred::MoleculeData;

struct CodeRow {
  const char *input;  // SMILES
  std::size_t atom;   // index in the library's atom order (heavy atoms in SMILES order, then H)
  int spheres;
  const char *expected;
  const char *source;
};

std::string code_of(const Molecule &m, std::size_t atom, int spheres) {
  const auto classes = nmrpred::compute_classes(m);
  return nmrpred::hose_code(m, classes, atom, spheres);
}

// Tiny builder for molecules the reader cannot express (odd valences) and for
// tests that must not depend on the reader.
struct Builder {
  MoleculeData d;
  std::uint32_t atom(unsigned z, int charge = 0) {
    Atom a;
    a.atomic_number = static_cast<std::uint8_t>(z);
    a.formal_charge = static_cast<std::int8_t>(charge);
    d.atoms.push_back(a);
    return static_cast<std::uint32_t>(d.atoms.size() - 1);
  }
  void bond(std::uint32_t a, std::uint32_t b, BondOrder o = BondOrder::Single) {
    Bond x;
    x.begin = std::min(a, b);
    x.end = std::max(a, b);
    x.order = o;
    d.bonds.push_back(x);
  }
  Molecule build() const { return Molecule(d); }
};

// The same molecule with heavy atoms and hydrogens shuffled (each among
// themselves, as Molecule requires) and the bond list shuffled. new_index
// maps old atom indices to new ones. Stereo is dropped: codes do not use it.
Molecule permuted(const Molecule &m, std::mt19937 &rng, std::vector<std::uint32_t> &new_index) {
  const std::size_t n = m.atom_count(), heavy = m.heavy_atom_count();
  std::vector<std::uint32_t> old(n);
  for (std::uint32_t i = 0; i < n; ++i) old[i] = i;
  std::shuffle(old.begin(), old.begin() + static_cast<std::ptrdiff_t>(heavy), rng);
  std::shuffle(old.begin() + static_cast<std::ptrdiff_t>(heavy), old.end(), rng);
  new_index.assign(n, 0);
  for (std::uint32_t i = 0; i < n; ++i) new_index[old[i]] = i;
  MoleculeData d;
  for (std::uint32_t i = 0; i < n; ++i) d.atoms.push_back(m.atom(old[i]));
  for (const auto &b : m.bonds()) {
    Bond x;
    x.begin = std::min(new_index[b.begin], new_index[b.end]);
    x.end = std::max(new_index[b.begin], new_index[b.end]);
    x.order = b.order;
    d.bonds.push_back(x);
  }
  std::shuffle(d.bonds.begin(), d.bonds.end(), rng);
  return Molecule(d);
}

// Buckminsterfullerene as a graph: the truncated icosahedron, one atom per
// (vertex, neighbour) pair of an icosahedron. All 60 atoms are equivalent.
Molecule fullerene_c60() {
  const double phi = (1.0 + std::sqrt(5.0)) / 2.0;
  std::vector<std::array<double, 3>> v;
  for (int s1 : {-1, 1})
    for (int s2 : {-1, 1}) {
      v.push_back({0.0, s1 * 1.0, s2 * phi});
      v.push_back({s1 * 1.0, s2 * phi, 0.0});
      v.push_back({s2 * phi, 0.0, s1 * 1.0});
    }
  auto adjacent = [&](int a, int b) {
    double d2 = 0;
    for (int k = 0; k < 3; ++k) d2 += (v[a][k] - v[b][k]) * (v[a][k] - v[b][k]);
    return std::fabs(d2 - 4.0) < 1e-9;  // icosahedron edge length 2
  };
  std::map<std::pair<int, int>, std::uint32_t> id;
  for (int a = 0; a < 12; ++a)
    for (int b = 0; b < 12; ++b)
      if (a != b && adjacent(a, b)) id.emplace(std::make_pair(a, b), static_cast<std::uint32_t>(id.size()));
  Builder mol;
  for (std::size_t i = 0; i < id.size(); ++i) {
    mol.atom(6);
    mol.d.atoms.back().aromatic = true;
  }
  std::set<std::pair<std::uint32_t, std::uint32_t>> bonds;
  for (const auto &[key, i] : id) {
    const auto [u, w] = key;
    const auto j = id.at({w, u});
    bonds.insert({std::min(i, j), std::max(i, j)});
    for (int x = 0; x < 12; ++x)
      if (x != u && x != w && adjacent(u, x) && adjacent(w, x)) {
        const auto k = id.at({u, x});
        bonds.insert({std::min(i, k), std::max(i, k)});
      }
  }
  for (const auto &[a, b] : bonds) mol.bond(a, b, BondOrder::Aromatic);
  return mol.build();
}

// Molecules with rings, symmetry, charges, metals and hydrogens for the
// property checks (invariance, equivalence, prefix stability).
const char *const kPropertyMolecules[] = {
    "CCO",
    "Cc1ccccc1",
    "C1CCC12CCC2",
    "CC(C)(C)c1ccc(cc1)C(C)(C)C",
    "C12C3C4C1C5C2C3C45",               // cubane [CP]
    "C1C2CC3CC1CC(C2)C3",               // adamantane [CP]
    "C1CCOCCOCCOCCOCCOC1",              // 18-crown-6 [CP]
    "OC1C(O)C(O)C(O)C(O)C1O",           // inositol [CP]
    "c1ccc2ccccc2c1",                   // naphthalene [CP]
    "C[N+](C)(C)CC(=O)[O-]",            // betaine [CP]
    "OC(=O)CC(O)(CC(=O)O)C(=O)O",       // citric acid [CP]
    "[Na+].[Cl-]",
    "CC1=[O+][Zr]234([O+]=C(C)C1)([O+]=C(C)CC(=[O+]2)C)([O+]=C(C)CC(=[O+]3)C)[O+]=C(C)CC(=[O+]4)C",  // NCI 4660
    "CC(C)CCCC(C)C1CCC2C1(CCC3C2CC=C4C3(CCC(C4)O)C)C",  // cholesterol skeleton [CP]
};

}  // namespace

TEST_SUITE("hose") {
  TEST_CASE("codes of small molecules follow the documented layout and priorities") {
    const CodeRow rows[] = {
        {"CCO", 0, 4, "C-4;C(O//)", "[RULES] ethanol CH3"},
        {"CCO", 1, 4, "C-4;CO(,//)", "[RULES] ethanol CH2: C before O"},
        {"CCO", 2, 4, "O-2;C(C//)", "[RULES] ethanol O"},
        {"CCO", 3, 4, "H-1;C(C/O/)", "[RULES] ethanol CH3 proton: sphere 1 is its carbon"},
        {"CCO", 8, 4, "H-1;O(C/C/)", "[RULES] ethanol OH proton"},
        {"CCO", 1, 1, "C-4;CO", "[RULES] one sphere: no brackets"},
        {"CCO", 1, 2, "C-4;CO(,)", "[RULES] two spheres: an empty group keeps its slot"},
        {"CC#N", 0, 4, "C-4;C(%N//)", "[RULES] acetonitrile CH3: '%' triple bond [BREMSER]"},
        {"CC#N", 1, 4, "C-2;%NC(,//)", "[RULES] acetonitrile C: triple bond before single"},
        {"CC#N", 2, 4, "N-1;%C(C//)", "[RULES] acetonitrile N"},
        {"CC(=O)C", 1, 4, "C-3;=OCC(,,//)", "[RULES] acetone C=O: double bond first [BREMSER]"},
        {"CC(=O)C", 0, 4, "C-4;C(=OC/,/)", "[RULES] acetone CH3"},
        {"CC(=O)C", 2, 4, "O-1;=C(CC/,/)", "[RULES] acetone O"},
        {"ClC(Cl)Cl", 1, 4, "C-4;ClClCl(,,//)", "[RULES] chloroform C"},
        {"ClC(Cl)Cl", 0, 3, "Cl-1;C(ClCl/,)", "[RULES] chloroform Cl"},
        {"c1ccccc1", 0, 4, "C-3;*C*C(*C,*C/*C,*&/)", "[RULES] benzene C: '*' aromatic, '&' ring closure [BREMSER]"},
        {"c1ccccc1", 6, 4, "H-1;C(*C*C/*C,*C/*C,*&)", "[RULES] benzene H"},
        {"C1=CC=CC=C1", 0, 4, "C-3;*C*C(*C,*C/*C,*&/)", "[CP] Kekule benzene is benzene; [RULES]"},
        {"Cc1ccccc1", 0, 4, "C-4;C(*C*C/*C,*C/*C,*&)", "[RULES] toluene CH3"},
        {"C1CC1", 0, 4, "C-4;CC(&,//)", "[RULES] cyclopropane: bond inside sphere 1 written once"},
        {"C1CCCCC1", 0, 4, "C-4;CC(C,C/C,&/)", "[RULES] cyclohexane C"},
        {"C1CCC12CCC2", 3, 4, "C-4;CCCC(C,C,&,&/,/)", "[RULES] spiro[3.3]heptane C4: tie rule puts C before &"},
        {"CC1CC=C1", 4, 4, "C-3;=CC(C,C&/,/)", "[RULES] 3-methylcyclobutene C1: atom and '&' in one group"},
        {"C(=O)[O-]", 0, 4, "C-3;=OO-(,//)", "[RULES] formate C: charge after the symbol"},
        {"C[N+](=O)[O-]", 0, 4, "C-4;N+(=OO-/,/)", "[RULES] nitromethane CH3"},
        {"[NH4+]", 0, 4, "N+-4;(//)", "[RULES] ammonium: charged centre, no heavy neighbours"},
        {"[NH4+]", 0, 1, "N+-4;", "[RULES] ammonium, one sphere"},
        {"[Na+]", 0, 4, "Na+-0;(//)", "[RULES] isolated ion"},
        {"[Ca+2]", 0, 2, "Ca+2-0;()", "[RULES] charge magnitude above one"},
        {"O", 1, 4, "H-1;O(//)", "[RULES] water H: the other H is never written"},
        {"[H][H]", 0, 3, "H-1;(/)", "[RULES] H2: a hydrogen sphere atom is never written"},
        {"[2H]C([2H])([2H])[2H]", 0, 4, "C-4;(//)", "[RULES] CD4: deuterium counts as a neighbour"},
        {"[2H]C([2H])([2H])[2H]", 1, 2, "H-1;C()", "[RULES] CD4 deuteron: isotopes are not written"},
    };
    for (const auto &row : rows) {
      INFO(row.input, " atom ", row.atom, " spheres ", row.spheres, ": ", row.source);
      const Molecule m = nmrpred::read_molecule(row.input, nmrpred::Format::Smiles);
      CHECK(code_of(m, row.atom, row.spheres) == row.expected);
    }
  }

  TEST_CASE("atoms are ordered by bond type, then element priority, then charge") {
    // One centre carrying every kind of neighbour, added in scrambled order.
    Builder b;
    const auto c = b.atom(6);
    for (unsigned z : {53u, 34u, 35u, 9u, 5u, 6u, 14u, 15u, 16u, 7u, 8u, 17u, 3u}) b.bond(c, b.atom(z));
    const Molecule elements = b.build();
    const std::string e = code_of(elements, 0, 1);
    CHECK_MESSAGE(e == "C-13;CONSPSiBFClBrILiSe", "[BREMSER] priority C O N S P Si B F Cl Br I, then by atomic number");

    Builder o;
    const auto x = o.atom(6);
    o.bond(x, o.atom(6), BondOrder::Single);
    o.bond(x, o.atom(6), BondOrder::Aromatic);
    o.bond(x, o.atom(6), BondOrder::Double);
    o.bond(x, o.atom(6), BondOrder::Triple);
    CHECK_MESSAGE(code_of(o.build(), 0, 1) == "C-4;%C=C*CC", "[BREMSER] triple, double, aromatic, single");

    Builder q;
    const auto y = q.atom(6);
    for (int charge : {-2, 1, 0, 2, -1}) q.bond(y, q.atom(7, charge));
    CHECK_MESSAGE(code_of(q.build(), 0, 1) == "C-5;NN+N-N+2N-2", "[RULES] neutral, +1, -1, +2, -2");
  }

  TEST_CASE("codes do not depend on the input atom order") {
    std::mt19937 rng(20240611);
    for (const char *smiles : kPropertyMolecules) {
      INFO(smiles, " [CP]");
      const Molecule m = nmrpred::read_molecule(smiles, nmrpred::Format::Smiles);
      const auto classes = nmrpred::compute_classes(m);
      const int sphere_counts[] = {2, 4, 6};
      std::vector<std::vector<std::string>> codes;
      for (int spheres : sphere_counts) codes.push_back(nmrpred::hose_codes(m, classes, spheres));
      for (int trial = 0; trial < 3; ++trial) {
        std::vector<std::uint32_t> where;
        const Molecule p = permuted(m, rng, where);
        const auto pc = nmrpred::compute_classes(p);
        for (std::size_t i = 0; i < codes.size(); ++i)
          for (std::size_t a = 0; a < m.atom_count(); ++a) {
            INFO("atom ", a, " spheres ", sphere_counts[i]);
            CHECK(nmrpred::hose_code(p, pc, where[a], sphere_counts[i]) == codes[i][a]);
          }
      }
    }
  }

  TEST_CASE("equivalent atoms get identical codes") {
    for (const char *smiles : kPropertyMolecules) {
      INFO(smiles, " [CP]");
      const Molecule m = nmrpred::read_molecule(smiles, nmrpred::Format::Smiles);
      const auto classes = nmrpred::compute_classes(m);
      std::map<std::uint32_t, std::string> first;
      for (std::size_t a = 0; a < m.atom_count(); ++a) {
        // hose_code, not hose_codes: the batch call shares work within a class.
        const std::string s = nmrpred::hose_code(m, classes, a, 6);
        const auto it = first.emplace(classes.topological[a], s).first;
        INFO("atom ", a);
        CHECK(it->second == s);
      }
    }
  }

  TEST_CASE("all sixty atoms of C60 have one code, whatever the numbering") {
    const Molecule c60 = fullerene_c60();
    REQUIRE(c60.atom_count() == 60);
    REQUIRE(c60.bond_count() == 90);
    const auto classes = nmrpred::compute_classes(c60);
    std::mt19937 rng(60);
    std::vector<std::uint32_t> where;
    const Molecule p = permuted(c60, rng, where);
    const auto pc = nmrpred::compute_classes(p);
    for (int spheres = 1; spheres <= nmrpred::kMaxHoseSpheres; ++spheres) {
      INFO("spheres ", spheres, " [CP] icosahedral symmetry");
      const std::string ref = nmrpred::hose_code(c60, classes, 0, spheres);
      for (std::size_t a = 0; a < 60; ++a) {
        CHECK(nmrpred::hose_code(c60, classes, a, spheres) == ref);
        CHECK(nmrpred::hose_code(p, pc, where[a], spheres) == ref);
      }
    }
    // Sphere 1: three aromatic carbons; sphere 2: each has two more [RULES].
    CHECK(nmrpred::hose_code(c60, classes, 0, 2) == "C-3;*C*C*C(*C*C,*C*C,*C*C)");
  }

  TEST_CASE("hose_codes matches hose_code for every atom") {
    for (const char *smiles : kPropertyMolecules) {
      INFO(smiles);
      const Molecule m = nmrpred::read_molecule(smiles, nmrpred::Format::Smiles);
      const auto classes = nmrpred::compute_classes(m);
      for (int spheres = 1; spheres <= nmrpred::kMaxHoseSpheres; ++spheres) {
        const auto all = nmrpred::hose_codes(m, classes, spheres);
        REQUIRE(all.size() == m.atom_count());
        for (std::size_t a = 0; a < m.atom_count(); ++a) {
          INFO("atom ", a, " spheres ", spheres);
          CHECK(all[a] == nmrpred::hose_code(m, classes, a, spheres));
        }
      }
    }
  }

  TEST_CASE("a code with k spheres is the first k spheres of a longer one") {
    for (const char *smiles : kPropertyMolecules) {
      INFO(smiles, " [RULES] prefix property");
      const Molecule m = nmrpred::read_molecule(smiles, nmrpred::Format::Smiles);
      const auto classes = nmrpred::compute_classes(m);
      for (std::size_t a = 0; a < m.atom_count(); ++a) {
        const auto parts = nmrpred::hose_spheres(m, classes, a, nmrpred::kMaxHoseSpheres);
        REQUIRE(parts.size() == static_cast<std::size_t>(nmrpred::kMaxHoseSpheres) + 1);
        for (int k = 1; k <= nmrpred::kMaxHoseSpheres; ++k) {
          INFO("atom ", a, " spheres ", k);
          CHECK(nmrpred::join_hose_spheres(parts, k) == nmrpred::hose_code(m, classes, a, k));
        }
      }
    }
  }

  TEST_CASE("every sphere count from 1 to 6 has its documented shape") {
    // Hexane C1 and the end of a 5,000-atom chain: one more "C" group per sphere [RULES].
    const Molecule hexane = nmrpred::read_molecule("CCCCCC", nmrpred::Format::Smiles);
    const char *const expected[] = {"C-4;C", "C-4;C(C)", "C-4;C(C/C)", "C-4;C(C/C/C)", "C-4;C(C/C/C/C)",
                                    "C-4;C(C/C/C/C/)"};
    for (int k = 1; k <= 6; ++k) {
      INFO("spheres ", k);
      CHECK(code_of(hexane, 0, k) == expected[k - 1]);
    }
  }

  TEST_CASE("a 5,000-atom chain is handled without deep recursion") {
    const Molecule chain = nmrpred::read_molecule(std::string(5000, 'C'), nmrpred::Format::Smiles);
    // One class per atom is a valid partition (no sharing of work) and keeps
    // this case fast under sanitizers, where compute_classes on 15,000 atoms
    // takes most of a minute.
    nmrpred::AtomClasses classes;
    for (std::uint32_t a = 0; a < chain.atom_count(); ++a) classes.topological.push_back(a);
    const auto codes = nmrpred::hose_codes(chain, classes, 6);
    REQUIRE(codes.size() == chain.atom_count());
    CHECK(codes[0] == "C-4;C(C/C/C/C/C)");                   // [RULES]
    CHECK(codes[2500] == "C-4;CC(C,C/C,C/C,C/C,C/C,C)");     // [RULES]
    const std::size_t h = chain.heavy_atom_count() + 3 + 2 * 2499;  // 3 hydrogens on C0, then 2 per carbon
    REQUIRE(chain.attached_to(h) == 2500);
    CHECK(codes[h] == "H-1;C(CC/C,C/C,C/C,C/C,C)");          // [RULES]
  }

  TEST_CASE("the parts of a code can be split and joined again") {
    const std::vector<std::string> parts = {"C-3", "*C*C", "*C,*C", "*C,*&", ""};
    CHECK(nmrpred::join_hose_spheres(parts, 4) == "C-3;*C*C(*C,*C/*C,*&/)");
    CHECK(nmrpred::join_hose_spheres(parts, 1) == "C-3;*C*C");
    CHECK(nmrpred::join_hose_spheres(parts, 2) == "C-3;*C*C(*C,*C)");
    CHECK(nmrpred::split_hose_code("C-3;*C*C(*C,*C/*C,*&/)") == parts);
    CHECK(nmrpred::split_hose_code("N+-4;") == std::vector<std::string>{"N+-4", ""});
    CHECK(nmrpred::split_hose_code("C-4;CO(,)") == std::vector<std::string>{"C-4", "CO", ","});
  }

  TEST_CASE("bad arguments are rejected with a message") {
    const Molecule m = nmrpred::read_molecule("CCO", nmrpred::Format::Smiles);
    const auto classes = nmrpred::compute_classes(m);
    CHECK_THROWS_AS(nmrpred::hose_code(m, classes, 0, 0), nmrpred::ArgumentError);
    CHECK_THROWS_AS(nmrpred::hose_code(m, classes, 0, 7), nmrpred::ArgumentError);
    CHECK_THROWS_AS(nmrpred::hose_code(m, classes, 0, -1), nmrpred::ArgumentError);
    CHECK_THROWS_AS(nmrpred::hose_code(m, classes, m.atom_count(), 4), nmrpred::ArgumentError);
    CHECK_THROWS_AS(nmrpred::hose_spheres(m, classes, 99, 4), nmrpred::ArgumentError);
    CHECK_THROWS_AS(nmrpred::hose_codes(m, classes, 9), nmrpred::ArgumentError);
    const auto other = nmrpred::compute_classes(nmrpred::read_molecule("C", nmrpred::Format::Smiles));
    CHECK_THROWS_AS(nmrpred::hose_code(m, other, 0, 4), nmrpred::ArgumentError);
    CHECK_THROWS_AS(nmrpred::hose_codes(m, other, 4), nmrpred::ArgumentError);
    CHECK_THROWS_WITH(nmrpred::hose_code(m, classes, 0, 7), doctest::Contains("spheres"));
    CHECK_THROWS_WITH(nmrpred::hose_code(m, classes, 42, 4), doctest::Contains("42"));
    CHECK(nmrpred::hose_codes(Molecule(), nmrpred::AtomClasses(), 4).empty());

    CHECK_THROWS_AS(nmrpred::join_hose_spheres({"C-4", "C"}, 2), nmrpred::ArgumentError);
    CHECK_THROWS_AS(nmrpred::join_hose_spheres({"C-4", "C"}, 0), nmrpred::ArgumentError);
    for (const char *bad : {"", "C-4", ";C", "C-4;C(C", "C-4;C(C/C)x", "C-4;C)", "C-4;C(C(C))",
                            "C-4;C(C/C/C/C/C/C)"}) {
      INFO("split \"", bad, "\"");
      CHECK_THROWS_AS(nmrpred::split_hose_code(bad), nmrpred::InputError);
    }
  }
}

TEST_SUITE("hose") {
  TEST_CASE("hose_spheres_all gives every atom the parts hose_spheres gives it") {
    // Consistency of the batch call with the single-atom call (library contract).
    for (const char *smiles : {"CC(C)Cc1ccc(cc1)C(C)C(=O)O", "C[C@@H](O)CC", "c1ccc2ccccc2c1", "[Na+].[O-]C(=O)C"}) {
      INFO(smiles);
      const auto m = nmrpred::read_molecule(smiles, nmrpred::Format::Smiles);
      const auto classes = nmrpred::compute_classes(m);
      for (int k = 1; k <= nmrpred::kMaxHoseSpheres; ++k) {
        const auto all = nmrpred::hose_spheres_all(m, classes, k);
        REQUIRE(all.size() == m.atom_count());
        for (std::size_t a = 0; a < m.atom_count(); ++a) CHECK(all[a] == nmrpred::hose_spheres(m, classes, a, k));
      }
    }
  }
}
