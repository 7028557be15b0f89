// Structure input: formats, atom order, hydrogens, charges, stereo, bad input.
//
// Sources named in the rows:
//  [CTFILE]   MDL/BIOVIA "CTfile Formats" specification: header block of 3 lines,
//             counts line on line 4 (V2000/V3000 stamp), atom symbol in columns
//             32-34, "M  CHG"/"M  RAD"/"M  ISO" properties, "M  END" closing every
//             connection table, "$$$$" closing every SD record (from memory).
//  [OSMILES]  OpenSMILES specification (opensmiles.org): bracket atoms carry
//             exactly the hydrogens written, @/@@ are mirror images, / and \ mark
//             double-bond geometry, '.' separates fragments (from memory).
//  [INCHI]    IUPAC InChI technical manual: identifiers start with "InChI=",
//             /b layer '+' = trans (E), '-' = cis (Z) (from memory).
//  [RDKIT]    RDKit 2022.09 (Debian python3-rdkit): the test files were written by
//             it (their comment line says from which SMILES) and the NCI counts in
//             nci_hydrogen_counts.tsv were computed by it.
//  [NCI]      NCI subset first_5K.smi from Debian rdkit-data.
//  "common practice" marks textbook facts with no single source.

#include <doctest/doctest.h>

#include <nmrpred/io.hpp>

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <fstream>
#include <iostream>
#include <optional>
#include <sstream>
#include <string>
#include <thread>
#include <vector>

#if defined(__unix__) || defined(__APPLE__)
#include <sys/stat.h>
#include <unistd.h>
#define NMRPRED_TEST_HAVE_DUP2 1
#endif

namespace {

using nmrpred::Format;
using nmrpred::Molecule;
using nmrpred::ReadRecord;
using nmrpred::Status;

std::string read_data_file(const std::string &name) {
  std::ifstream f(std::string(NMRPRED_TEST_DATA_DIR) + "/" + name, std::ios::binary);
  REQUIRE_MESSAGE(f.good(), "missing test file " << name);
  std::ostringstream ss;
  ss << f.rdbuf();
  return ss.str();
}

bool contains(const std::string &haystack, const std::string &needle) {
  return haystack.find(needle) != std::string::npos;
}

std::size_t heavy_neighbours(const Molecule &m, std::size_t i) {
  std::size_t k = 0;
  for (auto p = m.neighbours_begin(i); p != m.neighbours_end(i); ++p)
    if (!m.is_hydrogen(*p)) ++k;
  return k;
}

// A label that tells the four ligands of the test stereocentres apart:
// element and number of heavy neighbours (lone pair = 0).
int ligand_label(const Molecule &m, std::int32_t ligand) {
  if (ligand == nmrpred::kLonePair) return 0;
  const auto l = static_cast<std::size_t>(ligand);
  return 100 * m.atom(l).atomic_number + static_cast<int>(heavy_neighbours(m, l));
}

// Parity of the ligand labels in stored order. Two descriptions of the same
// centre (with distinct labels) have the same handedness iff parities match,
// because an even permutation of (from; clockwise triple) keeps the chirality.
int handedness(const Molecule &m, const nmrpred::TetrahedralStereo &t) {
  std::array<int, 4> lab{};
  for (int k = 0; k < 4; ++k) lab[k] = ligand_label(m, t.ligands[k]);
  int inversions = 0;
  for (int i = 0; i < 4; ++i)
    for (int j = i + 1; j < 4; ++j) {
      REQUIRE(lab[i] != lab[j]);
      if (lab[i] > lab[j]) ++inversions;
    }
  return inversions % 2;
}

// The one specified stereocentre of the molecule.
const nmrpred::TetrahedralStereo &only_centre(const Molecule &m) {
  REQUIRE(m.tetrahedral_stereo().size() == 1);
  return m.tetrahedral_stereo().front();
}

// Geometric meaning of TetrahedralStereo: looking from ligands[0] at the centre,
// ligands[1..3] run clockwise. Triangle 1-2-3 with normal n = (p2-p1) x (p3-p1)
// appears counter-clockwise from the side n points to, so the viewer at p0 sees
// it clockwise iff n . (p0 - p1) < 0 (common practice, vector algebra).
bool clockwise_from_first(const Molecule &m, const nmrpred::TetrahedralStereo &t) {
  const auto &c = m.coordinates();
  auto p = [&](int k) {
    const auto i = static_cast<std::size_t>(t.ligands[k]);
    return std::array<double, 3>{c[3 * i], c[3 * i + 1], c[3 * i + 2]};
  };
  const auto p0 = p(0), p1 = p(1), p2 = p(2), p3 = p(3);
  const std::array<double, 3> u{p2[0] - p1[0], p2[1] - p1[1], p2[2] - p1[2]};
  const std::array<double, 3> v{p3[0] - p1[0], p3[1] - p1[1], p3[2] - p1[2]};
  const std::array<double, 3> n{u[1] * v[2] - u[2] * v[1], u[2] * v[0] - u[0] * v[2], u[0] * v[1] - u[1] * v[0]};
  return n[0] * (p0[0] - p1[0]) + n[1] * (p0[1] - p1[1]) + n[2] * (p0[2] - p1[2]) < 0.0;
}

// Whether atoms a and b, on opposite ends of a stereo double bond, are cis.
std::optional<bool> cis_relation(const Molecule &m, std::uint32_t a, std::uint32_t b) {
  for (const auto &d : m.double_bond_stereo()) {
    const bool a_begin = m.bond_between(a, d.begin) >= 0 && a != d.end;
    const bool b_end = m.bond_between(b, d.end) >= 0 && b != d.begin;
    const bool a_end = m.bond_between(a, d.end) >= 0 && a != d.begin;
    const bool b_begin = m.bond_between(b, d.begin) >= 0 && b != d.end;
    if (a_begin && b_end) return d.cis != ((d.ref_begin != a) != (d.ref_end != b));
    if (a_end && b_begin) return d.cis != ((d.ref_begin != b) != (d.ref_end != a));
  }
  return std::nullopt;
}

// The same molfile with every coordinate set to zero, so that only the atom
// parity column (CTfile atom block, "sss" field) carries the configuration.
std::string without_coordinates(const std::string &molfile) {
  std::istringstream in(molfile);
  std::ostringstream out;
  std::string line;
  std::size_t n = 0, atoms = 0;
  while (std::getline(in, line)) {
    if (n == 3) atoms = std::stoul(line.substr(0, 3));
    if (n >= 4 && n < 4 + atoms) line = "    0.0000    0.0000    0.0000" + line.substr(30);
    out << line << '\n';
    ++n;
  }
  return out.str();
}

std::vector<std::size_t> hydrogens_per_heavy_atom(const Molecule &m) {
  std::vector<std::size_t> h;
  for (std::size_t i = 0; i < m.heavy_atom_count(); ++i) h.push_back(m.hydrogen_count(i));
  return h;
}

// The 'F' atoms of a molecule, in index order.
std::vector<std::uint32_t> atoms_of(const Molecule &m, unsigned z) {
  std::vector<std::uint32_t> out;
  for (std::size_t i = 0; i < m.atom_count(); ++i)
    if (m.atom(i).atomic_number == z) out.push_back(static_cast<std::uint32_t>(i));
  return out;
}

}  // namespace

