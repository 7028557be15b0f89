// The SMARTS matcher of the rule tables (libnmrpred/src/graph/smarts.hpp).
//
// Sources of the expected values:
//  [RDKIT]  Checked with RDKit 2022.09.3 (Debian python3-rdkit) while writing
//           these tests: for each row, the set of atoms a on which
//           mol.GetSubstructMatches(Chem.MolFromSmarts(pattern),
//           uniquify=False) has a match with match[0] == a and no atom of the
//           excluded set; ring counts from mol.GetRingInfo().NumAtomRings(i)
//           and MinAtomRingSize(i). Atom indices are those of the SMILES
//           (heavy atoms in input order, the same in RDKit and in our graph).
//  [DAYLIGHT] The Daylight SMARTS theory manual: syntax we do not support must
//           be refused, not misread (common practice for a subset parser).

#include <doctest/doctest.h>

#include <nmrpred/error.hpp>
#include <nmrpred/io.hpp>
#include <nmrpred/tables.hpp>

#include <cstdint>
#include <initializer_list>
#include <set>
#include <sstream>
#include <string>
#include <vector>

// Private header of the library (graph/), reached relative to this file.
#include "../libnmrpred/src/graph/smarts.hpp"
#include "nci.hpp"

namespace {

using nmrpred::detail::SmartsPattern;
using nmrpred::detail::SmartsTarget;

struct AnchorRow {
  const char *pattern;
  const char *smiles;
  std::vector<std::uint32_t> excluded;
  std::vector<std::uint32_t> anchors;  // atoms where pattern atom 0 can sit
};

// The built-in increment tables whose rows carry SMARTS.
const char *const kIncrementTables[] = {
    "increments/c13_alkane.tsv",   "increments/c13_sp3_substituent.tsv", "increments/c13_alkene.tsv",
    "increments/c13_alkyne.tsv",   "increments/c13_benzene.tsv",         "increments/c13_heteroaromatic.tsv",
    "increments/c13_carbonyl.tsv", "increments/h1_shoolery.tsv",         "increments/h1_alkene.tsv",
    "increments/h1_benzene.tsv",   "increments/h1_heteroaromatic.tsv",   "increments/h1_special.tsv"};

// [RDKIT]
const std::vector<AnchorRow> kAnchorRows = {
    {"[CH3]", "Cc1ccccc1", {}, {0}},
    {"c", "Cc1ccccc1", {}, {1, 2, 3, 4, 5, 6}},
    {"[cH]", "Cc1ccccc1", {}, {2, 3, 4, 5, 6}},
    {"[c;H0]", "Cc1ccccc1", {}, {1}},
    {"[OX2H1]", "Oc1ccccc1", {}, {0}},
    {"[OX2][CX4]", "COc1ccccc1", {}, {1}},
    {"[OX2][CX4]", "COc1ccccc1", {0}, {}},
    {"[OX2]c", "COc1ccccc1", {}, {1}},
    {"[OX2]c", "COc1ccccc1", {2, 3, 4, 5, 6, 7}, {}},
    {"[OX2H0;!$(O[!#6]);!$(O[#6]=[O,S,N])]", "CCOC(C)=O", {}, {}},
    {"[OX2H0;!$(O[!#6]);!$(O[#6]=[O,S,N])]", "CCOCC", {}, {2}},
    {"[CX3](=O)[OX2H0][#6;!$([#6]=O)]", "CCOC(C)=O", {}, {3}},
    {"[CX3](=O)[OX2H0][#6;!$([#6]=O)]", "CCOC(C)=O", {1}, {}},
    {"[CX3](=O)[#6]", "CC(C)=O", {}, {1}},
    {"[CX3](=O)[#6]", "CC(C)=O", {0}, {1}},
    {"[CX3](=O)[#6]", "CC=O", {0}, {}},
    {"[CX3;$([CX3](=O)([#6])[#6])]=O", "CCC(C)=O", {}, {2}},
    {"[$([NX3+](=O)[O-]),$([NX3](=O)=O)]", "O=[N+]([O-])c1ccccc1", {}, {1}},
    {"[NX3H2+0]", "Nc1ccccc1", {}, {0}},
    {"[NX4H3+]", "[NH3+]CC(=O)[O-]", {}, {0}},
    {"[CX3](=O)[OX1-]", "[NH3+]CC(=O)[O-]", {}, {2}},
    {"[O-]", "[NH3+]CC(=O)[O-]", {}, {4}},
    {"[+]", "[NH3+]CC(=O)[O-]", {}, {0}},
    {"[CX4](F)(F)F", "FC(F)(F)c1ccccc1", {}, {1}},
    {"[CX2]#[NX1]", "CC#N", {}, {1}},
    {"[CX3H1](=O)[NX3]", "CN(C)C=O", {}, {3}},
    {"[Si]([CH3])([CH3])[CH3]", "C[Si](C)(C)C", {}, {1}},
    {"[SX4](=O)(=O)[CX4]", "CS(C)(=O)=O", {}, {1}},
    {"[SX2H1]", "CCS", {}, {2}},
    {"c1ccccc1", "c1ccc(-c2ccccc2)cc1", {}, {0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11}},
    {"c1ccccc1", "c1ccc(-c2ccccc2)cc1", {0, 1, 2, 3, 4, 5}, {}},
    {"n1ccccc1", "Cc1ccccn1", {}, {6}},
    {"[nH]1cccc1", "c1ccc2[nH]ccc2c1", {}, {4}},
    {"[cH;R1]1[n;R1][c;R1][c;R1][c;R1][c;R1]1", "c1ccncc1", {}, {2, 4}},
    {"[cH;R1]1[n;R1][c;R1][c;R1][c;R1][c;R1]1", "c1ccc2ncccc2c1", {}, {}},
    {"[R2]", "c1ccc2ccccc2c1", {}, {3, 8}},
    {"[R2]", "C1CC2CCC1C2", {}, {2, 5, 6}},
    {"[R2]", "C1C2CC3CC1CC(C2)C3", {}, {0, 2, 4, 6, 8, 9}},
    {"[R3]", "C1C2CC3CC1CC(C2)C3", {}, {1, 3, 5, 7}},
    {"[r5]", "C1CCC2(C1)CCCC2", {}, {0, 1, 2, 3, 4, 5, 6, 7, 8}},
    {"[r6]", "C1CCC2(CC1)CCCC2", {}, {0, 1, 2, 4, 5}},
    {"[R]", "CC1CC1", {}, {1, 2, 3}},
    {"[R0;#6]", "CC1CC1", {}, {0}},
    {"C@C", "CCC1CCCC1", {}, {2, 3, 4, 5, 6}},
    {"[#6]~[#6]~[#6]", "CC(C)=O", {}, {0, 2}},
    {"[D3]", "CC(C)C(=O)O", {}, {1, 3}},
    {"[X3]", "CC(C)C(=O)O", {}, {3}},
    {"[C;D2;H2]", "CCCC(=O)O", {}, {1, 2}},
    {"[!#6;!#1]", "OCC(=O)N", {}, {0, 3, 4}},
    {"[C,c;H1]", "C(=O)c1ccccc1", {}, {0, 3, 4, 5, 6, 7}},
    {"[CX3]=[CX3]", "C=CC=C", {}, {0, 1, 2, 3}},
    {"C=C-C=C", "C=CC=C", {}, {0, 3}},
    {"C=CC=O", "C=CC=O", {}, {0}},
    {"c:c", "c1ccccc1C", {}, {0, 1, 2, 3, 4, 5}},
    {"c-[CH3]", "c1ccccc1C", {}, {5}},
    {"c-c", "c1ccccc1C", {}, {}},
    {"[OX2H1]c:c[CX3]=O", "Oc1ccccc1C=O", {}, {0}},
    {"[nH;$([nH]:[#7]),$([nH]:c:[#7])]", "c1c[nH]cn1", {}, {2}},
    {"[nH;$([nH]:[#7]),$([nH]:c:[#7])]", "c1cc[nH]c1", {}, {}},
    {"[NX3;H1,H2;+0][SX4](=O)=O", "NS(=O)(=O)c1ccccc1", {}, {0}},
    {"[Cl,Br,I]", "ClCCBr", {}, {0, 3}},
    {"*1**1", "CC1CO1", {}, {1, 2, 3}},
    {"[CX4;!$(C(F)(F)F)]", "CC(F)(F)F", {}, {0}},
};

std::vector<bool> flags(const nmrpred::Molecule &m, const std::vector<std::uint32_t> &atoms) {
  std::vector<bool> out(m.atom_count(), false);
  for (auto a : atoms) out.at(a) = true;
  return out;
}

// The texts in the given columns of a built-in increment table, "-" left out.
std::vector<std::string> table_column(const nmrpred::Tables &tables, const char *file,
                                      std::initializer_list<const char *> names) {
  std::vector<std::string> out;
  std::istringstream in{std::string(tables.file_text(file))};
  std::string line;
  std::vector<std::size_t> cols;
  bool header = false;
  while (std::getline(in, line)) {
    if (line.empty() || line[0] == '#') continue;
    std::vector<std::string> fields;
    std::istringstream fs(line);
    for (std::string f; std::getline(fs, f, '\t');) fields.push_back(f);
    if (!header) {
      for (std::size_t i = 0; i < fields.size(); ++i)
        for (const char *name : names)
          if (fields[i] == name) cols.push_back(i);
      header = true;
      continue;
    }
    for (auto c : cols)
      if (c < fields.size() && fields[c] != "-") out.push_back(fields[c]);
  }
  return out;
}

// Every mapping for_each_match() visits with nothing fixed (search_order()'s
// depth-first order), as a set.
std::set<std::vector<std::uint32_t>> visited_mappings(const SmartsPattern &p, const SmartsTarget &t) {
  std::set<std::vector<std::uint32_t>> out;
  nmrpred::detail::for_each_match(p, t, {}, {}, [&](const std::vector<std::uint32_t> &map) {
    out.insert(map);
    return false;
  });
  return out;
}

}  // namespace

