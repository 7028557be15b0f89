// J coupling estimates (libnmrpred/src/couplings/, rules in
// tables/couplings/*.tsv as tables/FORMAT.md "Coupling tables" describes).
//
// Expected values are measured couplings as published in the source named
// beside each row; most were recalled rather than read from the printed
// page, hence "(from memory)". Tolerances are the uncertainty the applied
// rule states for itself (its `uncertainty_hz`), so a check fails when the
// engine picks the wrong rule or geometry, not because a rule is coarse.
// Where a table row was taken from the very compound checked, the comment
// says so: such a row tests the selection, not the number.
//
// Atom numbers in the rows are heavy-atom positions in the SMILES.

#include <doctest/doctest.h>

#include <nmrpred/classes.hpp>
#include <nmrpred/couplings.hpp>
#include <nmrpred/error.hpp>
#include <nmrpred/io.hpp>
#include <nmrpred/solvents.hpp>
#include <nmrpred/tables.hpp>

#include <algorithm>
#include <array>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <map>
#include <memory>
#include <random>
#include <sstream>
#include <string>
#include <tuple>
#include <utility>
#include <vector>

#include "check.hpp"
#include "nci.hpp"

namespace {

using nmrpred::Coupling;
using nmrpred::CouplingOptions;
using nmrpred::Molecule;

const nmrpred::Tables &tables() {
  static const std::shared_ptr<const nmrpred::Tables> t = nmrpred::Tables::builtin();
  return *t;
}

struct Result {
  Molecule m;
  nmrpred::AtomClasses classes;
  std::vector<Coupling> couplings;
  std::vector<std::string> warnings;
};

Result run(const Molecule &m, const CouplingOptions &options = {}) {
  Result r{m, nmrpred::compute_classes(m), {}, {}};
  r.couplings = nmrpred::predict_couplings(r.m, r.classes, tables(), options, &r.warnings);
  return r;
}

Result run(const std::string &smiles, const CouplingOptions &options = {}) {
  return run(nmrpred::read_molecule(smiles, nmrpred::Format::Smiles), options);
}

// An end of a coupling: heavy atom `atom` itself, or the protons on it.
struct End {
  std::size_t atom;
  bool protons;
};
End H(std::size_t a) { return {a, true}; }
End X(std::size_t a) { return {a, false}; }

bool is_end(const Molecule &m, std::size_t i, End e) {
  if (!e.protons) return i == e.atom;
  return m.is_hydrogen(i) && m.atom(i).isotope <= 1 && m.attached_to(i) == static_cast<std::int64_t>(e.atom);
}

// Every coupling between the two ends, `bonds` apart.
std::vector<Coupling> between(const Result &r, End a, End b, int bonds) {
  std::vector<Coupling> out;
  for (const auto &c : r.couplings)
    if (c.bonds == bonds &&
        ((is_end(r.m, c.a, a) && is_end(r.m, c.b, b)) || (is_end(r.m, c.a, b) && is_end(r.m, c.b, a))))
      out.push_back(c);
  return out;
}

struct Row {
  std::string smiles;
  End a, b;
  int bonds;
  double expected_hz;
  double tolerance_hz;
  const char *source;
};

// Every coupling of the row's kind equals the expected value.
void check_rows(const std::vector<Row> &rows) {
  for (const auto &row : rows) {
    INFO(row.smiles, " | ", row.source);
    const auto r = run(row.smiles);
    const auto cs = between(r, row.a, row.b, row.bonds);
    REQUIRE(!cs.empty());
    for (const auto &c : cs) {
      INFO("atoms ", c.a, "-", c.b, ": ", c.method);
      check_close(c.j_hz, row.expected_hz, row.tolerance_hz);
      CHECK(!c.rule.empty());
      CHECK(!c.source.empty());
    }
  }
}

// The distinct values (to 0.01 Hz) between the two ends, sorted.
std::vector<double> values(const Result &r, End a, End b, int bonds) {
  std::vector<double> v;
  for (const auto &c : between(r, a, b, bonds)) v.push_back(std::round(c.j_hz * 100) / 100);
  std::sort(v.begin(), v.end());
  v.erase(std::unique(v.begin(), v.end()), v.end());
  return v;
}

// --- NCI sample --------------------------------------------------------------

// The same molecule with its heavy atoms in a random order (hydrogens follow
// their heavy atom, as Molecule requires); new_index[i] is atom i's new index.
Molecule permuted(const Molecule &m, std::mt19937 &rng, std::vector<std::size_t> &new_index) {
  const std::size_t n = m.atom_count(), heavy = m.heavy_atom_count();
  std::vector<std::size_t> order(heavy);
  for (std::size_t i = 0; i < heavy; ++i) order[i] = i;
  std::shuffle(order.begin(), order.end(), rng);
  new_index.assign(n, 0);
  std::size_t next = 0;
  for (auto a : order) new_index[a] = next++;
  for (auto a : order)
    for (auto it = m.neighbours_begin(a); it != m.neighbours_end(a); ++it)
      if (m.is_hydrogen(*it) && *it >= heavy) new_index[*it] = next++;
  for (std::size_t i = heavy; i < n; ++i)
    if (m.attached_to(i) < 0 || m.degree(i) != 1) new_index[i] = next++;
  nmrpred::MoleculeData d;
  d.atoms.resize(n);
  for (std::size_t i = 0; i < n; ++i) d.atoms[new_index[i]] = m.atom(i);
  for (const auto &b : m.bonds()) {
    auto x = static_cast<std::uint32_t>(new_index[b.begin]), y = static_cast<std::uint32_t>(new_index[b.end]);
    d.bonds.push_back({std::min(x, y), std::max(x, y), b.order});
  }
  std::sort(d.bonds.begin(), d.bonds.end(),
            [](const auto &p, const auto &q) { return std::tie(p.begin, p.end) < std::tie(q.begin, q.end); });
  auto map_ligand = [&](std::int32_t l) {
    return l < 0 ? l : static_cast<std::int32_t>(new_index[static_cast<std::size_t>(l)]);
  };
  for (auto t : m.tetrahedral_stereo()) {
    t.centre = static_cast<std::uint32_t>(new_index[t.centre]);
    for (auto &l : t.ligands) l = map_ligand(l);
    d.tetrahedral.push_back(t);
  }
  for (auto s : m.double_bond_stereo()) {
    s.begin = static_cast<std::uint32_t>(new_index[s.begin]);
    s.end = static_cast<std::uint32_t>(new_index[s.end]);
    s.ref_begin = static_cast<std::uint32_t>(new_index[s.ref_begin]);
    s.ref_end = static_cast<std::uint32_t>(new_index[s.ref_end]);
    if (s.begin > s.end) std::swap(s.begin, s.end), std::swap(s.ref_begin, s.ref_end);
    d.double_bonds.push_back(s);
  }
  return Molecule(std::move(d));
}

// Checks over NCI records [first, last): pairs with the same two chemical
// classes and bond count get one value, and a random atom order gives the
// same multiset of (topological class pair, bonds, J).
void check_nci_slice(std::size_t first, std::size_t last) {
  INFO("NCI sample: ", nci::path());
  REQUIRE(nci::lines().size() > 4900);
  const auto mols = nci::molecules(first, last);
  // Open Babel reads all but a handful of the records.
  CHECK(mols.size() + 5 >= std::min(last, nci::lines().size()) - first);
  std::mt19937 rng(static_cast<std::uint32_t>(first + 12345));
  std::size_t checked = 0;
  for (std::size_t i = 0; i < mols.size(); ++i) {
    const auto r = run(mols[i]);
    INFO("molecule ", i, " of NCI records from ", first);
    using Key = std::tuple<std::uint32_t, std::uint32_t, int>;
    std::map<Key, double> first_j;
    for (const auto &c : r.couplings) {
      CHECK(std::isfinite(c.j_hz));
      CHECK(c.a < c.b);
      const auto p = r.classes.chemical[c.a], q = r.classes.chemical[c.b];
      const Key key{std::min(p, q), std::max(p, q), c.bonds};
      const auto it = first_j.emplace(key, c.j_hz).first;
      if (it->second != c.j_hz) {
        INFO("atoms ", c.a, "-", c.b, ": ", c.method);
        CHECK(it->second == c.j_hz);
      }
    }
    std::vector<std::size_t> map;
    const auto p = run(permuted(mols[i], rng, map));
    std::vector<std::size_t> back(map.size());
    for (std::size_t a = 0; a < map.size(); ++a) back[map[a]] = a;
    using Entry = std::tuple<std::uint32_t, std::uint32_t, int, long long>;
    auto entries = [&](const std::vector<Coupling> &cs, bool mapped) {
      std::vector<Entry> out;
      for (const auto &c : cs) {
        const auto a = mapped ? back[c.a] : c.a, b = mapped ? back[c.b] : c.b;
        const auto x = r.classes.topological[a], y = r.classes.topological[b];
        out.emplace_back(std::min(x, y), std::max(x, y), c.bonds, std::llround(c.j_hz * 1e6));
      }
      std::sort(out.begin(), out.end());
      return out;
    };
    CHECK(entries(r.couplings, false) == entries(p.couplings, true));
    ++checked;
  }
  CHECK(checked == mols.size());
}

// Tables folder with the built-in files, for load() tests.
void write_tables(const std::filesystem::path &dir, bool with_couplings,
                  const std::pair<std::string, std::string> &replace = {}) {
  const std::filesystem::path src(NMRPRED_TABLES_SOURCE_DIR);
  for (const auto &entry : std::filesystem::recursive_directory_iterator(src)) {
    if (!entry.is_regular_file()) continue;
    const auto rel = std::filesystem::relative(entry.path(), src);
    if (!with_couplings && rel.begin()->string() == "couplings") continue;
    std::filesystem::create_directories((dir / rel).parent_path());
    std::filesystem::copy_file(entry.path(), dir / rel);
  }
  if (!replace.first.empty()) {
    std::ofstream out(dir / replace.first, std::ios::binary | std::ios::trunc);
    out << replace.second;
  }
}

std::string read_text(const std::filesystem::path &p) {
  std::ifstream in(p, std::ios::binary);
  std::stringstream ss;
  ss << in.rdbuf();
  return ss.str();
}

// A CH(X)(D)-CH(Y)(D) fragment in 3D (no methyl group: those rotate and
// take the rule): C0 at the origin, C1 on the x axis, ideal tetrahedral
// ligands. The ligands of C0 sit at rotations 0 (proton), 120 (X), 240 (D)
// degrees about the axis; those of C1 at phi (proton), phi + y_slot (Y) and
// the remaining slot (D). The dihedral H-C0-C1-H is phi.
Molecule fragment_3d(double phi_deg, unsigned x, unsigned y, double y_slot = 120) {
  const double pi = 3.14159265358979323846, cc = 1.54;
  auto ligand = [&](bool front, double rot_deg, double length) {
    const double r = rot_deg * pi / 180, s = 2 * std::sqrt(2.0) / 3 * length;
    return std::array<double, 3>{front ? -length / 3 : cc + length / 3, s * std::cos(r), s * std::sin(r)};
  };
  auto length = [](unsigned z) { return z == 9 ? 1.39 : z == 17 ? 1.78 : 1.09; };
  nmrpred::MoleculeData d;
  std::vector<std::array<double, 3>> pos;
  auto add = [&](unsigned z, unsigned iso, std::array<double, 3> p) {
    nmrpred::Atom a;
    a.atomic_number = static_cast<std::uint8_t>(z);
    a.isotope = static_cast<std::uint16_t>(iso);
    d.atoms.push_back(a);
    pos.push_back(p);
    return static_cast<std::uint32_t>(d.atoms.size() - 1);
  };
  const double d_slot = y_slot == 120 ? 240 : 120;
  const auto c0 = add(6, 0, {0, 0, 0}), c1 = add(6, 0, {cc, 0, 0});
  const auto sx = add(x, 0, ligand(true, 120, length(x)));
  const auto sy = add(y, 0, ligand(false, phi_deg + y_slot, length(y)));
  const auto h0 = add(1, 0, ligand(true, 0, 1.09));
  const auto d0 = add(1, 2, ligand(true, 240, 1.09));
  const auto h1 = add(1, 0, ligand(false, phi_deg, 1.09));
  const auto d1 = add(1, 2, ligand(false, phi_deg + d_slot, 1.09));
  const std::pair<std::uint32_t, std::uint32_t> bonds[] = {{c0, c1}, {c0, sx}, {c1, sy}, {c0, h0},
                                                           {c0, d0}, {c1, h1}, {c1, d1}};
  for (auto [a, b] : bonds) d.bonds.push_back({a, b, nmrpred::BondOrder::Single});
  for (const auto &p : pos) d.coordinates.insert(d.coordinates.end(), p.begin(), p.end());
  d.coordinates_3d = true;
  return Molecule(std::move(d));
}

double hh_3d(const Molecule &m) {
  const auto r = run(m);
  for (const auto &c : r.couplings)
    if (c.bonds == 3 && m.is_hydrogen(c.a) && m.is_hydrogen(c.b) && m.atom(c.a).isotope == 0 &&
        m.atom(c.b).isotope == 0) {
      INFO(c.method);
      CHECK(c.rule == "hla");
      return c.j_hz;
    }
  FAIL("no vicinal J(H,H)");
  return 0;
}

}  // namespace