TEST_SUITE("io") {
  TEST_CASE("format names parse case-insensitively and unknown names are rejected") {
    struct Row {
      const char *name;
      Format format;
    };
    const Row rows[] = {{"auto", Format::Auto}, {"SMI", Format::Smiles}, {"smiles", Format::Smiles},
                        {"mol", Format::Mol},   {"MDL", Format::Mol},    {"sdf", Format::Sdf},
                        {"sd", Format::Sdf},    {"InChI", Format::Inchi}};
    for (const auto &r : rows) {
      INFO(r.name, " (io.hpp contract)");
      CHECK(nmrpred::parse_format(r.name) == r.format);
    }
    CHECK(std::string(nmrpred::format_name(Format::Smiles)) == "smiles");
    CHECK(nmrpred::parse_format(nmrpred::format_name(Format::Sdf)) == Format::Sdf);
    CHECK_THROWS_AS(nmrpred::parse_format("pdb"), nmrpred::ArgumentError);
  }

  TEST_CASE("the format is recognised from the content") {
    struct Row {
      std::string text;
      Format format;
      const char *source;
    };
    const std::string mol = read_data_file("alanine_2d_wedge.mol");
    const Row rows[] = {
        {"CCO ethanol\nc1ccccc1\n", Format::Smiles, "OSMILES"},
        {"InChI=1S/CH4/h1H4\n", Format::Inchi, "INCHI: identifiers start with InChI="},
        {mol, Format::Sdf, "CTFILE: counts line on line 4"},
        {"\n" + mol, Format::Sdf, "CTFILE, pasted with one leading empty line"},
        {read_data_file("alanine_2d_v3000.mol"), Format::Sdf, "CTFILE: V3000 counts line"},
        {read_data_file("mixed_records.sdf"), Format::Sdf, "CTFILE: SD file"},
        {"", Format::Smiles, "io.hpp contract: nothing recognisable is SMILES"},
    };
    for (const auto &r : rows) {
      INFO(r.text.substr(0, 40), " | ", r.source);
      CHECK(nmrpred::detect_format(r.text) == r.format);
      std::istringstream in(r.text);
      nmrpred::MoleculeReader reader(in);
      CHECK(reader.format() == r.format);
    }
  }

  TEST_CASE("heavy atoms come first in input order, then hydrogens grouped per heavy atom") {
    // O0 C1 [H]2 [2H]3 C4: heavy O, C, C; then O's added H; C1's explicit H and
    // D in input order; then C4's three added H.
    const auto m = nmrpred::read_molecule("OC([H])([2H])C");
    INFO("molecule.hpp atom order; OSMILES: [H] and [2H] are atoms of the graph");
    const std::vector<std::int32_t> want_input{0, 1, 4, -1, 2, 3, -1, -1, -1};
    CHECK(m.input_index() == want_input);
    CHECK(m.heavy_atom_count() == 3);
    CHECK(m.attached_to(3) == 0);
    CHECK(m.attached_to(4) == 1);
    CHECK(m.attached_to(5) == 1);
    for (std::size_t i = 6; i < 9; ++i) CHECK(m.attached_to(i) == 2);
    CHECK(m.atom(5).atomic_number == 1);
    CHECK(m.atom(5).isotope == 2);
    CHECK(m.atom(4).isotope == 0);

    // Hydrogens bonded to no heavy atom come last: H2 and a proton.
    const auto f = nmrpred::read_molecule("[H][H].C.[H+]");
    REQUIRE(f.atom_count() == 8);
    CHECK(f.heavy_atom_count() == 1);
    const std::vector<std::int32_t> want_free{2, -1, -1, -1, -1, 0, 1, 3};
    CHECK(f.input_index() == want_free);
    CHECK(f.atom(7).formal_charge == 1);
    CHECK(f.attached_to(7) == -1);
    CHECK(f.bond_between(5, 6) >= 0);
  }

  TEST_CASE("hydrogen counts follow the valence rules of the input format") {
    struct Row {
      const char *smiles;
      std::vector<std::size_t> h;  // per heavy atom
      const char *source;
    };
    const Row rows[] = {
        {"CCO", {3, 2, 1}, "common practice (ethanol)"},
        {"CC(=O)O", {3, 0, 0, 1}, "common practice (acetic acid)"},
        {"c1ccncc1", {1, 1, 1, 0, 1, 1}, "common practice (pyridine)"},
        {"c1cc[nH]c1", {1, 1, 1, 1, 1}, "common practice (pyrrole)"},
        {"[NH4+]", {4}, "OSMILES: bracket atoms carry the hydrogens written"},
        {"C[N+](C)(C)C", {3, 0, 3, 3, 3}, "common practice (tetramethylammonium)"},
        {"[CH2]", {2}, "OSMILES: bracket atoms carry the hydrogens written"},
        {"C[C@@H](O)F", {3, 1, 1, 0}, "OSMILES"},
        {"CS(=O)(=O)C", {3, 0, 0, 0, 3}, "common practice (dimethyl sulfone)"},
    };
    for (const auto &r : rows) {
      INFO(r.smiles, " | ", r.source);
      const auto m = nmrpred::read_molecule(r.smiles);
      CHECK(hydrogens_per_heavy_atom(m) == r.h);
      CHECK(m.atom_count() - m.heavy_atom_count() ==
            static_cast<std::size_t>(std::count_if(m.input_index().begin(), m.input_index().end(),
                                                   [](std::int32_t k) { return k < 0; })));
    }
  }

  TEST_CASE("hydrogen counts and charges agree with RDKit on a sample of NCI molecules") {
    std::istringstream tsv(read_data_file("nci_hydrogen_counts.tsv"));
    std::string line;
    int rows = 0;
    while (std::getline(tsv, line)) {
      if (line.empty() || line[0] == '#' || line.rfind("smiles\t", 0) == 0) continue;
      std::istringstream fields(line);
      std::string smiles, id;
      std::size_t heavy = 0, hydrogens = 0;
      int charge = 0;
      fields >> smiles >> id >> heavy >> hydrogens >> charge;
      INFO("NCI ", id, " ", smiles, " | RDKIT counts on NCI");
      const auto m = nmrpred::read_molecule(smiles);
      CHECK(m.heavy_atom_count() == heavy);
      CHECK(m.atom_count() - m.heavy_atom_count() == hydrogens);
      int q = 0;
      for (const auto &a : m.atoms()) q += a.formal_charge;
      CHECK(q == charge);
      ++rows;
    }
    CHECK(rows == 25);
  }

  TEST_CASE("isotopes, charges and radicals are read from SMILES and MOL properties") {
    struct Row {
      std::string text;
      std::size_t atom;
      unsigned z, isotope;
      int charge;
      unsigned radicals;
      const char *source;
    };
    // Atom 1 is C with "M  RAD" doublet; atom 2 is N with "M  CHG" +1 and "M  ISO" 15.
    const std::string mol =
        "props\n  hand-written\n\n  3  2  0  0  0  0  0  0  0  0999 V2000\n"
        "    0.0000    0.0000    0.0000 C   0  0  0  0  0  0  0  0  0  0  0  0\n"
        "    1.5000    0.0000    0.0000 C   0  0  0  0  0  0  0  0  0  0  0  0\n"
        "    3.0000    0.0000    0.0000 N   0  0  0  0  0  0  0  0  0  0  0  0\n"
        "  1  2  1  0\n  2  3  1  0\n"
        "M  CHG  1   3   1\nM  RAD  1   2   2\nM  ISO  1   3  15\nM  END\n";
    const Row rows[] = {
        {"[2H]C", 1, 1, 2, 0, 0, "OSMILES: [2H] is deuterium, a hydrogen"},
        {"[3H]O", 1, 1, 3, 0, 0, "OSMILES: [3H] is tritium"},
        {"[13CH4]", 0, 6, 13, 0, 0, "OSMILES: isotope prefix"},
        {"[NH4+]", 0, 7, 0, 1, 0, "common practice (ammonium)"},
        {"CC(=O)[O-]", 3, 8, 0, -1, 0, "common practice (acetate)"},
        {"C[N+](=O)[O-]", 1, 7, 0, 1, 0, "common practice (nitro group)"},
        {"[CH3]", 0, 6, 0, 0, 1, "OSMILES: [CH3] is the methyl radical"},
        {"[CH2]", 0, 6, 0, 0, 2, "OSMILES: [CH2] is methylene"},
        {"C[N]C", 1, 7, 0, 0, 1, "OSMILES: dimethylaminyl radical"},
        {"CC", 0, 6, 0, 0, 0, "common practice: closed shell"},
        {mol, 1, 6, 0, 0, 1, "CTFILE: M  RAD value 2 = doublet"},
        {mol, 2, 7, 15, 1, 0, "CTFILE: M  CHG and M  ISO"},
    };
    for (const auto &r : rows) {
      INFO(r.text.substr(0, 20), " atom ", r.atom, " | ", r.source);
      const auto m = nmrpred::read_molecule(r.text);
      REQUIRE(r.atom < m.atom_count());
      const auto &a = m.atom(r.atom);
      CHECK(a.atomic_number == r.z);
      CHECK(a.isotope == r.isotope);
      CHECK(a.formal_charge == r.charge);
      CHECK(a.radical_electrons == r.radicals);
    }
    // The radical carbon (two heavy neighbours) keeps one hydrogen and the N+ three
    // (CTfile valence model: implicit H fill the valence left after charge and radical).
    const auto m = nmrpred::read_molecule(mol);
    CHECK(m.hydrogen_count(1) == 1);
    CHECK(m.hydrogen_count(2) == 3);
  }

  TEST_CASE("a salt is read as separate fragments") {
    const auto m = nmrpred::read_molecule("[Na+].[O-]C(=O)C sodium acetate");
    INFO("common practice: '.' separates fragments (OSMILES)");
    CHECK(m.fragment_count() == 2);
    CHECK(m.heavy_atom_count() == 5);
    CHECK(m.atom(0).atomic_number == 11);
    CHECK(m.atom(0).formal_charge == 1);
    CHECK(m.atom(1).formal_charge == -1);
    CHECK(m.atom_count() == 8);
    CHECK(m.fragments()[0] != m.fragments()[1]);
    CHECK(m.title() == "sodium acetate");

    const auto salt = nmrpred::read_records("InChI=1S/C2H4O2.Na/c1-2(3)4;/h1H3,(H,3,4);/q;+1/p-1");
    REQUIRE(salt.size() == 1);
    if (salt[0].status != Status::Unsupported) {
      INFO("INCHI: sodium acetate, two components (from memory); ", salt[0].error);
      REQUIRE(salt[0].molecule);
      const auto &a = *salt[0].molecule;  // InChI numbers the atoms its own way: compare invariants
      CHECK(a.fragment_count() == 2);
      CHECK(a.atom_count() == 8);
      int charge = 0, sodium = 0;
      for (const auto &at : a.atoms()) {
        charge += at.formal_charge;
        if (at.atomic_number == 11) sodium += at.formal_charge;
      }
      CHECK(charge == 0);
      CHECK(sodium == 1);
    }
  }

  TEST_CASE("Kekule and aromatic input of the same ring give identical graphs") {
    struct Row {
      std::string kekule, aromatic;
      const char *source;
    };
    const auto sdf = nmrpred::read_records(read_data_file("mixed_records.sdf"));
    REQUIRE(sdf.size() == 5);
    REQUIRE(sdf[2].molecule);  // benzene, written by RDKit with alternating bonds
    const Row rows[] = {
        {"C1=CC=CC=C1", "c1ccccc1", "common practice (benzene, Hueckel 4n+2)"},
        {"C1=CC=NC=C1", "c1ccncc1", "common practice (pyridine)"},
        {"C1=CC=C2C=CC=CC2=C1", "c1ccc2ccccc2c1", "common practice (naphthalene)"},
    };
    for (const auto &r : rows) {
      INFO(r.kekule, " | ", r.source);
      const auto k = nmrpred::read_molecule(r.kekule);
      const auto a = nmrpred::read_molecule(r.aromatic);
      CHECK(k == a);
      for (const auto &b : k.bonds())
        if (!k.is_hydrogen(b.begin) && !k.is_hydrogen(b.end)) CHECK(b.order == nmrpred::BondOrder::Aromatic);
      for (std::size_t i = 0; i < k.heavy_atom_count(); ++i) CHECK(k.atom(i).aromatic);
    }
    INFO("RDKIT wrote benzene with alternating single and double bonds (CTFILE bond types 1 and 2)");
    CHECK(*sdf[2].molecule == nmrpred::read_molecule("c1ccccc1"));
  }

  TEST_CASE("tetrahedral stereo keeps its handedness across atom orders and formats") {
    struct Row {
      std::string text;
      bool same_as_l_alanine;  // same handedness as N[C@@H](C)C(=O)O
      const char *source;
    };
    const auto ref = nmrpred::read_molecule("N[C@@H](C)C(=O)O");
    const int want = handedness(ref, only_centre(ref));
    const Row rows[] = {
        {"C[C@H](N)C(O)=O", true, "RDKIT: same canonical SMILES C[C@H](N)C(=O)O"},
        {"OC(=O)[C@@H](N)C", true, "RDKIT: same canonical SMILES C[C@H](N)C(=O)O"},
        {"[H][C@](N)(C)C(=O)O", true, "RDKIT: same canonical SMILES C[C@H](N)C(=O)O (explicit H)"},
        {"N[C@H](C)C(=O)O", false, "OSMILES: @ and @@ are mirror images"},
        {"C[C@@H](N)C(O)=O", false, "RDKIT: canonical SMILES C[C@@H](N)C(=O)O (D-alanine)"},
        {read_data_file("alanine_2d_wedge.mol"), true, "RDKIT wrote it from N[C@@H](C)C(=O)O (CTFILE wedge)"},
        {read_data_file("alanine_2d_v3000.mol"), true, "RDKIT wrote it from N[C@@H](C)C(=O)O (CTFILE V3000 CFG)"},
        {read_data_file("alanine_3d.mol"), true, "RDKIT embedded N[C@@H](C)C(=O)O in 3D"},
        {without_coordinates(read_data_file("alanine_3d.mol")), true,
         "CTFILE atom parity 1 that RDKIT wrote for the 3D file, coordinates removed"},
    };
    for (const auto &r : rows) {
      INFO(r.text.substr(0, 30), " | ", r.source);
      const auto m = nmrpred::read_molecule(r.text);
      CHECK((handedness(m, only_centre(m)) == want) == r.same_as_l_alanine);
    }
  }

  TEST_CASE("tetrahedral stereo from SMILES and InChI is the stored convention, also checked against 3D geometry") {
    // Meaning of the stored ligand order: the 3D file's coordinates say which
    // way ligands[1..3] turn seen from ligands[0].
    const auto m3 = nmrpred::read_molecule(read_data_file("alanine_3d.mol"));
    INFO("RDKIT 3D coordinates; molecule.hpp: seen from ligands[0], ligands[1..3] run clockwise");
    REQUIRE(m3.has_3d_coordinates());
    REQUIRE(m3.coordinates().size() == 3 * m3.atom_count());
    CHECK(clockwise_from_first(m3, only_centre(m3)));

    // L-alanine InChI (from memory: PubChem CID 5950).
    const auto inchi = nmrpred::read_records("InChI=1S/C3H7NO2/c1-2(4)3(5)6/h2H,4H2,1H3,(H,5,6)/t2-/m0/s1\n");
    REQUIRE(inchi.size() == 1);
    if (inchi[0].status == Status::Unsupported) {
      INFO(inchi[0].error);
      CHECK(contains(inchi[0].error, "InChI"));
    } else {
      INFO("INCHI /t2-/m0 L-alanine (from memory) vs N[C@@H](C)C(=O)O; ", inchi[0].error);
      REQUIRE(inchi[0].molecule);
      const auto ref = nmrpred::read_molecule("N[C@@H](C)C(=O)O");
      CHECK(handedness(*inchi[0].molecule, only_centre(*inchi[0].molecule)) == handedness(ref, only_centre(ref)));
    }
  }

  TEST_CASE("a sulfoxide stereocentre uses a lone pair as fourth ligand") {
    const auto a = nmrpred::read_molecule("C[S@](=O)CC");
    const auto b = nmrpred::read_molecule("CC[S@](C)=O");
    const auto c = nmrpred::read_molecule("CC[S@@](C)=O");
    INFO("RDKIT: C[S@](=O)CC and CC[S@](C)=O have the same canonical SMILES; OSMILES: implicit lone pair");
    const auto &t = only_centre(a);
    CHECK(std::count(t.ligands.begin(), t.ligands.end(), nmrpred::kLonePair) == 1);
    CHECK(handedness(a, t) == handedness(b, only_centre(b)));
    CHECK(handedness(a, t) != handedness(c, only_centre(c)));
  }

  TEST_CASE("only specified stereo is stored") {
    INFO("OSMILES: without @ or / \\ the configuration is not given");
    CHECK(nmrpred::read_molecule("NC(C)C(=O)O").tetrahedral_stereo().empty());
    CHECK(nmrpred::read_molecule("CC=CC").double_bond_stereo().empty());
    CHECK(nmrpred::read_molecule("C[C@H](N)C(=O)O").double_bond_stereo().empty());
    // CTFILE (from memory): a wavy bond (V2000 bond stereo 4, V3000 CFG=2 on a
    // single bond) marks a centre whose configuration is not known. Written by
    // RDKit from N[C@@H](C)C(=O)O with its wedge made wavy.
    const std::string wedge = read_data_file("alanine_2d_wedge.mol");
    REQUIRE(nmrpred::read_molecule(wedge).tetrahedral_stereo().size() == 1);
    std::string wavy = wedge;
    const auto bond = wavy.find("  2  3  1  6");
    REQUIRE(bond != std::string::npos);
    wavy.replace(bond, 12, "  2  3  1  4");
    CHECK(nmrpred::read_molecule(wavy).tetrahedral_stereo().empty());
    std::string v3 = read_data_file("alanine_2d_v3000.mol");
    v3.replace(v3.find("CFG=3"), 5, "CFG=2");
    CHECK(nmrpred::read_molecule(v3).tetrahedral_stereo().empty());
  }

  TEST_CASE("cis and trans double bonds are read from SMILES, MOL files and InChI") {
    struct Row {
      std::string text;
      unsigned z;  // the two substituents compared are the atoms of this element
      bool cis;
      const char *source;
    };
    const Row rows[] = {
        {"F/C=C/F", 9, false, "OSMILES: same bond symbols on both sides = trans"},
        {"F/C=C\\F", 9, true, "OSMILES: different symbols = cis"},
        {"F\\C=C/F", 9, true, "RDKIT canonical F/C=C\\F (Z)"},
        {"F\\C=C\\F", 9, false, "RDKIT canonical F/C=C/F (E)"},
        {"C(/F)=C/F", 9, true, "RDKIT canonical F/C=C\\F (Z)"},
        {"C(\\F)=C/F", 9, false, "RDKIT canonical F/C=C/F (E)"},
        {read_data_file("difluoroethene_cis.mol"), 9, true, "RDKIT wrote it from F/C=C\\F (CTFILE 2D geometry)"},
        {read_data_file("difluoroethene_trans.mol"), 9, false, "RDKIT wrote it from F/C=C/F (CTFILE 2D geometry)"},
    };
    for (const auto &r : rows) {
      INFO(r.text.substr(0, 30), " | ", r.source);
      const auto m = nmrpred::read_molecule(r.text);
      const auto f = atoms_of(m, r.z);
      REQUIRE(f.size() == 2);
      REQUIRE(m.double_bond_stereo().size() == 1);
      const auto rel = cis_relation(m, f[0], f[1]);
      REQUIRE(rel.has_value());
      CHECK(*rel == r.cis);
      // The hydrogens added to the double-bond carbons are consistent with it.
      const auto &d = m.double_bond_stereo().front();
      const auto h_begin = m.neighbours_end(d.begin)[-1];  // highest neighbour = the added H
      const auto h_end = m.neighbours_end(d.end)[-1];
      REQUIRE(m.is_hydrogen(h_begin));
      REQUIRE(m.is_hydrogen(h_end));
      CHECK(cis_relation(m, h_begin, h_end) == r.cis);
      const auto f_begin = m.bond_between(f[0], d.begin) >= 0 ? f[0] : f[1];
      CHECK(cis_relation(m, f_begin, h_end) == !r.cis);
    }

    // Crotonic acid written from both ends: the methyl and carboxyl carbons are trans.
    for (const char *smiles : {"C/C=C/C(=O)O", "OC(=O)/C=C/C"}) {
      INFO(smiles, " | RDKIT: both canonicalise to C/C=C/C(=O)O (E)");
      const auto m = nmrpred::read_molecule(smiles);
      std::uint32_t methyl = 0, carboxyl = 0;
      for (std::uint32_t i = 0; i < m.heavy_atom_count(); ++i) {
        if (m.atom(i).atomic_number != 6) continue;
        if (m.hydrogen_count(i) == 3) methyl = i;
        if (heavy_neighbours(m, i) == 3) carboxyl = i;
      }
      CHECK(cis_relation(m, methyl, carboxyl) == false);
    }

    const auto inchi = nmrpred::read_records("InChI=1S/C2H2F2/c3-1-2-4/h1-2H/b2-1+");
    REQUIRE(inchi.size() == 1);
    if (inchi[0].status != Status::Unsupported) {
      INFO("INCHI: /b2-1+ is trans; ", inchi[0].error);
      REQUIRE(inchi[0].molecule);
      const auto f = atoms_of(*inchi[0].molecule, 9);
      REQUIRE(f.size() == 2);
      CHECK(cis_relation(*inchi[0].molecule, f[0], f[1]) == false);
    }
  }

  TEST_CASE("a V3000 block reads the same with its lines continued, and CFG=2 leaves a double bond open") {
    // CTFILE (from memory): a V3000 line ending in '-' goes on in the next
    // "M  V30" line; CFG=2 on a double bond means cis or trans, not known
    // (V2000: bond stereo 3), whatever the coordinates show.
    const std::string v3 = read_data_file("alanine_2d_v3000.mol");
    std::string continued = v3;
    continued.replace(continued.find("M  V30 2 1 2 3 CFG=3"), 20, "M  V30 2 1 2 3 -\nM  V30 CFG=3");
    const auto a = nmrpred::read_molecule(v3), b = nmrpred::read_molecule(continued);
    REQUIRE(a.atom_count() == b.atom_count());
    REQUIRE(a.tetrahedral_stereo().size() == 1);
    CHECK(a.tetrahedral_stereo() == b.tetrahedral_stereo());

    // trans-1,2-difluoroethene laid out in 2D (F on opposite sides).
    auto difluoroethene = [](const char *cfg) {
      return std::string("difluoroethene\n  test\n\n  0  0  0     0  0            999 V3000\n"
                         "M  V30 BEGIN CTAB\nM  V30 COUNTS 4 3 0 0 0\nM  V30 BEGIN ATOM\n"
                         "M  V30 1 F -1.299 0.750 0.000 0\nM  V30 2 C -0.750 0.000 0.000 0\n"
                         "M  V30 3 C 0.750 0.000 0.000 0\nM  V30 4 F 1.299 -0.750 0.000 0\n"
                         "M  V30 END ATOM\nM  V30 BEGIN BOND\nM  V30 1 1 1 2\nM  V30 2 2 2 3") +
             cfg + "\nM  V30 3 1 3 4\nM  V30 END BOND\nM  V30 END CTAB\nM  END\n";
    };
    const auto drawn = nmrpred::read_molecule(difluoroethene(""));
    REQUIRE(drawn.double_bond_stereo().size() == 1);
    CHECK(cis_relation(drawn, 0, 3) == false);
    const auto either = nmrpred::read_records(difluoroethene(" CFG=2"));
    REQUIRE(either.size() == 1);
    REQUIRE(either[0].molecule);
    CHECK(either[0].molecule->double_bond_stereo().empty());
  }

  TEST_CASE("double bonds in rings of fewer than eight atoms carry no stereo") {
    INFO("common practice: ring geometry forces cis below 8 ring atoms (InChI and RDKit give no descriptor)");
    // Open Babel perceives the ring C=C bonds of the 2D drawing; the reader drops them.
    CHECK(nmrpred::read_molecule(read_data_file("toluquinone_2d.mol")).double_bond_stereo().empty());
    CHECK(nmrpred::read_molecule("C1CC/C=C/CC1").double_bond_stereo().empty());
    // trans-Cyclooctene is the smallest isolable trans cycloalkene (common practice).
    const auto tco = nmrpred::read_molecule("C1CCC/C=C/CC1");
    REQUIRE(tco.double_bond_stereo().size() == 1);
    const auto &d = tco.double_bond_stereo().front();
    CHECK(d.cis == false);
    CHECK(cis_relation(tco, 3, 6) == false);
  }

  TEST_CASE("an SD file is streamed record by record and bad records are numbered and skipped") {
    INFO("CTFILE: '$$$$' ends each SD record; record 1 has element 'Xx', record 3 stops after two atom lines");
    std::ifstream file(std::string(NMRPRED_TEST_DATA_DIR) + "/mixed_records.sdf");
    REQUIRE(file.good());
    nmrpred::MoleculeReader reader(file);
    CHECK(reader.format() == Format::Sdf);
    std::vector<ReadRecord> recs;
    ReadRecord r;
    while (reader.next(r)) recs.push_back(r);
    REQUIRE(recs.size() == 5);
    const Status want[] = {Status::Ok, Status::Input, Status::Ok, Status::Input, Status::Ok};
    const char *titles[] = {"ethanol", "bad: unknown element", "benzene", "bad: truncated", "acetic acid"};
    for (std::size_t i = 0; i < 5; ++i) {
      INFO("record ", i, ": ", recs[i].error);
      CHECK(recs[i].record == i);
      CHECK(recs[i].status == want[i]);
      CHECK(recs[i].molecule.has_value() == (want[i] == Status::Ok));
      CHECK(recs[i].title == titles[i]);
    }
    CHECK(contains(recs[1].error, "record 1"));
    CHECK(contains(recs[1].error, "Xx"));
    CHECK(contains(recs[3].error, "record 3"));
    CHECK(contains(recs[3].error, "M  END"));
    CHECK(recs[0].molecule->heavy_atom_count() == 3);
    CHECK(recs[4].molecule->heavy_atom_count() == 4);
    CHECK(recs[4].molecule->title() == "acetic acid");

    // The same file with CRLF line ends reads the same.
    std::string crlf;
    for (char c : read_data_file("mixed_records.sdf")) {
      if (c == '\n') crlf += '\r';
      crlf += c;
    }
    const auto again = nmrpred::read_records(crlf);
    REQUIRE(again.size() == 5);
    for (std::size_t i = 0; i < 5; ++i) {
      INFO("CRLF record ", i);
      CHECK(again[i].status == want[i]);
      CHECK(again[i].title == titles[i]);
      if (again[i].molecule) CHECK(*again[i].molecule == *recs[i].molecule);
    }
  }

  TEST_CASE("a SMILES file gives one record per non-empty line with the rest of the line as title") {
    const auto recs = nmrpred::read_records("CCO ethanol\n\n   \nnot_a_smiles!\nc1ccccc1\tbenzene ring \n");
    INFO("common practice: SMILES file = SMILES, whitespace, title");
    REQUIRE(recs.size() == 3);
    CHECK(recs[0].title == "ethanol");
    CHECK(recs[0].molecule->title() == "ethanol");
    CHECK(recs[1].status == Status::Input);
    CHECK(recs[1].record == 1);
    CHECK(contains(recs[1].error, "record 1"));
    CHECK(contains(recs[1].error, "SMILES"));
    CHECK(recs[2].record == 2);
    CHECK(recs[2].title == "benzene ring");
  }

  TEST_CASE("empty, garbage and malformed input give clear errors") {
    CHECK(nmrpred::read_records("").empty());
    CHECK(nmrpred::read_records(" \n\n\t\n").empty());
    CHECK_THROWS_WITH_AS(nmrpred::read_molecule(""), "no molecule in input", nmrpred::InputError);
    CHECK_THROWS_AS(nmrpred::read_molecule("CCO\nCCC\n"), nmrpred::InputError);

    struct Row {
      std::string text;
      Format format;
      Status status;
      const char *must_mention;
      const char *source;
    };
    const std::string mol = read_data_file("alanine_2d_wedge.mol");
    std::string xx = mol;
    xx.replace(xx.find(" N   0"), 6, " Xx  0");
    const std::string v3 = read_data_file("alanine_2d_v3000.mol");
    auto v3_with = [&](const std::string &from, const std::string &to) {
      std::string t = v3;
      const auto at = t.find(from);
      REQUIRE(at != std::string::npos);
      return t.replace(at, from.size(), to);
    };
    const Row rows[] = {
        {"garbage!!", Format::Smiles, Status::Input, "SMILES", "OSMILES: 'g' is not a SMILES symbol"},
        {"C1CC", Format::Smiles, Status::Input, "ring", "OSMILES: unclosed ring bond"},
        {"c1cccc1", Format::Smiles, Status::Input, "Kekule", "common practice: 5-ring of aromatic C has no Kekule form"},
        {"[Xx]C", Format::Smiles, Status::Input, "SMILES", "OSMILES: Xx is not an element"},
        {"*C", Format::Smiles, Status::Input, "input atom 0", "OSMILES: '*' is a wildcard, not an element"},
        {"C$C", Format::Smiles, Status::Unsupported, "order 4", "OSMILES: '$' is a quadruple bond"},
        {xx, Format::Mol, Status::Input, "'Xx'", "CTFILE: atom symbol must be an element"},
        {mol.substr(0, mol.find("  1  2  1")), Format::Mol, Status::Input, "M  END", "CTFILE: block cut in the bond block"},
        {mol.substr(0, mol.find("    0.7500")), Format::Mol, Status::Input, "M  END", "CTFILE: block cut in the atom block"},
        {v3.substr(0, v3.find("M  V30 END ATOM")), Format::Mol, Status::Input, "M  END", "CTFILE: V3000 block cut short"},
        // Open Babel 3.1.1 reads past the fields of short V3000 atom and bond
        // lines; a mutation fuzzer's block with a short atom line crashed it
        // before io/ checked the block's shape.
        {v3_with("M  V30 3 C 1.500000 1.299038 0.000000 0", "M  V30 3 C 1.5000 END ATOM"), Format::Mol, Status::Input,
         "line 10: an atom line needs", "CTFILE: V3000 atom line is index, type, x, y, z, atom map"},
        {v3_with("M  V30 3 1 2 4\n", "M  V30 3 1 2\n"), Format::Mol, Status::Input, "a bond line needs",
         "CTFILE: V3000 bond line is index, type, atom, atom"},
        {v3_with("M  V30 3 1 2 4\n", "M  V30 3 1 2 9\n"), Format::Mol, Status::Input, "atom '9'",
         "CTFILE: a bond joins atoms of the atom block"},
        {v3_with("COUNTS 6 5", "COUNTS 7 5"), Format::Mol, Status::Input, "the COUNTS line says 7",
         "CTFILE: COUNTS gives the atom and bond counts"},
        {v3_with("M  V30 END ATOM\n", "M  V30\nM  V30 END ATOM\n"), Format::Mol, Status::Input, "nothing after it",
         "CTFILE: every V3000 line has content after 'M  V30'"},
        {v3_with("M  V30 END BOND\n", ""), Format::Mol, Status::Input, "'END CTAB' inside the BOND block",
         "CTFILE: BEGIN and END lines pair up"},
        {v3_with("M  V30 END CTAB\n", "M  V30 END CTAB -\n"), Format::Mol, Status::Input, "continued line",
         "CTFILE: a '-' at the end continues the line in the next 'M  V30' line"},
        {"name\nprogram\n", Format::Mol, Status::Input, "truncated", "CTFILE: no counts line"},
        {"InChI=garbage", Format::Inchi, Status::Input, "InChI", "INCHI: not an identifier"},
        {"CCO", Format::Inchi, Status::Input, "InChI=1", "INCHI: identifiers start with InChI="},
        // The next two crashed Debian's libinchi 1.03 inside Open Babel before io/ checked the layers.
        {"InChI=1S/C7H6C.lNO/c8-7-3-1-6(2-4-7)5-9-10/h1-5,10H", Format::Inchi, Status::Input, "formula",
         "INCHI: formula components are element symbols with counts"},
        {"InChI=1S/C17H11NS/c1-2-6-12(7-3-1)17-18-15-10-13-8-4-5-9-14(13)11-16(15)19-17;/h1-11H", Format::Inchi,
         Status::Input, "components", "INCHI: one ';' group per formula component"},
        {"InChI=1S/CH4O/c1-9/h9H,1H3", Format::Inchi, Status::Input, "atom 9",
         "INCHI: connection table numbers the component's heavy atoms 1..n"},
    };
    for (const auto &r : rows) {
      INFO(r.text.substr(0, 30), " | ", r.source);
      const auto recs = nmrpred::read_records(r.text, r.format);
      REQUIRE(recs.size() == 1);
      INFO("error: ", recs[0].error);
      CHECK(recs[0].status == r.status);
      CHECK_FALSE(recs[0].molecule.has_value());
      CHECK(contains(recs[0].error, "record 0"));
      CHECK(contains(recs[0].error, r.must_mention));
      CHECK_THROWS_AS(nmrpred::read_molecule(r.text, r.format), nmrpred::Error);
    }
  }

  TEST_CASE("Open Babel's messages go into the records, never to stdout or stderr") {
    const char *bad[] = {"garbage!!", "C1CC", "c1cccc1", "[Xx]C", "InChI=garbage", "InChI=1S/XYZ/zz"};
    std::vector<ReadRecord> recs;
#ifdef NMRPRED_TEST_HAVE_DUP2
    std::cout.flush();
    std::cerr.flush();
    std::fflush(nullptr);
    FILE *capture = std::tmpfile();
    REQUIRE(capture != nullptr);
    const int saved_out = dup(1), saved_err = dup(2);
    REQUIRE(saved_out >= 0);
    REQUIRE(saved_err >= 0);
    dup2(fileno(capture), 1);
    dup2(fileno(capture), 2);
    std::string failure;
    try {
      for (const char *text : bad)
        for (auto &r : nmrpred::read_records(text)) recs.push_back(std::move(r));
      const std::string mol = read_data_file("alanine_2d_wedge.mol");
      for (auto &r : nmrpred::read_records(mol.substr(0, mol.find("    0.7500")) + "M  END\n"))
        recs.push_back(std::move(r));
    } catch (const std::exception &e) {
      failure = e.what();
    }
    std::cout.flush();
    std::cerr.flush();
    std::clog.flush();
    std::fflush(nullptr);
    dup2(saved_out, 1);
    dup2(saved_err, 2);
    close(saved_out);
    close(saved_err);
    struct stat st {};
    REQUIRE(fstat(fileno(capture), &st) == 0);
    std::string printed(static_cast<std::size_t>(st.st_size), '\0');
    std::rewind(capture);
    if (!printed.empty()) CHECK(std::fread(&printed[0], 1, printed.size(), capture) == printed.size());
    std::fclose(capture);
    INFO("printed: ", printed, " | exception: ", failure);
    CHECK(failure.empty());
    CHECK(printed.empty());
#else
    for (const char *text : bad)
      for (auto &r : nmrpred::read_records(text)) recs.push_back(std::move(r));
#endif
    INFO("common practice: a library does not print; Open Babel's text is kept per record");
    REQUIRE(recs.size() >= 6);
    for (const auto &r : recs) CHECK(r.status != Status::Ok);
    CHECK(contains(recs[0].error, "character 'g'"));
    CHECK(std::any_of(recs[0].warnings.begin(), recs[0].warnings.end(),
                      [](const std::string &w) { return contains(w, "Open Babel"); }));
  }

  TEST_CASE("coordinates are kept only when every atom has them") {
    INFO("io.hpp: hydrogens added by the reader have no position, so then no coordinates are returned");
    const auto m3 = nmrpred::read_molecule(read_data_file("alanine_3d.mol"));
    CHECK(m3.coordinates().size() == 3 * 13);
    CHECK(m3.has_3d_coordinates());
    // RDKit's first atom (N) of the 3D file: -0.5579 1.5114 -0.0996 (RDKIT).
    CHECK(std::fabs(m3.coordinates()[0] + 0.5579) < 1e-4);
    CHECK(std::fabs(m3.coordinates()[1] - 1.5114) < 1e-4);
    const auto m2 = nmrpred::read_molecule(read_data_file("alanine_2d_wedge.mol"));
    CHECK(m2.coordinates().empty());
    CHECK_FALSE(m2.has_3d_coordinates());
    CHECK(nmrpred::read_molecule("CCO").coordinates().empty());
  }

  TEST_CASE("large inputs read without recursion or quadratic blow-up") {
    INFO("common practice: polymers and mixtures are legal input");
    const auto chain = nmrpred::read_molecule(std::string(5000, 'C'));
    CHECK(chain.heavy_atom_count() == 5000);
    CHECK(chain.atom_count() == 5000 + 2 * 5000 + 2);
    CHECK(chain.fragment_count() == 1);
    std::string mixture;
    for (int i = 0; i < 1000; ++i) mixture += i ? ".[Na+]" : "[Na+]";
    const auto salts = nmrpred::read_molecule(mixture);
    CHECK(salts.fragment_count() == 1000);
    std::string nested;
    for (int i = 0; i < 2000; ++i) nested += "C(";
    nested += "C";
    nested += std::string(2000, ')');
    CHECK(nmrpred::read_molecule(nested).heavy_atom_count() == 2001);
  }

  TEST_CASE("reading from several threads at once gives the same molecules") {
    INFO("io.hpp thread rule: any thread may read; Open Babel calls are serialised inside");
    const std::vector<std::string> inputs = {"N[C@@H](C)C(=O)O", "F/C=C\\F", "c1ccccc1O", "[Na+].[O-]C(=O)C",
                                             "C[S@](=O)CC", "CC(C)(C)OC(=O)CSC#N"};
    std::vector<Molecule> reference;
    for (const auto &s : inputs) reference.push_back(nmrpred::read_molecule(s));
    std::vector<int> mismatches(4, 0);
    std::vector<std::thread> threads;
    for (int t = 0; t < 4; ++t)
      threads.emplace_back([&, t] {
        for (int round = 0; round < 25; ++round)
          for (std::size_t i = 0; i < inputs.size(); ++i) {
            const auto recs = nmrpred::read_records(inputs[i]);
            if (recs.size() != 1 || !recs[0].molecule || !(*recs[0].molecule == reference[i])) ++mismatches[t];
          }
      });
    for (auto &th : threads) th.join();
    for (int t = 0; t < 4; ++t) CHECK(mismatches[t] == 0);
  }
}