TEST_SUITE("smarts") {
  TEST_CASE("anchored matches agree with RDKit, with and without excluded atoms") {
    for (const auto &row : kAnchorRows) {
      INFO(row.pattern, " on ", row.smiles, " [RDKIT]");
      const SmartsPattern p(row.pattern);
      const auto m = nmrpred::read_molecule(row.smiles, nmrpred::Format::Smiles);
      const SmartsTarget t(m);
      const auto excluded = flags(m, row.excluded);
      std::vector<std::uint32_t> got;
      for (std::size_t a = 0; a < m.atom_count(); ++a) {
        const auto n = nmrpred::detail::match_at(p, t, a, excluded);
        if (n) {
          got.push_back(static_cast<std::uint32_t>(a));
          CHECK(n == p.atom_count());
        }
      }
      CHECK(got == row.anchors);
    }
  }

  TEST_CASE("every mapping is found in either search order, mirror images included") {
    struct Row {
      const char *pattern, *smiles;
      std::size_t mappings;
    };
    // [RDKIT] len(GetSubstructMatches(..., uniquify=False)). for_each_match()
    // visits them depth first; all_matches() searches in another order
    // (closing cycles early), which the fused ring patterns exercise.
    const Row rows[] = {{"c1ccccc1", "c1ccccc1", 12},
                        {"CC", "CC(C)C", 6},
                        {"C(=O)O", "CC(=O)O", 1},
                        {"n1ccccc1", "Cc1cccc(C)n1", 2},
                        {"c1cccc2ccccc12", "c1ccc2ccccc2c1", 4},
                        {"c1cccc2ccccc12", "c1ccc2cc3ccccc3cc2c1", 8},
                        {"c1cccc2ccccc12", "c1ccc2c(c1)ccc1ccccc12", 8},
                        {"c1cccc2ccccc12", "O=C1c2ccccc2C(=O)c2ccccc12", 0},
                        {"c1ccc2ncccc2c1", "c1ccc2ncccc2c1", 1},
                        {"n1ccccc1", "c1ccc(-c2ccccn2)nc1", 4},
                        {"c1ccc2[nH]ccc2c1", "c1ccc2c(c1)[nH]c1ccccc12", 2}};
    for (const auto &row : rows) {
      INFO(row.pattern, " on ", row.smiles, " [RDKIT]");
      const SmartsPattern p(row.pattern);
      const auto m = nmrpred::read_molecule(row.smiles, nmrpred::Format::Smiles);
      const SmartsTarget t(m);
      std::set<std::vector<std::uint32_t>> seen;
      const bool any = nmrpred::detail::for_each_match(p, t, {}, {}, [&](const std::vector<std::uint32_t> &map) {
        seen.insert(map);
        return false;
      });
      CHECK(any == (row.mappings > 0));
      CHECK(seen.size() == row.mappings);
      const auto all = nmrpred::detail::all_matches(p, t);
      CHECK(all.size() == row.mappings);
      CHECK(std::set<std::vector<std::uint32_t>>(all.begin(), all.end()) == seen);
    }
  }

  TEST_CASE("searches in either order agree over the NCI sample") {
    // all_matches() and match_at() search in an order of their own; what
    // they find must not depend on it: the same mappings as for_each_match()
    // visits (each once) for the parent rings of the heteroaromatic table,
    // and an anchored match exactly where a search with the anchor fixed
    // visits one, for every pattern of the increment tables, first_match_at()
    // giving the first mapping that search visits.
    const auto mols = nci::molecules(0, 1500);
    REQUIRE(mols.size() > 1000);
    const auto tables = nmrpred::Tables::builtin();
    std::vector<SmartsPattern> rings, anchored;
    for (const auto &text : table_column(*tables, "increments/c13_heteroaromatic.tsv", {"ring_smarts"}))
      rings.emplace_back(text);
    for (const char *file : kIncrementTables)
      for (const auto &text : table_column(*tables, file, {"smarts"})) anchored.emplace_back(text);
    REQUIRE(rings.size() > 20);
    std::size_t mapped = 0, anchors = 0;
    for (std::size_t i = 0; i < mols.size(); ++i) {
      const SmartsTarget t(mols[i]);
      for (const auto &p : rings) {
        const auto all = nmrpred::detail::all_matches(p, t);
        const std::set<std::vector<std::uint32_t>> found(all.begin(), all.end());
        // Checked one by one only where they differ: the loops make
        // millions of comparisons.
        if (found.size() != all.size() || found != visited_mappings(p, t)) {
          INFO("NCI record ", i, ", ", p.text());
          CHECK(found.size() == all.size());
          CHECK(found == visited_mappings(p, t));
        }
        mapped += all.size();
      }
      if (i % 5 != 0) continue;  // the anchored searches on every fifth molecule
      for (const auto &p : anchored)
        for (std::size_t a = 0; a < mols[i].heavy_atom_count(); ++a) {
          std::vector<std::int64_t> fixed(p.atom_count(), -1);
          fixed[0] = static_cast<std::int64_t>(a);
          std::vector<std::uint32_t> first_visited, first;
          const bool visited = nmrpred::detail::for_each_match(p, t, fixed, {}, [&](const auto &map) {
            first_visited = map;
            return true;
          });
          const bool found = nmrpred::detail::first_match_at(p, t, a, {}, first);
          if ((nmrpred::detail::match_at(p, t, a) > 0) != visited || found != visited || first != first_visited) {
            INFO("NCI record ", i, ", atom ", a, ", ", p.text());
            CHECK((nmrpred::detail::match_at(p, t, a) > 0) == visited);
            CHECK(found == visited);
            CHECK(first == first_visited);
          }
          anchors += visited;
        }
    }
    CHECK(mapped > 100);
    CHECK(anchors > 1000);
  }

  TEST_CASE("a fixed atom restricts the mappings to those that use it") {
    // [RDKIT] of the 12 mappings of benzene onto benzene, 2 put pattern atom 3 on atom 0.
    const SmartsPattern p("c1ccccc1");
    const auto m = nmrpred::read_molecule("c1ccccc1", nmrpred::Format::Smiles);
    const SmartsTarget t(m);
    std::vector<std::int64_t> fixed(6, -1);
    fixed[3] = 0;
    int count = 0;
    nmrpred::detail::for_each_match(p, t, fixed, {}, [&](const std::vector<std::uint32_t> &map) {
      CHECK(map[3] == 0);
      ++count;
      return false;
    });
    CHECK(count == 2);
  }

  TEST_CASE("ring membership counts and smallest ring sizes agree with RDKit") {
    struct Row {
      const char *smiles;
      std::vector<int> rings, smallest;
    };
    // [RDKIT] NumAtomRings / MinAtomRingSize (RDKit's symmetrized SSSR).
    const std::vector<Row> rows = {
        {"c1ccc2ccccc2c1", {1, 1, 1, 2, 1, 1, 1, 1, 2, 1}, {6, 6, 6, 6, 6, 6, 6, 6, 6, 6}},
        {"C1CC2CCC1C2", {1, 1, 2, 1, 1, 2, 2}, {5, 5, 5, 5, 5, 5, 5}},
        {"C1C2CC3CC1CC(C2)C3", {2, 3, 2, 3, 2, 3, 2, 3, 2, 2}, {6, 6, 6, 6, 6, 6, 6, 6, 6, 6}},
        {"C1CCC2(C1)CCCC2", {1, 1, 1, 2, 1, 1, 1, 1, 1}, {5, 5, 5, 5, 5, 5, 5, 5, 5}},
        {"CC1(C)C2CCC1(C)C(=O)C2", {0, 2, 0, 2, 1, 1, 2, 0, 1, 0, 1}, {0, 5, 0, 5, 5, 5, 5, 0, 5, 0, 5}},
        {"c1ccc2c(c1)Cc1ccccc1-2", {1, 1, 1, 2, 2, 1, 1, 2, 1, 1, 1, 1, 2}, {6, 6, 6, 5, 5, 6, 5, 5, 6, 6, 6, 6, 5}},
    };
    for (const auto &row : rows) {
      INFO(row.smiles, " [RDKIT]");
      const auto m = nmrpred::read_molecule(row.smiles, nmrpred::Format::Smiles);
      const SmartsTarget t(m);
      for (std::size_t a = 0; a < row.rings.size(); ++a) {
        INFO("atom ", a);
        CHECK(t.ring_count(a) == row.rings[a]);
        CHECK(t.smallest_ring(a) == row.smallest[a]);
      }
    }
  }

  TEST_CASE("unsupported or malformed SMARTS is refused with a TablesError naming the pattern") {
    // [DAYLIGHT] chirality, disconnected parts, reactions, implicit-H and
    // valence primitives, and hydrogen atoms are outside the subset.
    const char *bad[] = {"[C@H](F)Cl", "C.C", "C>>C", "[h1]", "[v4]", "[x2]", "[#1]", "[H]", "[2H]",
                         "C(C", "C)C", "C1CC", "[C", "[$(C]", "", "=C", "C=", "[Q]", "[#200]", "C%1"};
    for (const char *text : bad) {
      INFO("pattern '", text, "' [DAYLIGHT]");
      try {
        SmartsPattern p(text);
        FAIL("accepted");
      } catch (const nmrpred::TablesError &e) {
        CHECK(std::string(e.what()).find(std::string("'") + text + "'") != std::string::npos);
      }
    }
  }

  TEST_CASE("every SMARTS of the built-in increment tables compiles") {
    // tables/FORMAT.md: the smarts and ring_smarts columns hold RDKit SMARTS;
    // the matcher must take all of them (the tables are the reason it exists).
    const auto tables = nmrpred::Tables::builtin();
    std::size_t compiled = 0;
    for (const char *file : kIncrementTables)
      for (const auto &text : table_column(*tables, file, {"smarts", "ring_smarts"})) {
        INFO(file, ": ", text);
        CHECK_NOTHROW(SmartsPattern{text});
        ++compiled;
      }
    CHECK(compiled > 100);
  }

  TEST_CASE("atom maps are accepted and do not constrain the match") {
    // [RDKIT] "[CH3:1][OH:2]" matches methanol's carbon, as "[CH3][OH]" does.
    const SmartsPattern p("[CH3:1][OH:2]");
    const auto m = nmrpred::read_molecule("CO", nmrpred::Format::Smiles);
    const SmartsTarget t(m);
    CHECK(nmrpred::detail::match_at(p, t, 0) == 2);
    CHECK(nmrpred::detail::match_at(p, t, 1) == 0);
  }
}