TEST_SUITE("couplings") {
  TEST_CASE("vicinal couplings of ethyl and isopropyl groups match handbook values within the rule's 0.7 Hz") {
    // Rule hh-3j-free-intercept/-slope: 7.9 - 0.7 x sum(dchi).
    check_rows({
        {"CCCl", H(0), H(1), 3, 7.2, 0.7, "PRETSCH-2009 (from memory): ethyl chloride"},
        {"CCBr", H(0), H(1), 3, 7.3, 0.7, "PRETSCH-2009 (from memory): ethyl bromide"},
        {"CCI", H(0), H(1), 3, 7.5, 0.7, "PRETSCH-2009 (from memory): ethyl iodide"},
        {"CCO", H(0), H(1), 3, 7.0, 0.7, "PRETSCH-2009 (from memory): ethanol"},
        {"CCOCC", H(0), H(1), 3, 7.0, 0.7, "PRETSCH-2009 (from memory): diethyl ether"},
        {"CCOC(C)=O", H(0), H(1), 3, 7.1, 0.7, "SILVERSTEIN-2014 (from memory): ethyl acetate"},
        {"CCc1ccccc1", H(0), H(1), 3, 7.6, 0.7, "PRETSCH-2009 (from memory): ethylbenzene"},
        {"CCN(CC)CC", H(0), H(1), 3, 7.1, 0.7, "PRETSCH-2009 (from memory): triethylamine"},
        {"CC(C)c1ccccc1", H(0), H(1), 3, 6.9, 0.7, "PRETSCH-2009 (from memory): cumene"},
        {"CC(C)Cl", H(0), H(1), 3, 6.5, 0.7, "PRETSCH-2009 (from memory): 2-chloropropane"},
        {"CC(C)O", H(0), H(1), 3, 6.1, 0.7, "SILVERSTEIN-2014 (from memory): 2-propanol"},
    });
  }

  TEST_CASE("geminal couplings of sp3 CH2 and CH3 follow the pi-bond and heteroatom terms") {
    check_rows({
        // -12.4 - 1.9 = -14.3 +- 1.8
        {"CC(C)=O", H(0), H(0), 2, -14.9, 1.8, "POPLE-BOTHNER-BY-1965 (from memory): acetone"},
        // -12.4 - 2 x 1.9 = -16.2 +- 2.1
        {"CC#N", H(0), H(0), 2, -16.9, 2.1, "POPLE-BOTHNER-BY-1965 (from memory): acetonitrile"},
        // -12.4 + 2.0 = -10.4 +- 1.8
        {"CO", H(0), H(0), 2, -10.8, 1.8, "POPLE-BOTHNER-BY-1965 (from memory): methanol"},
        // Row hh-2j-oxirane was taken from epoxides like this one.
        {"C1OC1c1ccccc1", H(0), H(0), 2, 5.5, 0.8, "PRETSCH-2009 (from memory): styrene oxide"},
        // Both ring protons are unresolved against H2 (4.0 cis, 2.5 trans): 3.2 +- 1.0.
        {"C1OC1c1ccccc1", H(0), H(2), 3, 3.2, 1.0, "PRETSCH-2009 (from memory): styrene oxide, mean of 4.0 and 2.5"},
    });
  }

  TEST_CASE("alkene couplings follow the double-bond geometry and the substituent") {
    check_rows({
        {"COC(=O)/C=C/c1ccccc1", H(4), H(5), 3, 16.0, 0.6, "PRETSCH-2009 (from memory): methyl (E)-cinnamate"},
        {"COC(=O)/C=C\\c1ccccc1", H(4), H(5), 3, 12.7, 0.8, "PRETSCH-2009 (from memory): methyl (Z)-cinnamate"},
        {"C/C=C/C=O", H(1), H(2), 3, 15.6, 0.6, "PRETSCH-2009 (from memory): (E)-crotonaldehyde H2-H3"},
        {"C/C=C/C=O", H(2), H(3), 3, 7.8, 0.7, "PRETSCH-2009 (from memory): (E)-crotonaldehyde H2-CHO"},
        // Row vinyl-aryl was taken from styrene itself.
        {"C=Cc1ccccc1", H(0), H(0), 2, 1.0, 0.6, "PRETSCH-2009 (from memory): styrene geminal"},
        {"C=COC(C)=O", H(0), H(0), 2, -1.6, 0.6,
         "PRETSCH-2009 (from memory): vinyl acetate geminal (row taken from it)"},
        {"C=CC(=O)OCC", H(0), H(0), 2, 1.5, 0.6, "PRETSCH-2009 (from memory): ethyl acrylate geminal"},
        {"C1=CCCCC1", H(0), H(1), 3, 10.0, 0.8, "GUENTHER-2013 (from memory): cyclohexene"},
        {"CC=C", H(0), H(1), 3, 6.5, 0.8, "PRETSCH-2009 (from memory): propene CH3-CH="},
    });
    struct Vinyl {
      std::string smiles;
      double cis, trans, tol;
      const char *source;
    };
    const Vinyl vinyls[] = {
        {"C=Cc1ccccc1", 10.9, 17.6, 0.6, "PRETSCH-2009 (from memory): styrene (row taken from it)"},
        {"C=Cc1ccc(C)cc1", 10.9, 17.6, 0.6, "PRETSCH-2009 (from memory): 4-methylstyrene"},
        {"C=COC(C)=O", 6.3, 14.0, 0.6, "PRETSCH-2009 (from memory): vinyl acetate (row taken from it)"},
        {"C=CC(=O)OCC", 10.4, 17.3, 0.6, "PRETSCH-2009 (from memory): ethyl acrylate"},
        {"C=CC#N", 11.8, 17.9, 0.5, "PRETSCH-2009 (from memory): acrylonitrile (row taken from it)"},
    };
    for (const auto &v : vinyls) {
      INFO(v.smiles, " | ", v.source);
      const auto r = run(v.smiles);
      const auto js = values(r, H(0), H(1), 3);
      REQUIRE(js.size() == 2);
      check_close(js[0], v.cis, v.tol);
      check_close(js[1], v.trans, v.tol);
      // The lower-index =CH2 proton is cis to the substituent (the
      // convention of the 1H increment rules), so it carries J(trans).
      const auto cs = between(r, H(0), H(1), 3);
      const auto lower = std::min_element(cs.begin(), cs.end(), [](const Coupling &p, const Coupling &q) {
        return std::min(p.a, p.b) < std::min(q.a, q.b);
      });
      CHECK(lower->j_hz == doctest::Approx(js[1]));
    }
  }

  TEST_CASE("an alkene without given geometry is taken as E, with a warning") {
    const auto r = run("CC=CC");
    const auto cs = between(r, H(1), H(2), 3);
    REQUIRE(cs.size() == 1);
    // trans, two sp3 groups: 15.3 (rule hh-3j-alkene-trans-cc); trans-2-butene
    // 15.3 (PRETSCH-2009, from memory), widened for the assumption.
    check_close(cs[0].j_hz, 15.3, 0.7);
    CHECK(cs[0].uncertainty_hz > 1.0);
    bool warned = false;
    for (const auto &w : r.warnings) warned |= w.find("E assumed") != std::string::npos;
    CHECK(warned);
  }

  TEST_CASE("ring couplings: cyclopropane faces from classes, cyclohexane cis and trans from configurations") {
    const auto r = run("c1ccc(cc1)C1CC1");
    // CH2-CH2 of the ring: protons of one class share a face.
    const auto cis_trans = values(r, H(7), H(8), 3);
    REQUIRE(cis_trans.size() == 2);
    check_close(cis_trans[0], 5.6, 1.0);  // GUENTHER-2013 (from memory): cyclopropane trans 4-8
    check_close(cis_trans[1], 9.0, 1.0);  // GUENTHER-2013 (from memory): cyclopropane cis 7-11
    check_rows({
        // cis H1-H2: axial-equatorial in both chairs (Karplus-type 2-5 Hz).
        {"C[C@H]1CCCC[C@H]1C", H(1), H(6), 3, 3.5, 1.2, "PRETSCH-2009 (from memory): cyclohexane J(ax,eq)"},
        // trans: diaxial 10-13 or diequatorial 2-5.
        {"C[C@@H]1CCCC[C@H]1C", H(1), H(6), 3, 9.0, 3.0, "PRETSCH-2009 (from memory): cyclohexane J(ax,ax)/J(eq,eq)"},
        {"C1CCCCC1", H(0), H(1), 3, 6.0, 2.5, "PRETSCH-2009 (from memory): mean of ax/eq combinations"},
    });
  }

  TEST_CASE("benzene, anisole and toluene ring couplings by ortho, meta and para position") {
    check_rows({
        {"c1ccccc1", H(0), H(1), 3, 7.54, 0.7, "PRETSCH-2009 (from memory): benzene ortho"},
        {"c1ccccc1", H(0), H(2), 4, 1.37, 0.5, "PRETSCH-2009 (from memory): benzene meta"},
        {"c1ccccc1", H(0), H(3), 5, 0.69, 0.3, "PRETSCH-2009 (from memory): benzene para"},
        {"Cc1ccccc1", H(2), H(3), 3, 7.6, 0.7, "PRETSCH-2009 (from memory): toluene H2-H3"},
        {"COc1ccccc1", H(3), H(4), 3, 8.3, 0.7, "PRETSCH-2009 (from memory): anisole H2-H3"},
        {"COc1ccccc1", H(4), H(5), 3, 7.4, 0.7, "PRETSCH-2009 (from memory): anisole H3-H4"},
        {"c1ccc2ccccc2c1", H(0), H(1), 3, 6.9, 0.4, "PRETSCH-2009 (from memory): naphthalene H2-H3"},
        {"c1ccc2ccccc2c1", H(1), H(2), 3, 8.3, 0.4, "PRETSCH-2009 (from memory): naphthalene H1-H2"},
    });
  }

  TEST_CASE("pyridine, furan, thiophene and quinoline couplings by ring position") {
    // The hh_aromatic.tsv rows hold these parents' values: the checks test
    // the ring numbering, not the numbers.
    check_rows({
        {"c1ccncc1", H(2), H(1), 3, 4.9, 0.5, "PRETSCH-2009 (from memory): pyridine J23"},
        {"c1ccncc1", H(1), H(0), 3, 7.7, 0.5, "PRETSCH-2009 (from memory): pyridine J34"},
        {"c1ccncc1", H(2), H(0), 4, 1.8, 0.3, "PRETSCH-2009 (from memory): pyridine J24"},
        {"c1ccncc1", H(1), H(5), 4, 1.4, 0.3, "PRETSCH-2009 (from memory): pyridine J35"},
        {"c1ccncc1", H(2), H(5), 5, 0.9, 0.3, "PRETSCH-2009 (from memory): pyridine J25"},
        {"c1ccoc1", H(2), H(1), 3, 1.8, 0.3, "PRETSCH-2009 (from memory): furan J23"},
        {"c1ccoc1", H(1), H(0), 3, 3.3, 0.4, "PRETSCH-2009 (from memory): furan J34"},
        {"c1ccoc1", H(2), H(4), 4, 1.5, 0.3, "PRETSCH-2009 (from memory): furan J25"},
        {"c1ccsc1", H(2), H(1), 3, 4.9, 0.4, "PRETSCH-2009 (from memory): thiophene J23"},
        {"c1ccsc1", H(1), H(0), 3, 3.5, 0.3, "PRETSCH-2009 (from memory): thiophene J34"},
        {"c1ccsc1", H(2), H(4), 4, 2.8, 0.3, "PRETSCH-2009 (from memory): thiophene J25"},
        {"c1ccc2ncccc2c1", H(5), H(6), 3, 4.2, 0.3, "PRETSCH-2009 (from memory): quinoline J23"},
        {"c1ccc2ncccc2c1", H(6), H(7), 3, 8.3, 0.4, "PRETSCH-2009 (from memory): quinoline J34"},
    });
    // pyridine H2-H6 (-0.1) is below the default 0.3 Hz cut.
    CHECK(between(run("c1ccncc1"), H(2), H(4), 4).empty());
  }

  TEST_CASE("fluorobenzene and benzotrifluoride J(H,F) and J(C,F)") {
    check_rows({
        {"Fc1ccccc1", X(0), H(2), 3, 9.1, 0.8, "PRETSCH-2009 (from memory): fluorobenzene 3J(H,F)"},
        {"Fc1ccccc1", X(0), H(3), 4, 5.7, 0.7, "PRETSCH-2009 (from memory): fluorobenzene 4J(H,F)"},
        {"Fc1ccccc1", X(0), X(1), 1, 245.3, 6.0, "BREITMAIER-VOELTER-1987 (from memory): fluorobenzene 1J(C,F)"},
        {"Fc1ccccc1", X(0), X(2), 2, 21.0, 1.5, "BREITMAIER-VOELTER-1987 (from memory): 2J(C,F)"},
        {"Fc1ccccc1", X(0), X(3), 3, 7.7, 0.7, "BREITMAIER-VOELTER-1987 (from memory): 3J(C,F)"},
        {"Fc1ccccc1", X(0), X(4), 4, 3.2, 0.4, "BREITMAIER-VOELTER-1987 (from memory): 4J(C,F)"},
        {"FC(F)(F)c1ccccc1", X(0), X(1), 1, 272.0, 3.0,
         "BREITMAIER-VOELTER-1987 (from memory): benzotrifluoride 1J(C,F)"},
        {"FC(F)(F)c1ccccc1", X(0), X(4), 2, 32.0, 1.5, "BREITMAIER-VOELTER-1987 (from memory): ipso 2J(C,F)"},
        {"FC(F)(F)c1ccccc1", X(0), X(5), 3, 3.8, 0.4, "BREITMAIER-VOELTER-1987 (from memory): ortho 3J(C,F)"},
        {"OCC(F)(F)F", X(2), X(3), 1, 278.0, 6.0, "BREITMAIER-VOELTER-1987 (from memory): trifluoroethanol 1J(C,F)"},
        {"OCC(F)(F)F", X(1), X(3), 2, 35.0, 4.0, "BREITMAIER-VOELTER-1987 (from memory): trifluoroethanol 2J(C,F)"},
        {"OCC(F)(F)F", H(1), X(3), 3, 8.8, 2.0, "PRETSCH-2009 (from memory): trifluoroethanol 3J(H,F)"},
    });
    // Each fluorine of a CF3 group couples to its carbon (a 1:3:3:1 quartet
    // in the 13C spectrum): three one-bond couplings.
    const auto r = run("FC(F)(F)c1ccccc1");
    int one_bond = 0;
    for (const auto &c : r.couplings) one_bond += c.bonds == 1 && (c.a == 1 || c.b == 1);
    CHECK(one_bond == 3);
  }

  TEST_CASE("triethyl phosphate, dimethyl methylphosphonate and triphenylphosphine oxide J(H,P) and J(C,P)") {
    check_rows({
        {"CCOP(=O)(OCC)OCC", X(3), H(1), 3, 8.0, 1.0, "PRETSCH-2009 (from memory): triethyl phosphate OCH2"},
        {"CCOP(=O)(OCC)OCC", X(3), H(0), 4, 0.9, 0.3, "PRETSCH-2009 (from memory): triethyl phosphate CH3"},
        {"CCOP(=O)(OCC)OCC", X(3), X(1), 2, 5.8, 1.0, "KALINOWSKI-1988 (from memory): triethyl phosphate OCH2 2J(P,C)"},
        {"CCOP(=O)(OCC)OCC", X(3), X(0), 3, 6.7, 1.0, "KALINOWSKI-1988 (from memory): triethyl phosphate CH3 3J(P,C)"},
        {"CP(=O)(OC)OC", X(1), H(0), 2, 17.5, 2.5, "PRETSCH-2009 (from memory): dimethyl methylphosphonate P-CH3"},
        {"CP(=O)(OC)OC", X(1), H(4), 3, 11.0, 0.8, "PRETSCH-2009 (from memory): dimethyl methylphosphonate OCH3"},
        {"CP(=O)(OC)OC", X(1), X(0), 1, 144.0, 6.0,
         "KALINOWSKI-1988 (from memory): dimethyl methylphosphonate 1J(P,C)"},
        {"O=P(c1ccccc1)(c1ccccc1)c1ccccc1", X(1), X(2), 1, 104.0, 4.0, "KALINOWSKI-1988 (from memory): Ph3PO ipso"},
        {"O=P(c1ccccc1)(c1ccccc1)c1ccccc1", X(1), X(3), 2, 9.8, 1.0, "KALINOWSKI-1988 (from memory): Ph3PO ortho"},
        {"O=P(c1ccccc1)(c1ccccc1)c1ccccc1", X(1), X(4), 3, 12.1, 1.0, "KALINOWSKI-1988 (from memory): Ph3PO meta"},
        {"O=P(c1ccccc1)(c1ccccc1)c1ccccc1", X(1), X(5), 4, 2.7, 0.5, "KALINOWSKI-1988 (from memory): Ph3PO para"},
    });
  }

  TEST_CASE("J(C,D) and J(H,D) of deuterated solvents match the splittings of tables/solvents.tsv") {
    // Expected: the C-D and H-D splittings of solvents.tsv (j_source
    // COMMON-PRACTICE), read through nmrpred::find_solvent. Tolerance: the
    // 1J(C,H) row uncertainty (3-4 Hz) x 0.1535.
    struct Solvent13 {
      const char *name, *smiles;
      std::size_t carbon, signal;
    };
    const Solvent13 rows[] = {
        {"CDCl3", "[2H]C(Cl)(Cl)Cl", 0, 0},
        {"DMSO-d6", "[2H]C([2H])([2H])S(=O)C([2H])([2H])[2H]", 0, 0},
        {"CD3OD", "[2H]C([2H])([2H])O[2H]", 0, 0},
        {"acetone-d6", "[2H]C([2H])([2H])C(=O)C([2H])([2H])[2H]", 0, 0},
        {"C6D6", "[2H]c1c([2H])c([2H])c([2H])c([2H])c1[2H]", 0, 0},
        {"CD3CN", "[2H]C([2H])([2H])C#N", 0, 0},
        {"CD2Cl2", "[2H]C([2H])(Cl)Cl", 0, 0},
        {"THF-d8", "[2H]C1([2H])OC([2H])([2H])C([2H])([2H])C1([2H])[2H]", 0, 1},
        {"THF-d8", "[2H]C1([2H])OC([2H])([2H])C([2H])([2H])C1([2H])[2H]", 3, 0},
        {"toluene-d8", "[2H]C([2H])([2H])c1c([2H])c([2H])c([2H])c([2H])c1[2H]", 0, 0},
    };
    for (const auto &row : rows) {
      INFO(row.name, " ", row.smiles);
      const auto solvent = nmrpred::find_solvent(tables(), row.name);
      REQUIRE(row.signal < solvent.c13.size());
      const double want = solvent.c13[row.signal].coupling_hz;
      const auto r = run(row.smiles);
      int n = 0;
      for (const auto &c : r.couplings)
        if (c.a == row.carbon && r.m.atom(c.b).isotope == 2 && c.bonds == 1) {
          INFO(c.method);
          check_close(c.j_hz, want, c.uncertainty_hz + 1e-9);
          CHECK(c.uncertainty_hz <= 0.65);
          ++n;
        }
      CHECK(n >= 1);
    }
    // Residual protons: CHD2 groups, J(H,D) = 2J(H,H) x 0.1535.
    struct Residual {
      const char *name, *smiles;
    };
    const Residual residual[] = {
        {"DMSO-d6", "[2H]C([2H])S(=O)C([2H])([2H])[2H]"},
        {"acetone-d6", "[2H]C([2H])C(=O)C([2H])([2H])[2H]"},
        {"CD3CN", "[2H]C([2H])C#N"},
        {"CD3OD", "[2H]C([2H])O[2H]"},
    };
    for (const auto &row : residual) {
      INFO(row.name, " ", row.smiles);
      const double want = nmrpred::find_solvent(tables(), row.name).h1_residual.at(0).coupling_hz;
      const auto r = run(row.smiles);
      int n = 0;
      for (const auto &c : r.couplings) {
        const bool hd = r.m.is_hydrogen(c.a) && r.m.is_hydrogen(c.b) &&
                        (r.m.atom(c.a).isotope == 2) != (r.m.atom(c.b).isotope == 2);
        if (!hd || c.bonds != 2) continue;
        INFO(c.method);
        check_close(std::fabs(c.j_hz), want, c.uncertainty_hz + 1e-9);
        ++n;
      }
      CHECK(n == 2);
    }
  }

  TEST_CASE("vicinal couplings from 3D coordinates follow the Haasnoot-de Leeuw-Altona relation") {
    // Worked values of the published equation with the general parameter
    // set (HAASNOOT-1980, from memory: p1 13.86, p2 -0.81, p3 0, p4 0.56,
    // p5 -2.32, p6 17.9 deg) and Huggins dchi (HUGGINS-1953, from memory)
    // Cl 3.15 - 2.20 = 0.95, F 3.90 - 2.20 = 1.70; term(dchi, xi, phi) =
    // dchi (0.56 - 2.32 cos^2(xi phi + 17.9 dchi)):
    //  Cl, Cl, phi = 180: 13.86 + 0.81 + 2 term(0.95, +-1, 180)
    //                   = 14.67 + 2 x 0.95 x (0.56 - 2.32 x 0.914471) = 11.70
    //  F, F, phi = 180:   14.67 + 2 x 1.70 x (0.56 - 2.32 x 0.742747) = 10.71
    // (at 180 degrees the orientation sign xi does not matter);
    //  Cl, Cl, phi = 60, the Cl on C1 antiperiplanar to the proton on C0
    //  (xi = -1) and the Cl on C0 gauche (xi = +1):
    //    3.465 - 0.405 + 0.95 x (0.56 - 2.32 cos^2(-42.995 deg))
    //                  + 0.95 x (0.56 - 2.32 cos^2(77.005 deg)) = 2.83.
    check_close(hh_3d(fragment_3d(180, 17, 17)), 11.70, 0.02);
    check_close(hh_3d(fragment_3d(180, 9, 9)), 10.71, 0.02);
    check_close(hh_3d(fragment_3d(60, 17, 17)), 2.83, 0.02);
    // The mirror image gives the same value.
    check_close(hh_3d(fragment_3d(-60, 17, 17)), 2.83, 0.02);
    // HAASNOOT-1980 (from memory): an electronegative substituent lowers J
    // most when antiperiplanar to the proton on the other carbon. F on C1
    // antiperiplanar to the proton on C0 (slot 120 at phi = 60) against F
    // gauche to it (slot 240): 1.98 against 4.96 by the relation.
    CHECK(hh_3d(fragment_3d(60, 9, 9, 120)) < hh_3d(fragment_3d(60, 9, 9, 240)) - 2.0);
    // Without coordinates the same fragment takes the freely rotating rule.
    const auto r = run("ClCCCl");
    for (const auto &c : between(r, H(1), H(2), 3)) CHECK(c.rule == "hh-3j-free-intercept");
    // A methyl group rotates freely: its couplings come from the rule even
    // with coordinates. L-alanine (RDKit-embedded, every hydrogen given):
    // J(H-alpha, CH3) 7.2 Hz in D2O (PRETSCH-2009, from memory), rule
    // 7.9 - 0.7 x (0.85 + 0.40) = 7.03 +- 0.7.
    {
      std::ifstream in(std::string(NMRPRED_TEST_DATA_DIR) + "/alanine_3d.mol", std::ios::binary);
      std::stringstream ss;
      ss << in.rdbuf();
      const auto ala = nmrpred::read_molecule(ss.str(), nmrpred::Format::Mol);
      REQUIRE(ala.has_3d_coordinates());
      const auto r3 = run(ala);
      const auto cs = between(r3, H(1), H(2), 3);
      REQUIRE(cs.size() == 3);
      for (const auto &c : cs) {
        CHECK(c.rule == "hh-3j-free-intercept");
        check_close(c.j_hz, 7.2, 0.7);
      }
    }
    // use_geometry = false ignores the coordinates.
    CouplingOptions no_geometry;
    no_geometry.use_geometry = false;
    for (const auto &c : run(fragment_3d(180, 17, 17), no_geometry).couplings) CHECK(c.rule != "hla");
  }

  TEST_CASE("protons on O, N and S are not coupled unless the option asks for slow exchange") {
    auto oh_couplings = [](const Result &r) {
      int n = 0;
      for (const auto &c : r.couplings)
        for (auto a : {c.a, c.b})
          if (r.m.is_hydrogen(a) && r.m.attached_to(a) == 2) ++n;
      return n;
    };
    CHECK(oh_couplings(run("CCO")) == 0);
    CouplingOptions slow;
    slow.exchangeable = true;
    const auto r = run("CCO", slow);
    CHECK(oh_couplings(r) == 2);
    // SILVERSTEIN-2014 (from memory): ethanol in dry DMSO-d6, OH triplet 5 Hz.
    for (const auto &c : between(r, H(1), H(2), 3)) check_close(c.j_hz, 5.0, 1.0);
  }

  TEST_CASE("equivalent pairs get one value and atom order never changes the couplings, NCI 0-499") {
    check_nci_slice(0, 500);
  }
  TEST_CASE("equivalent pairs get one value and atom order never changes the couplings, NCI 500-999") {
    check_nci_slice(500, 1000);
  }
  TEST_CASE("equivalent pairs get one value and atom order never changes the couplings, NCI 1000-1499") {
    check_nci_slice(1000, 1500);
  }
  TEST_CASE("equivalent pairs get one value and atom order never changes the couplings, NCI 1500-1999") {
    check_nci_slice(1500, 2000);
  }
  TEST_CASE("equivalent pairs get one value and atom order never changes the couplings, NCI 2000-2499") {
    check_nci_slice(2000, 2500);
  }
  TEST_CASE("equivalent pairs get one value and atom order never changes the couplings, NCI 2500-2999") {
    check_nci_slice(2500, 3000);
  }
  TEST_CASE("equivalent pairs get one value and atom order never changes the couplings, NCI 3000-3499") {
    check_nci_slice(3000, 3500);
  }
  TEST_CASE("equivalent pairs get one value and atom order never changes the couplings, NCI 3500-3999") {
    check_nci_slice(3500, 4000);
  }
  TEST_CASE("equivalent pairs get one value and atom order never changes the couplings, NCI 4000-4499") {
    check_nci_slice(4000, 4500);
  }
  TEST_CASE("equivalent pairs get one value and atom order never changes the couplings, NCI 4500 onwards") {
    check_nci_slice(4500, 6000);
  }

  TEST_CASE("molecules without protons, long chains, isotopes, radicals and ions give sane output") {
    CHECK(run("ClC(Cl)(Cl)Cl").couplings.empty());
    CHECK(run("O=C=O").couplings.empty());
    std::string chain;
    for (int i = 0; i < 500; ++i) chain += 'C';
    const auto r = run(chain);
    // Counted by hand: 498 CH2 geminal + 2 x 3 CH3 geminal + 497 x 4 CH2-CH2
    // vicinal + 2 x 6 CH3-CH2 vicinal = 2504; nothing farther (no rule for
    // 4J/5J in saturated chains).
    CHECK(r.couplings.size() == 2504);
    for (const auto &c : r.couplings) CHECK(std::isfinite(c.j_hz));
    const char *odd[] = {"[13CH3]C(=O)O",
                         "[3H]CC",
                         "[2H]C([2H])([2H])[2H]",
                         "[CH2]CC",
                         "C[N+](C)(C)C",
                         "CC(=O)[O-]",
                         "[CH3+]",
                         "F[C](F)F",
                         "[Li]CC",
                         "C[Sn](C)(C)C",
                         "P",
                         "FC(F)=C(F)F",
                         "C=C=C",
                         "C#C",
                         "[H][H]",
                         "c1ccccc1.CCO",
                         "FC=CF"};
    for (const char *s : odd) {
      INFO(s);
      std::vector<std::string> warnings;
      const auto m = nmrpred::read_molecule(s, nmrpred::Format::Smiles);
      const auto c = nmrpred::compute_classes(m);
      std::vector<Coupling> cs;
      CHECK_NOTHROW(cs = nmrpred::predict_couplings(m, c, tables(), {}, &warnings));
      for (const auto &x : cs) {
        CHECK(std::isfinite(x.j_hz));
        CHECK(x.uncertainty_hz > 0);
        CHECK(x.a < x.b);
      }
    }
    bool tritium = false;
    for (const auto &s : run("[3H]CC").warnings) tritium |= s.find("tritium") != std::string::npos;
    CHECK(tritium);
  }

  TEST_CASE("bad arguments raise ArgumentError naming the problem") {
    const auto m = nmrpred::read_molecule("CCO", nmrpred::Format::Smiles);
    const auto other = nmrpred::compute_classes(nmrpred::read_molecule("CCCC", nmrpred::Format::Smiles));
    CHECK_THROWS_AS(nmrpred::predict_couplings(m, other, tables()), nmrpred::ArgumentError);
    CouplingOptions bad;
    bad.min_abs_hz = std::nan("");
    CHECK_THROWS_WITH_AS(nmrpred::predict_couplings(m, nmrpred::compute_classes(m), tables(), bad),
                         doctest::Contains("min_abs_hz"), nmrpred::ArgumentError);
    bad.min_abs_hz = -1;
    CHECK_THROWS_AS(nmrpred::predict_couplings(m, nmrpred::compute_classes(m), tables(), bad), nmrpred::ArgumentError);
  }

  TEST_CASE(
      "a malformed coupling table fails at load naming file and line; a set without couplings still predicts shifts") {
    const std::filesystem::path src(NMRPRED_TABLES_SOURCE_DIR);
    {
      TempDir dir("couplings-bad");
      auto text = read_text(src / "couplings" / "hh_rules.tsv");
      const auto at = text.find("hh-2j-sp3-base\t2\t-12.4");
      REQUIRE(at != std::string::npos);
      text.replace(at, std::string("hh-2j-sp3-base\t2\t-12.4").size(), "hh-2j-sp3-base\t2\tminus12");
      write_tables(dir.path, true, {"couplings/hh_rules.tsv", text});
      CHECK_THROWS_WITH_AS(nmrpred::Tables::load(dir.path.string()), doctest::Contains("couplings/hh_rules.tsv:6"),
                           nmrpred::TablesError);
    }
    {
      TempDir dir("couplings-unknown-id");
      auto text = read_text(src / "couplings" / "hh_rules.tsv");
      const auto at = text.find("hh-4j-allylic");
      REQUIRE(at != std::string::npos);
      text.replace(at, std::string("hh-4j-allylic").size(), "hh-4j-allylik");
      write_tables(dir.path, true, {"couplings/hh_rules.tsv", text});
      CHECK_THROWS_WITH_AS(nmrpred::Tables::load(dir.path.string()), doctest::Contains("unknown rule id"),
                           nmrpred::TablesError);
    }
    {
      TempDir dir("couplings-none");
      write_tables(dir.path, false);
      const auto t = nmrpred::Tables::load(dir.path.string());
      const auto m = nmrpred::read_molecule("CCO", nmrpred::Format::Smiles);
      const auto c = nmrpred::compute_classes(m);
      std::vector<std::string> warnings;
      CHECK(nmrpred::predict_couplings(m, c, *t, {}, &warnings).empty());
      bool said = false;
      for (const auto &s : warnings) said |= s.find("couplings/hh_rules.tsv") != std::string::npos;
      CHECK(said);
    }
  }
}
