// Equivalence classes: orbits of the automorphism group of the coloured graph
// (topological) and of its stereo-respecting subgroup (chemical).
//
// Orbits are found by an individualisation-refinement search for automorphisms
// mapping a class representative onto each candidate; every automorphism found
// merges all of its cycles at once, so most candidates need no search.
//
// Stereo model (docs/equivalence.md): every tetrahedral atom (4 neighbours, or 3
// plus a lone pair on S, Se, P, As) and every double bond outside small rings has
// a configuration, the input's when given, otherwise a canonical one. A symmetry
// either keeps every configuration (proper) or inverts every tetrahedral one
// (improper, a mirror image); double-bond geometry is kept by both. Atoms
// exchanged by such a symmetry are homotopic or enantiotopic and share a class;
// atoms only exchanged by other automorphisms are diastereotopic.

#include <nmrpred/classes.hpp>
#include <nmrpred/error.hpp>

#include <algorithm>
#include <functional>
#include <memory>
#include <numeric>
#include <string>
#include <tuple>

#include <fmt/format.h>

#include "graph/heavy_classes.hpp"
#include "graph/partition.hpp"
#include "graph/union_find.hpp"
#include "support/thread_lease.hpp"

namespace nmrpred {

namespace {

using detail::DoubleConfig;
using detail::Graph;
using detail::kUnset;
using detail::Partition;
using detail::RefineScratch;
using detail::TetraConfig;

constexpr long kNodesPerSearch = 20000;
constexpr long kNodesPerMolecule = 400000;

using detail::UnionFind;

std::uint8_t order_code(BondOrder o) { return static_cast<std::uint8_t>(o); }

std::uint64_t atom_colour(const Atom &a, std::uint32_t degree) {
  std::uint64_t c = a.atomic_number;
  c = (c << 16) | a.isotope;
  c = (c << 8) | static_cast<std::uint8_t>(a.formal_charge + 128);
  c = (c << 4) | (a.radical_electrons & 0xF);
  c = (c << 1) | (a.aromatic ? 1 : 0);
  c = (c << 8) | std::min<std::uint32_t>(degree, 255);
  return c;
}

// Elements whose three-coordinate neutral or cationic form keeps its
// configuration (sulfoxides, sulfonium ions, phosphines): common practice.
bool lone_pair_centre(const Atom &a, std::size_t degree) {
  if (degree != 3) return false;
  switch (a.atomic_number) {
    case 16:
    case 34: return a.formal_charge >= 0;
    case 15:
    case 33: return a.formal_charge == 0;
    default: return false;
  }
}

// Size of the smallest ring through bond u-v (0 if none within `limit`).
// `seen` (one flag per atom, all clear) and `visited` are scratch; `seen`
// is left clear.
int smallest_ring(const Molecule &m, std::uint32_t u, std::uint32_t v, int limit, std::vector<char> &seen,
                  std::vector<std::uint32_t> &visited) {
  // The atoms of one breadth are visited[begin, end).
  const std::size_t heavy = m.heavy_atom_count();
  visited.assign(1, u);
  seen[u] = 1;
  int found = 0;
  std::size_t begin = 0;
  for (int d = 1; d < limit && begin < visited.size() && !found; ++d) {
    const std::size_t end = visited.size();
    for (std::size_t i = begin; i < end && !found; ++i) {
      const std::uint32_t a = visited[i];
      // Hydrogens, after every heavy atom in a neighbour list, close no ring.
      for (auto it = m.neighbours_begin(a); it != m.neighbours_end(a) && *it < heavy; ++it) {
        const auto b = *it;
        if (a == u && b == v) continue;
        if (b == v) {
          found = d + 1;
          break;
        }
        if (!seen[b]) {
          seen[b] = 1;
          visited.push_back(b);
        }
      }
    }
    begin = end;
  }
  for (auto a : visited) seen[a] = 0;
  return found;
}

// Insertion sort for the few ligands of one atom, where std::sort's set-up
// costs more than the sorting.
template <class T, class Less>
void sort_few(T *first, T *last, Less less) {
  for (T *i = first + 1; i < last; ++i) {
    const T x = *i;
    T *j = i;
    for (; j > first && less(x, *(j - 1)); --j) *j = *(j - 1);
    *j = x;
  }
}

// Parity of the permutation taking `from` to `to` (both hold the same values).
bool even_permutation(std::array<std::int32_t, 4> from, const std::array<std::int32_t, 4> &to) {
  int swaps = 0;
  for (int i = 0; i < 4; ++i) {
    if (from[i] == to[i]) continue;
    for (int j = i + 1; j < 4; ++j)
      if (from[j] == to[i]) {
        std::swap(from[i], from[j]);
        ++swaps;
        break;
      }
  }
  return swaps % 2 == 0;
}

// A discrete ordering of the atoms that is canonical up to automorphism:
// individualise an atom of the first non-singleton cell and refine, until every
// cell is a singleton. Whichever atom of a cell is picked, the orderings
// obtained differ by a symmetry of the graph, so configurations derived from
// this order relate to each other the same way for every input atom order.
// `p` and `s` are the caller's buffers: p starts as the refined partition of g.
const std::vector<std::uint32_t> &canonical_positions(const Graph &g, Partition &p, RefineScratch &s) {
  s.reset(g.n);
  std::uint32_t first = 0;
  while (true) {
    while (first < g.n && p.end[first] - first == 1) ++first;
    if (first >= g.n) break;
    // A cell of leaves on one singleton parent (the hydrogens of a CH2 or
    // CH3, after the parent was fixed): individualising a member refines
    // nothing, as the only cell it touches is that parent's, so the whole
    // cell falls apart into singletons in its present order. Doing that
    // directly gives the same partition without the refinement passes.
    const std::uint32_t e = p.end[first];
    bool twin_leaves = true;
    for (std::uint32_t k = first; k < e && twin_leaves; ++k) {
      const std::uint32_t a = p.elems[k];
      if (!g.leaf[a]) {
        twin_leaves = false;
        break;
      }
      const std::uint32_t parent_cell = p.cell[g.nbr[g.off[a]]];
      twin_leaves = p.end[parent_cell] - parent_cell == 1;
    }
    if (twin_leaves) {
      for (std::uint32_t k = first; k < e; ++k) {
        p.end[k] = k + 1;
        p.cell[p.elems[k]] = k;
      }
      continue;
    }
    detail::individualize(g, p, p.elems[first], s, false);
  }
  return p.pos;
}

// Whether the canonical order could give other classes than the order of
// the base partition `p`. The canonical order refines p's, so it differs
// only between atoms of one cell, and the stereo model compares only the
// neighbours of one atom. Such a tie cannot matter at an atom alone in its
// cell (every symmetry fixes it, and the parity of a permutation of its
// neighbours does not depend on the order that stores its configuration),
// nor between three or more equal leaves (united whatever the configuration).
bool canonical_ties_matter(const Graph &g, const Partition &p) {
  for (std::uint32_t c = 0; c < g.n; ++c) {
    if (p.size_of(c) == 1) continue;
    for (std::uint32_t k1 = g.off[c]; k1 < g.off[c + 1]; ++k1) {
      const std::uint32_t l = g.nbr[k1];
      std::uint32_t tied = 1;
      for (std::uint32_t k2 = g.off[c]; k2 < g.off[c + 1]; ++k2)
        tied += k2 != k1 && p.cell[g.nbr[k2]] == p.cell[l];
      // Degree is part of the colour, so a cell holding a leaf holds leaves only.
      if (tied == 2 || (tied > 2 && !g.leaf[l])) return true;
    }
  }
  return false;
}

// A remark on a stereo element, written out as text only at the end, so the
// list of texts is allocated once at its final size.
struct StereoNote {
  enum Kind : std::uint8_t { kCentre, kRelative, kDoubleBond } kind;
  std::uint32_t a, b;  // the atom, or the two atoms of the bond
};

// Whole-molecule stereo model in molecule indices, with the buffers that
// build it (kept from one molecule to the next in a Workspace).
struct StereoModel {
  std::vector<TetraConfig> tetra;
  std::vector<DoubleConfig> dbl;
  std::vector<StereoNote> notes;
  // build_stereo() scratch.
  std::vector<std::uint32_t> pseudo, ring_visited;
  std::vector<char> ring_seen;
  std::vector<std::int32_t> given;
  struct GivenDouble {
    std::uint32_t lo, hi, index;  // bond atoms in increasing order; index into the molecule's list
  };
  std::vector<GivenDouble> given_db;
};

void append_notes(const std::vector<StereoNote> &notes, std::vector<std::string> &out) {
  for (const auto &note : notes) switch (note.kind) {
      case StereoNote::kCentre:
        out.push_back(fmt::format(
            "atom {}: stereocentre without a given configuration; classes are those of one canonical configuration",
            note.a));
        break;
      case StereoNote::kRelative:
        out.push_back(fmt::format(
            "atom {}: relative configuration (cis/trans on a ring, or pseudo-asymmetric) not given; "
            "classes are those of one canonical diastereomer",
            note.a));
        break;
      case StereoNote::kDoubleBond:
        out.push_back(fmt::format(
            "bond {}={}: double-bond geometry not given; classes are those of one canonical geometry", note.a, note.b));
        break;
    }
}

// Fills `sm` (whose buffers keep their capacity). `heavy_only`: for
// heavy_atom_classes(), which has no use for the elements that two
// hydrogens on one atom make free (tetrahedral atoms with two or more, double
// bonds with an end carrying two) nor for notes: those are left out.
void build_stereo(const Molecule &m, const std::vector<std::uint32_t> &canon, const std::vector<std::uint32_t> &topo,
                  StereoModel &sm, bool heavy_only = false) {
  sm.tetra.clear();
  sm.dbl.clear();
  sm.notes.clear();
  const std::size_t n = m.atom_count();
  // Centres whose configuration matters only relative to another one: two
  // equivalent non-terminal ligands and two different others (cis/trans on a
  // ring, pseudo-asymmetric atoms). Reported when another stereo element exists.
  std::vector<std::uint32_t> &pseudo = sm.pseudo;
  pseudo.clear();
  int stereo_elements = 0;
  auto pseudo_centre = [&](const std::array<std::int32_t, 4> &l, const std::array<std::int64_t, 4> &cls) {
    // cls is sorted; exactly one equal pair, and those ligands are not leaves.
    int pairs = 0;
    std::int64_t tied = -2;
    for (int k = 0; k + 1 < 4; ++k)
      if (cls[k] == cls[k + 1]) {
        ++pairs;
        tied = cls[k];
      }
    if (pairs != 1 || tied < 0) return false;
    for (auto x : l)
      if (x >= 0 && static_cast<std::int64_t>(topo[x]) == tied && m.degree(x) < 2) return false;
    return true;
  };
  // Most inputs give no configuration: then no table of them is needed.
  std::vector<std::int32_t> &given = sm.given;
  given.clear();
  if (!m.tetrahedral_stereo().empty()) {
    given.assign(n, -1);
    for (std::size_t i = 0; i < m.tetrahedral_stereo().size(); ++i)
      given[m.tetrahedral_stereo()[i].centre] = static_cast<std::int32_t>(i);
  }
  const Atom *atoms = m.atoms().data();
  auto by_rank = [&](std::int32_t a, std::int32_t b) {
    // Lone pair last; then the canonical order (a refinement of the invariant
    // rank), so ties between equivalent ligands are broken the same way,
    // up to symmetry, for every input atom order.
    if (a < 0 || b < 0) return b < 0 && a >= 0;
    return canon[a] < canon[b];
  };
  const std::uint32_t heavy = static_cast<std::uint32_t>(m.heavy_atom_count());
  // Hydrogens on atom c: the end of its neighbour list.
  auto hydrogens = [&](std::uint32_t c) {
    const std::uint32_t *nb = m.neighbours_begin(c), *end = m.neighbours_end(c);
    std::uint32_t k = 0;
    while (end - k > nb && *(end - k - 1) >= heavy) ++k;
    return k;
  };
  // Hydrogens (the atoms from `heavy` on) are never tetrahedral centres.
  for (std::uint32_t c = 0; c < heavy; ++c) {
    const std::uint32_t *nb = m.neighbours_begin(c), *nb_end = m.neighbours_end(c);
    const auto deg = static_cast<std::size_t>(nb_end - nb);
    if (deg != 4 && !lone_pair_centre(atoms[c], deg)) continue;
    if (heavy_only && hydrogens(c) >= 2) continue;
    TetraConfig t;
    t.centre = c;
    if (!given.empty() && given[c] >= 0) {
      t.lig = m.tetrahedral_stereo()[given[c]].ligands;
      ++stereo_elements;
    } else {
      std::array<std::int32_t, 4> l{{-1, -1, -1, -1}};
      int k = 0;
      for (auto it = nb; it != nb_end; ++it) l[k++] = static_cast<std::int32_t>(*it);
      sort_few(l.begin(), l.end(), by_rank);
      t.lig = l;
      if (heavy_only) {
        sm.tetra.push_back(t);
        continue;
      }
      // Report only real stereocentres: four ligands of distinct topological class.
      std::array<std::int64_t, 4> cls;
      for (int q = 0; q < 4; ++q) cls[q] = l[q] < 0 ? -1 : static_cast<std::int64_t>(topo[l[q]]);
      sort_few(cls.begin(), cls.end(), std::less<std::int64_t>());
      if (std::adjacent_find(cls.begin(), cls.end()) == cls.end()) {
        sm.notes.push_back({StereoNote::kCentre, c, 0});
        ++stereo_elements;
      } else if (pseudo_centre(l, cls)) {
        pseudo.push_back(c);
      }
    }
    sm.tetra.push_back(t);
  }
  if (pseudo.size() + static_cast<std::size_t>(stereo_elements) >= 2)
    for (auto c : pseudo) sm.notes.push_back({StereoNote::kRelative, c, 0});
  // Given geometries by bond, sorted; of two given for one bond the later counts.
  auto &given_db = sm.given_db;
  given_db.clear();
  const auto &db_stereo = m.double_bond_stereo();
  for (std::size_t i = 0; i < db_stereo.size(); ++i) {
    const auto &d = db_stereo[i];
    given_db.push_back({std::min(d.begin, d.end), std::max(d.begin, d.end), static_cast<std::uint32_t>(i)});
  }
  auto db_less = [](const StereoModel::GivenDouble &x, const StereoModel::GivenDouble &y) {
    return std::tie(x.lo, x.hi, x.index) < std::tie(y.lo, y.hi, y.index);
  };
  std::sort(given_db.begin(), given_db.end(), db_less);
  // The geometry given for bond u-v (u < v for a match), or null.
  auto given_geometry = [&](std::uint32_t u, std::uint32_t v) -> const DoubleBondStereo * {
    const StereoModel::GivenDouble past{u, v, kUnset};
    auto it = std::upper_bound(given_db.begin(), given_db.end(), past, db_less);
    if (it == given_db.begin() || (it - 1)->lo != u || (it - 1)->hi != v) return nullptr;
    return &db_stereo[(it - 1)->index];
  };
  // The one or two substituents of a double-bond atom other than its partner.
  struct Others {
    std::int32_t at[2] = {-1, -1};
    std::size_t count = 0;
    const std::int32_t *begin() const { return at; }
    const std::int32_t *end() const { return at + count; }
    std::int32_t *begin() { return at; }
    std::int32_t *end() { return at + count; }
  };
  std::vector<char> &ring_seen = sm.ring_seen;
  std::vector<std::uint32_t> &ring_visited = sm.ring_visited;
  // ring_seen is left clear by smallest_ring(), which cannot throw half-way
  // once ring_visited holds every atom: only its size needs checking.
  if (ring_seen.size() < n) ring_seen.assign(n, 0);
  ring_visited.reserve(n);
  for (const auto &b : m.bonds()) {
    if (b.order != BondOrder::Double) continue;
    const auto u = b.begin, v = b.end;
    const std::size_t du = m.degree(u), dv = m.degree(v);
    if (du < 2 || dv < 2 || du > 3 || dv > 3) continue;
    if (heavy_only && ((du == 3 && hydrogens(u) == 2) || (dv == 3 && hydrogens(v) == 2))) continue;
    auto others = [&](std::uint32_t a, std::uint32_t partner) {
      Others r;
      for (auto it = m.neighbours_begin(a); it != m.neighbours_end(a); ++it)
        if (*it != partner) r.at[r.count++] = static_cast<std::int32_t>(*it);
      return r;
    };
    auto ou = others(u, v), ov = others(v, u);
    // Cumulated double bonds (allenes) are not modelled.
    bool cumulated = false;
    for (auto x : ou) cumulated |= m.bond(m.bond_between(u, x)).order == BondOrder::Double;
    for (auto x : ov) cumulated |= m.bond(m.bond_between(v, x)).order == BondOrder::Double;
    if (cumulated) continue;
    // In rings of fewer than 8 atoms the ring fixes the geometry and every
    // automorphism keeps it, so no constraint is needed.
    const int ring = smallest_ring(m, u, v, 8, ring_seen, ring_visited);
    if (ring > 0 && ring < 8) continue;
    DoubleConfig d;
    d.u = u;
    d.v = v;
    if (const auto *s = given_geometry(u, v)) {
      const bool forward = s->begin == u;
      d.ru = static_cast<std::int32_t>(forward ? s->ref_begin : s->ref_end);
      d.rv = static_cast<std::int32_t>(forward ? s->ref_end : s->ref_begin);
      d.cis = s->cis;
    } else {
      sort_few(ou.begin(), ou.end(), by_rank);
      sort_few(ov.begin(), ov.end(), by_rank);
      d.ru = ou.at[ou.count - 1];
      d.rv = ov.at[ov.count - 1];
      d.cis = false;  // canonical choice: highest-ranked substituents trans
      if (heavy_only) {
        sm.dbl.push_back(d);
        continue;
      }
      auto distinct = [&](const Others &o) { return o.count == 1 || topo[o.at[0]] != topo[o.at[1]]; };
      if (distinct(ou) && distinct(ov))
        sm.notes.push_back({StereoNote::kDoubleBond, u, v});
    }
    sm.dbl.push_back(d);
  }
}

// A run of atom (or other) indices in someone else's storage.
template <class T>
struct Run {
  const T *first = nullptr, *last = nullptr;
  const T *begin() const { return first; }
  const T *end() const { return last; }
  std::size_t size() const { return static_cast<std::size_t>(last - first); }
  const T &operator[](std::size_t i) const { return first[i]; }
  friend bool operator==(const Run &x, const Run &y) { return std::equal(x.first, x.last, y.first, y.last); }
  friend bool operator<(const Run &x, const Run &y) {
    return std::lexicographical_compare(x.first, x.last, y.first, y.last);
  }
};
using AtomRange = Run<std::uint32_t>;

// Where a heavy atom's hydrogen count goes in its colour when the hydrogens
// are folded into it: above atom_colour()'s fields (element, bits 37-43).
constexpr int kFoldedHydrogensShift = 48;

// The coloured graph of `atoms` without stereo (tetra_of and dbl_of -1 per
// atom), written over `g` (whose buffers keep their capacity); sets local_of
// for those atoms. `fold_hydrogens`: `atoms` are heavy atoms and the
// hydrogens are left out of the graph, each atom's count of them going into
// its colour (with the degree it has with them).
void build_structure(const Molecule &m, AtomRange atoms, std::vector<std::uint32_t> &local_of, Graph &g,
                     bool fold_hydrogens = false) {
  const auto n = static_cast<std::uint32_t>(atoms.size());
  g.n = n;
  g.global.assign(atoms.begin(), atoms.end());
  for (std::uint32_t i = 0; i < n; ++i) local_of[atoms[i]] = i;
  g.off.resize(n + 1);
  g.colour.resize(n);
  g.leaf.resize(n);
  g.tetra.clear();
  g.dbl.clear();
  g.off[0] = 0;
  // Hydrogens come after every heavy atom and neighbour lists are sorted:
  // an atom's heavy neighbours are the front of its list.
  const std::uint32_t heavy = static_cast<std::uint32_t>(m.heavy_atom_count());
  auto kept_degree = [&](std::uint32_t a) {
    const std::uint32_t *nb = m.neighbours_begin(a), *end = m.neighbours_end(a);
    if (!fold_hydrogens) return static_cast<std::uint32_t>(end - nb);
    std::uint32_t d = 0;
    while (nb + d < end && nb[d] < heavy) ++d;
    return d;
  };
  for (std::uint32_t i = 0; i < n; ++i) g.off[i + 1] = g.off[i] + kept_degree(atoms[i]);
  g.nbr.resize(g.off[n]);
  g.order.resize(g.off[n]);
  // Raw pointers: the char stores below may alias any vector's internals.
  const std::uint32_t *off = g.off.data(), *local = local_of.data();
  std::uint32_t *nbr = g.nbr.data();
  std::uint8_t *order = g.order.data();
  char *leaf = g.leaf.data();
  std::uint64_t *colour = g.colour.data();
  const Atom *mol_atoms = m.atoms().data();
  const Bond *bonds = m.bonds().data();
  std::vector<std::pair<std::uint32_t, std::uint8_t>> tmp;
  for (std::uint32_t i = 0; i < n; ++i) {
    const auto a = atoms[i];
    const std::uint32_t *nb = m.neighbours_begin(a), *bid = m.bond_ids_begin(a);
    const std::uint32_t deg = off[i + 1] - off[i];
    if (fold_hydrogens) {
      const auto all = static_cast<std::uint32_t>(m.neighbours_end(a) - nb);
      colour[i] = atom_colour(mol_atoms[a], all) | std::uint64_t{all - deg} << kFoldedHydrogensShift;
    } else {
      colour[i] = atom_colour(mol_atoms[a], deg);
    }
    leaf[i] = deg == 1;
    std::uint32_t *out = nbr + off[i];
    std::uint8_t *out_order = order + off[i];
    bool sorted = true;
    for (std::uint32_t k = 0; k < deg; ++k) {
      out[k] = local[nb[k]];
      out_order[k] = order_code(bonds[bid[k]].order);
      sorted = sorted && (k == 0 || out[k - 1] < out[k]);
    }
    // The molecule's neighbour lists are sorted, and so are they here while
    // `atoms` is increasing within each fragment, as every caller has it.
    if (sorted) continue;
    tmp.clear();
    for (std::uint32_t k = 0; k < deg; ++k) tmp.emplace_back(out[k], out_order[k]);
    std::sort(tmp.begin(), tmp.end());
    for (std::uint32_t k = 0; k < deg; ++k) std::tie(out[k], out_order[k]) = tmp[k];
  }
  g.tetra_of.assign(g.n, -1);
  g.dbl_of.assign(g.n, -1);
}

// Gives g the configurations of `sm` that lie inside it (replacing any).
void add_stereo(const StereoModel &sm, Graph &g, std::vector<std::uint32_t> &local_of) {
  for (std::uint32_t i = 0; i < g.n; ++i) local_of[g.global[i]] = i;
  auto loc = [&](std::int32_t x) { return x < 0 ? -1 : static_cast<std::int32_t>(local_of[x]); };
  g.tetra.clear();
  g.dbl.clear();
  g.tetra_of.assign(g.n, -1);
  g.dbl_of.assign(g.n, -1);
  for (const auto &t : sm.tetra) {
    if (local_of[t.centre] >= g.n || g.global[local_of[t.centre]] != t.centre) continue;
    TetraConfig lt;
    lt.centre = local_of[t.centre];
    for (int k = 0; k < 4; ++k) lt.lig[k] = loc(t.lig[k]);
    g.tetra_of[lt.centre] = static_cast<std::int32_t>(g.tetra.size());
    g.tetra.push_back(lt);
  }
  for (const auto &d : sm.dbl) {
    if (local_of[d.u] >= g.n || g.global[local_of[d.u]] != d.u) continue;
    DoubleConfig ld{local_of[d.u], local_of[d.v], loc(d.ru), loc(d.rv), d.cis};
    const auto idx = static_cast<std::int32_t>(g.dbl.size());
    // build_stereo() leaves out cumulated bonds, so no atom ends two.
    g.dbl_of[ld.u] = idx;
    g.dbl_of[ld.v] = idx;
    g.dbl.push_back(ld);
  }
}

// The coloured graph of `atoms` with the configurations of `sm` (null: none).
void build_graph(const Molecule &m, AtomRange atoms, const StereoModel *sm,
                 std::vector<std::uint32_t> &local_of, Graph &g) {
  build_structure(m, atoms, local_of, g);
  if (sm) add_stereo(*sm, g, local_of);
}

// The base partition of one graph individualised at single atoms, each made
// once. Refinement looks only at the graph's structure (never at colours
// after the start, nor at stereo), so the topological and the stereo graph
// of one fragment share these, as do the searches of every sign.
struct IndividualisedEntry {
  Partition p;
  std::uint64_t trace = 0;
};

// Partitions and search levels outlive one molecule in a per-thread
// Workspace, so copying into them reuses their capacity: a fresh partition
// costs four allocations, more than refining a small molecule.
struct EntryPool {
  std::vector<std::unique_ptr<IndividualisedEntry>> entries;  // stable addresses
  std::size_t used = 0;
  IndividualisedEntry &take() {
    if (used == entries.size()) entries.push_back(std::make_unique<IndividualisedEntry>());
    return *entries[used++];
  }
};

class Individualised {
 public:
  using Entry = IndividualisedEntry;
  // `scratch` is clean and sized for at least g.n atoms; it may be shared
  // with other Individualised objects, as refinements never interleave.
  // `made` holds g.n null pointers, the caller's so that it can be reused.
  Individualised(const Graph &g, const Partition &base, EntryPool &pool, RefineScratch &scratch, Entry **made)
      : g_(g), base_(base), pool_(pool), scratch_(scratch), made_(made) {}
  const Entry &at(std::uint32_t atom) {
    auto &slot = made_[atom];
    if (!slot) {
      slot = &pool_.take();
      slot->p = base_;
      slot->trace = detail::individualize(g_, slot->p, atom, scratch_);
    }
    return *slot;
  }
  const Partition &base() const { return base_; }
  // Refinement buffers for further work on the same graph (left clean by
  // every refinement, so users can take turns).
  RefineScratch &scratch() { return scratch_; }

 private:
  const Graph &g_;
  const Partition &base_;
  EntryPool &pool_;
  RefineScratch &scratch_;
  Entry **made_;  // per atom, null until made
};

struct SearchLevel {
  Partition q1, q2;
};
// Storage of automorphism searches that never run at the same time: the
// partitions of each depth and the buffers of direct().
struct SearchLevels {
  std::vector<std::unique_ptr<SearchLevel>> by_depth;
  // direct(): images already used, and the atoms in the order they were mapped.
  std::vector<char> taken;
  std::vector<std::uint32_t> queue;
  // orbits(): the group of each atom.
  std::vector<std::uint32_t> group_of;
};

// A complete map of atoms as AutomorphismSearch::tetra_ok() and double_ok()
// read it (-1, a lone pair, maps to itself).
struct CompleteMap {
  const std::vector<std::uint32_t> &sigma;
  std::int32_t operator()(std::int32_t a) const {
    return a < 0 ? -1 : static_cast<std::int32_t>(sigma[static_cast<std::uint32_t>(a)]);
  }
};

// Searches for an automorphism mapping r to x. sign 0: graph only; +1: proper
// symmetry (all configurations kept); -1: improper (tetrahedral ones inverted).
// With stereo, one search looks for both kinds at once: the two share the
// search tree and differ only in which branches the configurations prune, so
// walking it once saves the second walk when no proper symmetry exists.
class AutomorphismSearch {
 public:
  // `stereo`: false, graph automorphisms only; true, proper or improper
  // symmetries (at a leaf of the search a proper one is tried first).
  // `start` holds the base partition of a graph with g's structure.
  // `levels` holds the partitions of each search depth; searches that never
  // run at the same time may share it.
  AutomorphismSearch(const Graph &g, Individualised &start, bool stereo, long &budget, SearchLevels &levels)
      : g_(g), start_(start), stereo_(stereo), budget_(budget), scratch_(start.scratch()), levels_(levels) {}

  bool find(std::uint32_t r, std::uint32_t x, std::vector<std::uint32_t> &sigma) {
    if (stereo_ && !improper_possible() && twins_only_swapped_improperly(r, x)) return false;
    if (direct(r, x, sigma)) return true;
    // Refinement is deterministic and leaves its scratch clean, so a
    // partition individualised earlier is the one this call would make.
    const auto &e1 = start_.at(r);
    const auto &e2 = start_.at(x);
    if (e1.trace != e2.trace) return false;
    local_budget_ = kNodesPerSearch;
    sigma.assign(g_.n, kUnset);
    return search(e1.p, e2.p, sigma, 0, stereo_ ? signs() : 0u);
  }
  bool exhausted() const { return exhausted_; }
  // Whether the graph symmetry `sigma` is, or can be made (which may change
  // it), a symmetry of a kind this search looks for.
  bool fits(std::vector<std::uint32_t> &sigma) { return fits_a_sign(sigma, kUnset); }

 private:
  // The kinds of symmetry worth looking for.
  unsigned signs() { return improper_possible() ? kBothSigns : kProper; }

  // Whether `l`, a neighbour of c, is the only one in its cell of the base
  // partition, so that every symmetry fixing c fixes l too.
  bool alone_in_cell(std::uint32_t c, std::uint32_t l) const {
    const std::vector<std::uint32_t> &cell = start_.base().cell;
    for (std::uint32_t k = g_.off[c]; k < g_.off[c + 1]; ++k)
      if (g_.nbr[k] != l && cell[g_.nbr[k]] == cell[l]) return false;
    return true;
  }

  // False when a tetrahedral centre alone in its cell has its ligands alone
  // in theirs: every symmetry fixes it and its ligands, so none inverts it
  // (computed once).
  bool improper_possible() {
    if (improper_ == Tri::Unknown) {
      improper_ = Tri::Yes;
      for (const auto &t : g_.tetra) {
        if (start_.base().size_of(t.centre) != 1) continue;
        bool fixed = true;
        for (auto l : t.lig) fixed = fixed && (l < 0 || alone_in_cell(t.centre, static_cast<std::uint32_t>(l)));
        if (fixed) {
          improper_ = Tri::No;
          break;
        }
      }
    }
    return improper_ == Tri::Yes;
  }

  // Whether r and x are equal leaves on one tetrahedral centre whose other
  // ligands are alone in their cells. Exchanging r and x alone is then a
  // graph symmetry that inverts that centre; any symmetry taking r to x is
  // it after one fixing r, which fixes every ligand of the centre: so it
  // inverts the centre and cannot be proper.
  bool twins_only_swapped_improperly(std::uint32_t r, std::uint32_t x) const {
    if (!g_.leaf[r] || !equal_leaves(static_cast<std::int32_t>(r), static_cast<std::int32_t>(x))) return false;
    const std::uint32_t p = g_.nbr[g_.off[r]];
    if (g_.nbr[g_.off[x]] != p || g_.tetra_of[p] < 0) return false;
    for (std::uint32_t k = g_.off[p]; k < g_.off[p + 1]; ++k) {
      const std::uint32_t l = g_.nbr[k];
      if (l != r && l != x && !alone_in_cell(p, l)) return false;
    }
    return true;
  }

  bool same_structure(const Partition &p1, const Partition &p2) const {
    for (std::uint32_t s = 0; s < g_.n; s = p1.end[s])
      if (p2.end[s] != p1.end[s] || p2.cell[p2.elems[s]] != s) return false;
    return true;
  }

  // Image of local atom a under the partial map defined by singleton cells.
  static std::int32_t image_of(const Partition &p1, const Partition &p2, std::int32_t a) {
    if (a < 0) return -1;
    if (p1.size_of(static_cast<std::uint32_t>(a)) != 1) return -2;
    return static_cast<std::int32_t>(p2.elems[p1.pos[static_cast<std::uint32_t>(a)]]);
  }

  // -2 in an image means "not yet known"; a check with unknowns passes.
  // Sign masks: which kinds of symmetry a branch may still yield.
  static constexpr unsigned kProper = 1, kImproper = 2, kBothSigns = 3;

  template <class Map>
  bool tetra_ok(const TetraConfig &t, Map &&map, int sign) const {
    const auto c = map(static_cast<std::int32_t>(t.centre));
    if (c == -2) return true;
    const auto ti = g_.tetra_of[static_cast<std::uint32_t>(c)];
    if (ti < 0) return false;
    std::array<std::int32_t, 4> img;
    for (int k = 0; k < 4; ++k) {
      img[k] = map(t.lig[k]);
      if (img[k] == -2) return true;
    }
    const bool even = even_permutation(img, g_.tetra[ti].lig);
    return even == (sign > 0);
  }

  template <class Map>
  bool double_ok(const DoubleConfig &d, Map &&map) const {
    const auto u = map(static_cast<std::int32_t>(d.u)), v = map(static_cast<std::int32_t>(d.v));
    const auto ru = map(d.ru), rv = map(d.rv);
    if (u == -2 || v == -2 || ru == -2 || rv == -2) return true;
    const auto di = g_.dbl_of[static_cast<std::uint32_t>(u)];
    if (di < 0) return false;
    const auto &e = g_.dbl[static_cast<std::uint32_t>(di)];
    const bool fwd = e.u == static_cast<std::uint32_t>(u) && e.v == static_cast<std::uint32_t>(v);
    const bool rev = e.v == static_cast<std::uint32_t>(u) && e.u == static_cast<std::uint32_t>(v);
    if (!fwd && !rev) return false;
    const std::int32_t bu = fwd ? e.ru : e.rv, bv = fwd ? e.rv : e.ru;
    const bool cis = e.cis ^ (ru != bu) ^ (rv != bv);
    return cis == d.cis;
  }

  // The signs of `mask` that the configurations mapped so far allow.
  unsigned stereo_ok_partial(const Partition &p1, const Partition &p2, unsigned mask) const {
    if (mask == 0) return 0;
    auto map = [&](std::int32_t a) { return image_of(p1, p2, a); };
    for (const auto &d : g_.dbl)
      if (!double_ok(d, map)) return 0;
    for (const auto &t : g_.tetra) {
      if ((mask & kProper) && !tetra_ok(t, map, +1)) mask &= ~kProper;
      if ((mask & kImproper) && !tetra_ok(t, map, -1)) mask &= ~kImproper;
      if (mask == 0) return 0;
    }
    return mask;
  }

  // `mask`: the signs still possible (0 for a search without stereo).
  bool search(const Partition &p1, const Partition &p2, std::vector<std::uint32_t> &sigma, std::size_t depth,
              unsigned mask) {
    if (--local_budget_ < 0 || --budget_ < 0) {
      exhausted_ = true;
      return false;
    }
    if (!same_structure(p1, p2)) return false;
    if (stereo_) {
      mask = stereo_ok_partial(p1, p2, mask);
      if (mask == 0) return false;
    }
    std::uint32_t target = kUnset;
    for (std::uint32_t s = 0; s < g_.n && target == kUnset; s = p1.end[s]) {
      if (p1.end[s] - s < 2) continue;
      for (std::uint32_t k = s; k < p1.end[s]; ++k)
        if (!g_.leaf[p1.elems[k]]) {
          target = s;
          break;
        }
    }
    if (target == kUnset) {
      if (!stereo_) return finish(p1, p2, sigma, 0);
      return ((mask & kProper) && finish(p1, p2, sigma, +1)) || ((mask & kImproper) && finish(p1, p2, sigma, -1));
    }
    // Partitions of this depth live in reused storage: copying into them
    // keeps their capacity, where fresh copies cost an allocation each.
    if (levels_.by_depth.size() <= depth) levels_.by_depth.push_back(std::make_unique<SearchLevel>());
    SearchLevel &lv = *levels_.by_depth[depth];
    Partition &q1 = lv.q1;
    q1 = p1;
    const std::uint32_t v = q1.elems[target];
    const auto t1 = detail::individualize(g_, q1, v, scratch_);
    for (std::uint32_t k = target; k < p2.end[target]; ++k) {
      Partition &q2 = lv.q2;
      q2 = p2;
      const auto t2 = detail::individualize(g_, q2, p2.elems[k], scratch_);
      if (t1 != t2) continue;
      if (search(q1, q2, sigma, depth + 1, mask)) return true;
      if (exhausted_) return false;
    }
    return false;
  }

  // All non-leaf atoms are mapped; the remaining cells are sets of equal
  // leaves on one parent. Pick for each set a bijection that suits the local
  // stereo, then verify the whole map.
  // `sign` as for the search: 0, +1 or -1.
  bool finish(const Partition &p1, const Partition &p2, std::vector<std::uint32_t> &sigma, int sign) {
    std::fill(sigma.begin(), sigma.end(), kUnset);
    for (std::uint32_t s = 0; s < g_.n; s = p1.end[s])
      if (p1.end[s] - s == 1) sigma[p1.elems[s]] = p2.elems[s];
    auto map = [&](std::int32_t a) -> std::int32_t {
      if (a < 0) return -1;
      const auto y = sigma[static_cast<std::uint32_t>(a)];
      return y == kUnset ? -2 : static_cast<std::int32_t>(y);
    };
    for (std::uint32_t s = 0; s < g_.n; s = p1.end[s]) {
      const std::uint32_t e = p1.end[s];
      if (e - s == 1) continue;
      const std::uint32_t parent = g_.nbr[g_.off[p1.elems[s]]];
      auto &images = images_;
      images.assign(p2.elems.begin() + s, p2.elems.begin() + e);
      std::sort(images.begin(), images.end());
      const bool enumerate = sign != 0 && images.size() <= 6;
      bool placed = false;
      do {
        for (std::uint32_t k = s; k < e; ++k) sigma[p1.elems[k]] = images[k - s];
        if (!enumerate) {
          placed = true;
          break;
        }
        bool ok = true;
        if (g_.tetra_of[parent] >= 0) ok = tetra_ok(g_.tetra[g_.tetra_of[parent]], map, sign);
        if (g_.dbl_of[parent] >= 0) ok = ok && double_ok(g_.dbl[static_cast<std::uint32_t>(g_.dbl_of[parent])], map);
        if (ok) {
          placed = true;
          break;
        }
      } while (std::next_permutation(images.begin(), images.end()));
      if (!placed) return false;
    }
    return is_symmetry(sigma, sign);
  }

  // Whether the complete map `sigma` is a symmetry of kind `sign` (0, +1 or -1).
  bool is_symmetry(const std::vector<std::uint32_t> &sigma, int sign) const {
    return is_graph_symmetry(sigma) && keeps_configurations(sigma, sign);
  }

  bool is_graph_symmetry(const std::vector<std::uint32_t> &sigma) const {
    // Every bond a-b must map to a bond sigma(a)-sigma(b) of the same order.
    // sigma is one-to-one and keeps colours, degree among them, so both
    // graphs have as many bonds: checking each bond from one end suffices,
    // and non-bonds then map to non-bonds. Neighbour lists are short, so
    // each image is looked up by a scan.
    const std::uint32_t *off = g_.off.data(), *nbr = g_.nbr.data(), *sg = sigma.data();
    const std::uint8_t *order = g_.order.data();
    const std::uint64_t *colour = g_.colour.data();
    for (std::uint32_t a = 0; a < g_.n; ++a) {
      const std::uint32_t y = sg[a];
      if (y == kUnset || colour[a] != colour[y]) return false;
      for (std::uint32_t k = off[a]; k < off[a + 1]; ++k) {
        const std::uint32_t b = nbr[k];
        if (b < a) continue;
        const std::uint32_t yb = sg[b];
        if (y == a && yb == b) continue;  // a bond kept in place
        std::uint32_t f = off[y];
        while (f < off[y + 1] && nbr[f] != yb) ++f;
        if (f == off[y + 1] || order[f] != order[k]) return false;
      }
    }
    return true;
  }

  // Whether the graph symmetry `sigma` is one of kind `sign`.
  bool keeps_configurations(const std::vector<std::uint32_t> &sigma, int sign) const {
    if (sign == 0) return true;
    const CompleteMap map{sigma};
    for (const auto &t : g_.tetra)
      if (!tetra_ok(t, map, sign)) return false;
    return keeps_double_bonds(map);
  }
  bool keeps_double_bonds(const CompleteMap &map) const {
    for (const auto &d : g_.dbl)
      if (!double_ok(d, map)) return false;
    return true;
  }

  // Most symmetries of a molecule need no search: map r to x, then walk
  // outwards pairing each unmapped neighbour with the first free neighbour of
  // its image that lies in the same cell of the base partition and is bonded
  // the same way. Whatever map this gives is verified in full, so a wrong
  // pairing costs only the walk before the search proper takes over; and as
  // orbits do not depend on which symmetries are found, the classes stay
  // those the search alone would give.
  bool direct(std::uint32_t r, std::uint32_t x, std::vector<std::uint32_t> &sigma) {
    if (g_.leaf[r] && g_.nbr[g_.off[r]] == g_.nbr[g_.off[x]] &&
        equal_leaves(static_cast<std::int32_t>(r), static_cast<std::int32_t>(x))) {
      // Equal leaves on one parent: exchanging them alone is a graph symmetry.
      sigma.resize(g_.n);
      std::iota(sigma.begin(), sigma.end(), 0u);
      std::swap(sigma[r], sigma[x]);
      return fits_a_sign(sigma, r);
    }
    sigma.assign(g_.n, kUnset);
    levels_.taken.assign(g_.n, 0);
    levels_.queue.resize(g_.n);
    // Raw pointers: stores through the char array may alias any vector's
    // internals, which would reload them at every step.
    const std::uint32_t *cell = start_.base().cell.data(), *off = g_.off.data(), *nbr = g_.nbr.data();
    const std::uint8_t *order = g_.order.data();
    std::uint32_t *sg = sigma.data(), *queue = levels_.queue.data();
    char *taken = levels_.taken.data();
    sg[r] = x;
    taken[x] = 1;
    queue[0] = r;
    std::uint32_t tail = 1;
    for (std::uint32_t head = 0; head < tail; ++head) {
      const std::uint32_t a = queue[head], y = sg[a];
      for (std::uint32_t e = off[a]; e < off[a + 1]; ++e) {
        const std::uint32_t u = nbr[e];
        if (sg[u] != kUnset) {
          // A bond between mapped atoms must map onto a bond of its order;
          // checked once, from its higher end, so that once every atom is
          // mapped the map is a graph symmetry without a second pass.
          if (u > a) continue;
          const std::uint32_t yu = sg[u];
          std::uint32_t f = off[y];
          while (f < off[y + 1] && nbr[f] != yu) ++f;
          if (f == off[y + 1] || order[f] != order[e]) return false;
          continue;
        }
        std::uint32_t v = kUnset;
        for (std::uint32_t f = off[y]; f < off[y + 1]; ++f) {
          const std::uint32_t w = nbr[f];
          if (!taken[w] && cell[w] == cell[u] && order[f] == order[e]) {
            v = w;
            break;
          }
        }
        if (v == kUnset) return false;
        sg[u] = v;
        taken[v] = 1;
        queue[tail++] = u;
      }
    }
    // A graph of several fragments is left to the search.
    if (tail != g_.n) return false;
    // Cells of the base partition keep colours (degree among them), the map
    // is one-to-one and every bond was checked: sigma is a graph symmetry.
    return fits_a_sign(sigma, r);
  }

  // Whether the graph symmetry `sigma`, taking r to its image, is or can be
  // made (see with_sign) a symmetry of a kind this search looks for.
  bool fits_a_sign(std::vector<std::uint32_t> &sigma, std::uint32_t r) {
    if (!stereo_) return true;
    return with_sign(sigma, r, +1) || (improper_possible() && with_sign(sigma, r, -1));
  }

  // Makes the graph symmetry `sigma` one of kind `sign` where that only takes
  // exchanging the images of two equal leaves on a tetrahedral centre (which
  // inverts that centre alone and keeps it a graph symmetry), then checks
  // the configurations. The image of `fixed` (kUnset: none) stays as it is;
  // so, if this fails, `sigma` is still a graph symmetry with the same image
  // of `fixed`, fit for a try with the other sign.
  bool with_sign(std::vector<std::uint32_t> &sigma, std::uint32_t fixed, int sign) {
    const CompleteMap map{sigma};
    const auto f = static_cast<std::int32_t>(fixed);
    bool any_swap = false;
    for (const auto &t : g_.tetra) {
      if (tetra_ok(t, map, sign)) continue;
      bool swapped = false;
      for (int i = 0; i < 4 && !swapped; ++i)
        for (int j = i + 1; j < 4 && !swapped; ++j)
          if (t.lig[i] != f && t.lig[j] != f && equal_leaves(t.lig[i], t.lig[j])) {
            std::swap(sigma[static_cast<std::uint32_t>(t.lig[i])], sigma[static_cast<std::uint32_t>(t.lig[j])]);
            swapped = true;
          }
      if (!swapped) return false;
      any_swap = true;
    }
    // Without a swap sigma is as the loop checked it, every tetrahedral
    // configuration passed, and only the double bonds are left to check.
    return any_swap ? keeps_configurations(sigma, sign) : keeps_double_bonds(map);
  }

  // Two leaves on one centre that any symmetry may exchange.
  bool equal_leaves(std::int32_t a, std::int32_t b) const {
    if (a < 0 || b < 0) return false;
    const auto ua = static_cast<std::uint32_t>(a), ub = static_cast<std::uint32_t>(b);
    return g_.leaf[ua] && g_.leaf[ub] && g_.colour[ua] == g_.colour[ub] && g_.order[g_.off[ua]] == g_.order[g_.off[ub]];
  }

  const Graph &g_;
  Individualised &start_;
  bool stereo_;
  long &budget_;
  long local_budget_ = 0;
  bool exhausted_ = false;
  enum class Tri { Unknown, Yes, No } improper_ = Tri::Unknown;
  RefineScratch &scratch_;
  std::vector<std::uint32_t> images_;           // finish(): one cell's images
  SearchLevels &levels_;                        // by search depth
};

void unite_cycles(UnionFind &uf, const std::vector<std::uint32_t> &sigma) {
  for (std::uint32_t a = 0; a < sigma.size(); ++a)
    if (sigma[a] != a) uf.unite(a, sigma[a]);
}

// Groups of atoms kept flat: group k is atoms[start[k]..start[k + 1]).
struct Groups {
  std::vector<std::uint32_t> atoms, start;
  std::size_t size() const { return start.empty() ? 0 : start.size() - 1; }
};

// Graph symmetries that the topological searches found, each with its
// fragment: most are symmetries with stereo too, or become so by exchanging
// equal leaves, which spares the stereo searches their walks.
struct FoundSymmetries {
  std::vector<std::vector<std::uint32_t>> sigma;  // the first `used` are valid
  std::vector<std::size_t> fragment;
  std::size_t used = 0;
  void clear() {
    used = 0;
    fragment.clear();
  }
  void add(std::size_t f, const std::vector<std::uint32_t> &s) {
    if (used == sigma.size()) sigma.emplace_back();
    sigma[used++] = s;
    fragment.push_back(f);
  }
};

// Orbits of one graph (fragment `fragment`). `cells` are candidate groups
// (each orbit lies inside one); `stereo` picks the kinds of automorphism
// allowed. `found` receives the graph symmetries found without
// stereo and seeds the search with stereo. `sigma` and `reps` are scratch.
void orbits(const Graph &g, Individualised &start, const Groups &cells, bool stereo, UnionFind &uf, long &budget,
            bool &exhausted, SearchLevels &levels, std::vector<std::uint32_t> &sigma, std::vector<std::uint32_t> &reps,
            FoundSymmetries &found, std::size_t fragment) {
  AutomorphismSearch search(g, start, stereo, budget, levels);
  if (stereo)
    for (std::size_t i = 0; i < found.used; ++i)
      if (found.fragment[i] == fragment) {
        sigma = found.sigma[i];
        if (search.fits(sigma)) unite_cycles(uf, sigma);
      }
  // Group of each atom, kUnset for atoms alone (whose orbit is known).
  std::vector<std::uint32_t> &group_of = levels.group_of;
  group_of.assign(g.n, kUnset);
  for (std::uint32_t c = 0; c < cells.size(); ++c)
    for (std::uint32_t k = cells.start[c]; k < cells.start[c + 1]; ++k) group_of[cells.atoms[k]] = c;
  // Whether the orbits of the parents of leaves r and x are known and
  // differ: every symmetry takes the parent of r to that of x. A group's
  // orbits are known once it is done, unless a search ran out of budget.
  auto parents_apart = [&](std::uint32_t r, std::uint32_t x, std::size_t current) {
    if (exhausted || !g.leaf[r] || !g.leaf[x]) return false;
    const std::uint32_t pr = g.nbr[g.off[r]], px = g.nbr[g.off[x]];
    const bool known = group_of[pr] == kUnset || group_of[pr] < current;
    return known && uf.find(pr) != uf.find(px);
  };
  for (std::size_t c = 0; c < cells.size(); ++c) {
    const std::uint32_t *cell = cells.atoms.data() + cells.start[c];
    const std::size_t cell_size = cells.start[c + 1] - cells.start[c];
    if (cell_size < 2) continue;
    reps.assign(1, cell[0]);
    for (std::size_t i = 1; i < cell_size; ++i) {
      const auto x = cell[i];
      // A symmetry found earlier may have put x with any representative:
      // then it is in no other's orbit (they are apart), so no search.
      const std::uint32_t root = uf.find(x);
      bool merged = false;
      for (auto r : reps) merged = merged || uf.find(r) == root;
      if (merged) continue;
      for (auto r : reps) {
        if (parents_apart(r, x, c)) continue;
        if (search.find(r, x, sigma)) {
          unite_cycles(uf, sigma);
          if (!stereo) found.add(fragment, sigma);
          merged = true;
          break;
        }
        exhausted |= search.exhausted();
      }
      if (!merged) reps.push_back(x);
    }
  }
}

// Twin leaves: equal leaves on one parent. Sets of three or more are always
// equivalent (a rotation about the parent bond exchanges them without touching
// any configuration); pairs are topologically equivalent.
// Equal leaves on one parent are those of one cell of the base partition `p`
// (same colour, and refinement tells the bond orders apart), and as p is
// equitable every parent has the same number of them: the cell's size over
// that of the parents' cell.
void unite_twins(const Graph &g, const Partition &p, UnionFind &uf, std::size_t min_size) {
  for (std::uint32_t s = 0; s < g.n; s = p.end[s]) {
    const std::uint32_t size = p.end[s] - s, first = p.elems[s];
    if (size < min_size || !g.leaf[first]) continue;
    if (size / p.size_of(g.nbr[g.off[first]]) < min_size) continue;
    for (std::uint32_t k = s; k < p.end[s]; ++k) {
      const std::uint32_t leaf = p.elems[k], parent = g.nbr[g.off[leaf]];
      // The parent's first neighbour in this cell stands for the set.
      std::uint32_t e = g.off[parent];
      while (p.cell[g.nbr[e]] != s) ++e;
      uf.unite(leaf, g.nbr[e]);
    }
  }
}

// Atoms grouped by their `within` value (groups with one atom left out, as
// they need no search), groups by increasing value, each in atom order.
// Written over `out`; `count` and `fill` are scratch.
void groups_of(std::uint32_t n, const std::vector<std::uint32_t> &within, Groups &out,
               std::vector<std::uint32_t> &count, std::vector<std::uint32_t> &fill) {
  // Values are atom or cell indices: bucket them instead of sorting.
  out.atoms.clear();
  out.start.assign(1, 0);
  if (n == 0) return;
  std::uint32_t top = 0;
  for (std::uint32_t a = 0; a < n; ++a) top = std::max(top, within[a]);
  count.assign(std::size_t{top} + 1, 0);
  for (std::uint32_t a = 0; a < n; ++a) ++count[within[a]];
  // fill[v]: next free place of value v's group, kUnset for values left out.
  fill.assign(std::size_t{top} + 1, kUnset);
  std::uint32_t total = 0;
  for (std::uint32_t v = 0; v <= top; ++v)
    if (count[v] > 1) {
      fill[v] = total;
      total += count[v];
      out.start.push_back(total);
    }
  out.atoms.resize(total);
  for (std::uint32_t a = 0; a < n; ++a)
    if (fill[within[a]] != kUnset) out.atoms[fill[within[a]]++] = a;
}

// The cells of `p` with more than one atom, in the order of p, each in atom
// order: what groups_of() makes of the cell of every atom, without buckets.
void groups_of_cells(const Partition &p, Groups &out) {
  out.atoms.clear();
  out.start.assign(1, 0);
  const auto n = static_cast<std::uint32_t>(p.elems.size());
  for (std::uint32_t s = 0; s < n; s = p.end[s]) {
    if (p.end[s] - s < 2) continue;
    const std::size_t first = out.atoms.size();
    out.atoms.insert(out.atoms.end(), p.elems.begin() + s, p.elems.begin() + p.end[s]);
    std::uint32_t *b = out.atoms.data() + first, *e = out.atoms.data() + out.atoms.size();
    if (e - b <= 16)
      sort_few(b, e, std::less<std::uint32_t>());
    else
      std::sort(b, e);
    out.start.push_back(static_cast<std::uint32_t>(out.atoms.size()));
  }
}

// Set ids numbered 0.. in order of each set's lowest atom, written over `id`.
// `root_id` is scratch.
void dense_ids(UnionFind &uf, std::uint32_t n, std::vector<std::uint32_t> &id, std::uint32_t &count,
               std::vector<std::uint32_t> &root_id) {
  id.resize(n);
  root_id.assign(n, kUnset);
  count = 0;
  for (std::uint32_t a = 0; a < n; ++a) {
    const auto r = uf.find(a);
    if (root_id[r] == kUnset) root_id[r] = count++;
    id[a] = root_id[r];
  }
}

// Order-independent fingerprint of a fragment: its refined cell structure,
// appended to `sig`.
void append_fragment_signature(const Graph &g, const Partition &p, std::vector<std::uint64_t> &sig) {
  sig.push_back(g.n);
  for (std::uint32_t s = 0; s < g.n; s = p.end[s]) {
    const auto a = p.elems[s];
    sig.push_back(g.colour[a]);
    sig.push_back(p.end[s] - s);
    const std::size_t first = sig.size();
    for (std::uint32_t k = g.off[a]; k < g.off[a + 1]; ++k) sig.push_back((std::uint64_t(p.cell[g.nbr[k]]) << 3) | g.order[k]);
    std::sort(sig.begin() + static_cast<std::ptrdiff_t>(first), sig.end());
  }
}

// Buffers of compute_classes() that keep their capacity from one molecule to
// the next on the same thread (allocating them per molecule cost about as
// much as the searches on a typical one).
struct Workspace {
  Graph whole;
  Partition pw, canon;
  RefineScratch scratch, canon_scratch, search_scratch;
  EntryPool entries;
  SearchLevels levels;
  Groups groups;
  std::vector<std::uint32_t> all, local_of, sigma, reps, count, fill, within;
  UnionFind topo_uf, chem_uf, frag_uf;
  FoundSymmetries found;
  StereoModel stereo;
  // Per fragment: its search starts, and their per-atom slots (one run of
  // made for each fragment, in fragment order).
  std::vector<Individualised> starts;
  std::vector<IndividualisedEntry *> made;
  // Molecules of several fragments only: the atoms of each fragment
  // (frag_atoms[frag_first[f], frag_first[f + 1])), their graphs and refined
  // partitions, their signatures (sig[sig_first[f], sig_first[f + 1])),
  // the fragments in signature order, and the graph of a pair of copies.
  std::vector<std::uint32_t> frag_atoms, frag_first, sig_order, pair_atoms;
  std::vector<Graph> frag_graphs;
  std::vector<Partition> frag_parts;
  std::vector<std::uint64_t> sig;
  std::vector<std::size_t> sig_first;
  Graph pair_graph;
  Partition pair_part;
  std::vector<IndividualisedEntry *> pair_made;
  // heavy_atom_classes(): pairs of equal leaves whose exchange relates the
  // configurations of their atom.
  std::vector<std::pair<std::uint32_t, std::uint32_t>> free_pairs;
};

// Lends the calling thread's Workspace for one compute_classes() call; a
// nested call (none is made today) gets a fresh one.
class WorkspaceLease {
 public:
  WorkspaceLease() {
    lease_->entries.used = 0;
    lease_->found.clear();
    lease_->starts.clear();
  }
  ~WorkspaceLease() {
    // The pooled partitions grow with atoms x searches: a large product is
    // given back too.
    constexpr std::size_t kKeepPooledSlots = std::size_t{1} << 18;
    const Workspace &ws = *lease_;
    const std::size_t atoms = ws.whole.n;
    const std::size_t pooled = ws.entries.entries.size() + 2 * ws.levels.by_depth.size() + ws.found.sigma.size();
    lease_.serves(atoms);
    if (atoms * pooled > kKeepPooledSlots) lease_.drop_on_return();
  }
  Workspace &operator*() const noexcept { return *lease_; }

 private:
  detail::ThreadLease<Workspace> lease_;
};

// The orbits of fragment f (graph g, base partition p, search starts
// ws.starts[f]) merged into `into`, the molecule's sets: the topological
// ones (candidates: the cells of p), or with `topo` (the molecule's
// topological class ids) the stereo-aware ones, candidates being the
// topological classes. A molecule of one fragment (`single`) works on the
// molecule's sets directly, its local atoms being the molecule's.
void fragment_orbits(Workspace &ws, const Graph &g, const Partition &p, std::size_t f, bool single,
                     const std::vector<std::uint32_t> *topo, UnionFind &into, long &budget, bool &exhausted) {
  const bool stereo = topo != nullptr;
  UnionFind &uf = single ? into : ws.frag_uf.reset(g.n);
  unite_twins(g, p, uf, stereo ? 3 : 2);
  if (stereo) {
    // Dense ids are numbered in the order of the classes' lowest atoms, as
    // the sets' representatives are: the groups come in the same order.
    std::vector<std::uint32_t> &within = ws.within;
    within.resize(g.n);
    for (std::uint32_t a = 0; a < g.n; ++a) within[a] = (*topo)[g.global[a]];
    groups_of(g.n, within, ws.groups, ws.count, ws.fill);
  } else {
    groups_of_cells(p, ws.groups);
  }
  orbits(g, ws.starts[f], ws.groups, stereo, uf, budget, exhausted, ws.levels, ws.sigma, ws.reps, ws.found, f);
  if (&uf != &into)
    for (std::uint32_t a = 0; a < g.n; ++a) into.unite(g.global[a], g.global[uf.find(a)]);
}

// Atoms [0, count) of a molecule of several fragments bucketed by fragment
// into ws.frag_atoms, increasing within each, as build_structure() wants
// them (fragment f's are frag_atoms[frag_first[f], frag_first[f + 1])), with
// a graph and a partition per fragment in ws.frag_graphs and ws.frag_parts.
void bucket_fragments(const Molecule &m, std::uint32_t count, Workspace &ws) {
  const std::size_t nfrag = m.fragment_count();
  ws.frag_first.assign(nfrag + 1, 0);
  for (std::uint32_t a = 0; a < count; ++a) ++ws.frag_first[m.fragments()[a] + 1];
  for (std::size_t f = 0; f < nfrag; ++f) ws.frag_first[f + 1] += ws.frag_first[f];
  ws.frag_atoms.resize(count);
  ws.fill.assign(ws.frag_first.begin(), ws.frag_first.end() - 1);
  for (std::uint32_t a = 0; a < count; ++a) ws.frag_atoms[ws.fill[m.fragments()[a]]++] = a;
  if (ws.frag_graphs.size() < nfrag) {
    ws.frag_graphs.resize(nfrag);
    ws.frag_parts.resize(nfrag);
  }
}

// Fragment f's signature among those of ws.sig (see sort_by_signature()).
Run<std::uint64_t> fragment_signature(const Workspace &ws, std::size_t f) {
  return Run<std::uint64_t>{ws.sig.data() + ws.sig_first[f], ws.sig.data() + ws.sig_first[f + 1]};
}

// The signatures of the fragments' graphs and refined partitions
// (ws.frag_graphs, ws.frag_parts) into ws.sig, and the fragments in order
// of signature, then index, into ws.sig_order: runs of equal signatures are
// the sets of candidate copies.
void sort_by_signature(Workspace &ws, std::size_t nfrag) {
  ws.sig.clear();
  ws.sig_first.assign(1, 0);
  for (std::size_t f = 0; f < nfrag; ++f) {
    append_fragment_signature(ws.frag_graphs[f], ws.frag_parts[f], ws.sig);
    ws.sig_first.push_back(ws.sig.size());
  }
  ws.sig_order.resize(nfrag);
  std::iota(ws.sig_order.begin(), ws.sig_order.end(), 0u);
  std::sort(ws.sig_order.begin(), ws.sig_order.end(), [&](std::uint32_t x, std::uint32_t y) {
    const auto sx = fragment_signature(ws, x), sy = fragment_signature(ws, y);
    if (sx < sy) return true;
    if (sy < sx) return false;
    return x < y;
  });
}

}  // namespace

AtomClasses compute_classes(const Molecule &m) {
  AtomClasses out;
  const auto n = static_cast<std::uint32_t>(m.atom_count());
  if (n == 0) return out;
  long budget = kNodesPerMolecule;
  bool exhausted = false;
  const WorkspaceLease lease;
  Workspace &ws = *lease;

  std::vector<std::uint32_t> &all = ws.all;
  all.resize(n);
  std::iota(all.begin(), all.end(), 0u);
  std::vector<std::uint32_t> &local_of = ws.local_of;
  local_of.assign(n, kUnset);

  // Invariant ranks over the whole molecule (order independent by construction).
  Graph &whole = ws.whole;
  build_structure(m, AtomRange{all.data(), all.data() + n}, local_of, whole);
  Partition &pw = ws.pw;
  RefineScratch &scratch = ws.scratch;
  detail::initial_partition(whole, pw, scratch);
  // Sized for the whole molecule, so it serves every fragment and pair of fragments.
  ws.search_scratch.reset(n);
  out.invariant_rank.assign(pw.cell.begin(), pw.cell.end());

  // Fragments are separate molecules in solution: solve each on its own, then
  // merge fragments that are copies (or mirror images) of each other.
  // One fragment: the whole-molecule graph and partition serve as they are.
  const std::size_t nfrag = m.fragment_count();
  auto frag_atoms = [&](std::size_t f) {
    return AtomRange{ws.frag_atoms.data() + ws.frag_first[f], ws.frag_atoms.data() + ws.frag_first[f + 1]};
  };
  if (nfrag > 1) bucket_fragments(m, n, ws);
  auto frag_graph = [&](std::size_t f) -> Graph & { return nfrag == 1 ? whole : ws.frag_graphs[f]; };
  auto frag_part = [&](std::size_t f) -> const Partition & { return nfrag == 1 ? pw : ws.frag_parts[f]; };

  UnionFind &topo_uf = ws.topo_uf.reset(n), &chem_uf = ws.chem_uf.reset(n);
  // Each fragment's atoms take one run of the slots.
  ws.made.assign(n, nullptr);
  ws.starts.reserve(nfrag);
  // Topological orbits first: the stereo model reports only real stereo
  // elements, which needs them.
  for (std::size_t f = 0, first = 0; f < nfrag; ++f) {
    if (nfrag > 1) {
      build_structure(m, frag_atoms(f), local_of, ws.frag_graphs[f]);
      detail::initial_partition(ws.frag_graphs[f], ws.frag_parts[f], scratch);
    }
    const Graph &g = frag_graph(f);
    ws.starts.emplace_back(g, frag_part(f), ws.entries, ws.search_scratch, ws.made.data() + first);
    first += g.n;
    fragment_orbits(ws, g, frag_part(f), f, nfrag == 1, nullptr, topo_uf, budget, exhausted);
  }

  // Copies of one fragment: same signature; confirm with a search on the
  // pair. Fragments in order of signature (then index): runs of equal ones
  // are the sets of candidate copies.
  auto signature = [&](std::size_t f) { return fragment_signature(ws, f); };
  if (nfrag > 1) sort_by_signature(ws, nfrag);

  std::uint32_t tcount = 0;
  std::vector<std::uint32_t> &topo_pre = out.topological;
  dense_ids(topo_uf, n, topo_pre, tcount, ws.count);
  const std::vector<std::uint32_t> *rank = &pw.pos;
  if (canonical_ties_matter(whole, pw)) {
    ws.canon = pw;
    rank = &canonical_positions(whole, ws.canon, ws.canon_scratch);
  }
  StereoModel &sm = ws.stereo;
  build_stereo(m, *rank, topo_pre, sm);

  // The topological searches are done: each fragment graph takes its
  // configurations and serves as the stereo graph.
  for (std::size_t f = 0; f < nfrag; ++f) {
    Graph &g = frag_graph(f);
    add_stereo(sm, g, local_of);
    fragment_orbits(ws, g, frag_part(f), f, nfrag == 1, &topo_pre, chem_uf, budget, exhausted);
  }

  for (std::size_t i0 = 0; i0 < ws.sig_order.size() && nfrag > 1;) {
    std::size_t i1 = i0 + 1;
    const auto s0 = signature(ws.sig_order[i0]);
    while (i1 < nfrag && signature(ws.sig_order[i1]) == s0) ++i1;
    const auto f0 = ws.sig_order[i0];
    for (std::size_t i = i0 + 1; i < i1; ++i) {
      // Search on the union of the first copy and this one.
      std::vector<std::uint32_t> &atoms = ws.pair_atoms;
      atoms.assign(frag_atoms(f0).begin(), frag_atoms(f0).end());
      atoms.insert(atoms.end(), frag_atoms(ws.sig_order[i]).begin(), frag_atoms(ws.sig_order[i]).end());
      for (int pass = 0; pass < 2; ++pass) {
        Graph &g = ws.pair_graph;
        build_graph(m, AtomRange{atoms.data(), atoms.data() + atoms.size()}, pass == 0 ? nullptr : &sm, local_of, g);
        Partition &p = ws.pair_part;
        detail::initial_partition(g, p, scratch);
        UnionFind &target = pass == 0 ? topo_uf : chem_uf;
        std::vector<std::uint32_t> &sigma = ws.sigma;
        const std::uint32_t r = 0;
        const auto first_b = static_cast<std::uint32_t>(frag_atoms(f0).size());
        bool found = false;
        ws.pair_made.assign(g.n, nullptr);
        Individualised start(g, p, ws.entries, ws.search_scratch, ws.pair_made.data());
        // Any symmetry found will do: with the orbits inside each copy
        // known, a proper and an improper one merge the same classes.
        AutomorphismSearch search(g, start, pass != 0, budget, ws.levels);
        for (std::uint32_t x = first_b; x < g.n && !found; ++x) {
          if (p.cell[x] != p.cell[r]) continue;
          if (search.find(r, x, sigma)) {
            for (std::uint32_t a = 0; a < g.n; ++a) target.unite(g.global[a], g.global[sigma[a]]);
            found = true;
          }
          exhausted |= search.exhausted();
        }
      }
    }
    i0 = i1;
  }

  // Only copies of a fragment can have merged topological classes since.
  if (nfrag == 1)
    out.topological_count = tcount;
  else
    dense_ids(topo_uf, n, out.topological, out.topological_count, ws.count);
  // Chemical classes refine topological ones: every symmetry that merged
  // them is an automorphism too (unless a search ran out of budget, which a
  // note reports).
  dense_ids(chem_uf, n, out.chemical, out.chemical_count, ws.count);
  out.notes.reserve(sm.notes.size() + (exhausted ? 1 : 0));
  append_notes(sm.notes, out.notes);
  if (exhausted)
    out.notes.push_back("symmetry search budget exhausted: some equivalent atoms may be reported as distinct");
  return out;
}

namespace detail {

// Why the heavy atoms' classes come out as compute_classes() gives them:
// docs/equivalence.md, "Heavy atoms only". In short, a symmetry of the
// configured heavy graph extends to the whole molecule (an atom's hydrogens
// go to its image's in the order its configuration needs; a single hydrogen
// is an implicit ligand, -1, mapped to itself as a lone pair is) and every
// symmetry of the molecule restricts to one of the heavy graph; and the
// canonical configurations, picked here from another order than in
// compute_classes(), are only allowed to differ where that cannot change a
// class.
bool heavy_atom_classes(const Molecule &m, AtomClasses &out) {
  const auto n = static_cast<std::uint32_t>(m.atom_count());
  const auto nh = static_cast<std::uint32_t>(m.heavy_atom_count());
  if (nh == 0) return false;
  for (std::uint32_t h = nh; h < n; ++h) {
    const Atom &a = m.atom(h);
    if (a.atomic_number != 1 || a.isotope != 0 || a.formal_charge != 0 || a.radical_electrons != 0 ||
        m.degree(h) != 1 || *m.neighbours_begin(h) >= nh || m.bond(*m.bond_ids_begin(h)).order != BondOrder::Single)
      return false;
  }
  for (std::uint32_t a = 0; a < nh; ++a)
    if (m.degree(a) > 255) return false;  // atom_colour() caps the degree
  long budget = kNodesPerMolecule;
  bool exhausted = false;
  const WorkspaceLease lease;
  Workspace &ws = *lease;
  auto parent = [&](std::uint32_t h) { return *m.neighbours_begin(h); };

  // Each fragment on its own, as compute_classes() solves them; every
  // fragment holds a heavy atom (a hydrogen's neighbour is heavy). Copies of
  // one fragment are left to compute_classes(), which merges them.
  const std::size_t nfrag = m.fragment_count();
  if (nfrag == 1) {
    ws.frag_atoms.resize(nh);
    std::iota(ws.frag_atoms.begin(), ws.frag_atoms.end(), 0u);
    ws.frag_first.assign({0, nh});
  } else {
    bucket_fragments(m, nh, ws);
  }
  auto graph = [&](std::size_t f) -> Graph & { return nfrag == 1 ? ws.whole : ws.frag_graphs[f]; };
  auto part = [&](std::size_t f) -> Partition & { return nfrag == 1 ? ws.pw : ws.frag_parts[f]; };
  ws.local_of.assign(n, kUnset);
  const std::uint32_t *local = ws.local_of.data();
  for (std::size_t f = 0; f < nfrag; ++f) {
    const AtomRange atoms{ws.frag_atoms.data() + ws.frag_first[f], ws.frag_atoms.data() + ws.frag_first[f + 1]};
    build_structure(m, atoms, ws.local_of, graph(f), true);
    detail::initial_partition(graph(f), part(f), ws.scratch);
  }
  if (nfrag > 1) {
    sort_by_signature(ws, nfrag);
    for (std::size_t i = 1; i < nfrag; ++i)
      if (fragment_signature(ws, ws.sig_order[i - 1]) == fragment_signature(ws, ws.sig_order[i])) return false;
  }
  auto frag_of = [&](std::uint32_t a) -> std::size_t { return nfrag == 1 ? 0 : m.fragments()[a]; };
  auto cell_size = [&](std::uint32_t a) { return part(frag_of(a)).size_of(local[a]); };
  // Refinement cells of each fragment's heavy graph; a hydrogen ranks after
  // them all, by its parent's cell.
  out.invariant_rank.resize(n);
  for (std::uint32_t a = 0; a < nh; ++a) out.invariant_rank[a] = part(frag_of(a)).cell[local[a]];
  for (std::uint32_t h = nh; h < n; ++h) out.invariant_rank[h] = nh + out.invariant_rank[parent(h)];

  // The stereo model of the whole molecule, in an order of these graphs'
  // (hydrogens after every heavy atom), carried over to the heavy graphs.
  // Whether a configuration is unspecified and could be mapped onto another
  // element is asked of the refinement cells, which hold whole orbits: an
  // atom alone in its cell is alone in its orbit (a molecule this turns
  // down on a cell that is not an orbit goes to compute_classes() all the
  // same). The ranks stand in for the topological classes, which
  // build_stereo() reads only for its notes.
  std::vector<std::uint32_t> &order = ws.within;
  order.resize(n);
  for (std::uint32_t a = 0; a < nh; ++a) order[a] = ws.frag_first[frag_of(a)] + part(frag_of(a)).pos[local[a]];
  for (std::uint32_t h = nh; h < n; ++h) order[h] = h;
  StereoModel &sm = ws.stereo;
  build_stereo(m, order, out.invariant_rank, sm, true);
  auto given_centre = [&](std::uint32_t c) { return !sm.given.empty() && sm.given[c] >= 0; };
  auto given_bond = [&](std::uint32_t u, std::uint32_t v) {
    const std::uint32_t lo = std::min(u, v), hi = std::max(u, v);
    for (const auto &d : sm.given_db)
      if (d.lo == lo && d.hi == hi) return true;
    return false;
  };
  // Two equal leaves of the heavy graph on one atom (the F of a CF2, the
  // methyls of an isopropyl group): exchanging them alone is a symmetry, so
  // the two configurations of that atom differ by that exchange, and so do
  // the classes they give, which cannot matter when the two leaves share a
  // class. Such an element may be unspecified and exchanged with others;
  // its pair is checked once the classes are known (`free_pairs`).
  auto equal_leaves = [&](std::int32_t a, std::int32_t b) {
    if (a < 0 || b < 0 || a >= static_cast<std::int32_t>(nh) || b >= static_cast<std::int32_t>(nh)) return false;
    const Graph &g = graph(frag_of(static_cast<std::uint32_t>(a)));
    const std::uint32_t la = local[a], lb = local[b];
    return g.leaf[la] && g.leaf[lb] && g.colour[la] == g.colour[lb] && g.order[g.off[la]] == g.order[g.off[lb]];
  };
  std::vector<std::pair<std::uint32_t, std::uint32_t>> &free_pairs = ws.free_pairs;
  free_pairs.clear();
  auto leaf_pair = [&](const std::int32_t *lig, int count) {
    for (int i = 0; i < count; ++i)
      for (int j = i + 1; j < count; ++j)
        if (equal_leaves(lig[i], lig[j])) {
          free_pairs.emplace_back(static_cast<std::uint32_t>(lig[i]), static_cast<std::uint32_t>(lig[j]));
          return true;
        }
    return false;
  };
  // Heavy atoms in local numbering, a hydrogen or a lone pair as -1.
  auto heavy_local = [&](std::int32_t a) {
    return a < 0 || a >= static_cast<std::int32_t>(nh) ? -1 : static_cast<std::int32_t>(local[a]);
  };
  for (const auto &t : sm.tetra) {
    Graph &g = graph(frag_of(t.centre));
    TetraConfig lt;
    lt.centre = local[t.centre];
    int implicit = 0;
    for (int k = 0; k < 4; ++k) {
      lt.lig[k] = heavy_local(t.lig[k]);
      implicit += lt.lig[k] < 0 ? 1 : 0;
    }
    // (build_stereo() left out the atoms with two or more hydrogens:
    // exchanging two of them fixes any parity.)
    if (implicit >= 2) return false;  // a hydrogen and a lone pair: no parity without them
    if (!given_centre(t.centre) && cell_size(t.centre) > 1 && !leaf_pair(t.lig.data(), 4)) return false;
    g.tetra_of[lt.centre] = static_cast<std::int32_t>(g.tetra.size());
    g.tetra.push_back(lt);
  }
  for (const auto &d : sm.dbl) {
    // (build_stereo() left out the bonds with an end carrying two hydrogens:
    // exchanging them fixes either geometry.)
    if (!given_bond(d.u, d.v)) {
      // Each end's cell may hold only the bond's two atoms.
      const Partition &p = part(frag_of(d.u));
      const std::uint32_t room = p.cell[local[d.u]] == p.cell[local[d.v]] ? 2 : 1;
      auto end_pair = [&](std::uint32_t end, std::uint32_t partner) {
        std::int32_t o[2] = {-1, -1};
        int k = 0;
        for (auto it = m.neighbours_begin(end); it != m.neighbours_end(end) && k < 2; ++it)
          if (*it != partner) o[k++] = static_cast<std::int32_t>(*it);
        return leaf_pair(o, k);
      };
      if ((cell_size(d.u) > room || cell_size(d.v) > room) && !end_pair(d.u, d.v) && !end_pair(d.v, d.u))
        return false;
    }
    Graph &g = graph(frag_of(d.u));
    const DoubleConfig ld{local[d.u], local[d.v], heavy_local(d.ru), heavy_local(d.rv), d.cis};
    const auto idx = static_cast<std::int32_t>(g.dbl.size());
    g.dbl_of[ld.u] = idx;
    g.dbl_of[ld.v] = idx;
    g.dbl.push_back(ld);
  }

  // Topological orbits, then the classes of every atom: a hydrogen's
  // follows its parent's (plain hydrogens on one atom are equal leaves),
  // numbered after the heavy atoms' in the order of their lowest hydrogen,
  // as dense_ids() numbers them. The configurations only come into play with
  // the stereo searches.
  ws.search_scratch.reset(nh);
  UnionFind &topo_uf = ws.topo_uf.reset(nh), &chem_uf = ws.chem_uf.reset(nh);
  ws.made.assign(nh, nullptr);
  ws.starts.reserve(nfrag);
  for (std::size_t f = 0; f < nfrag; ++f) {
    ws.starts.emplace_back(graph(f), part(f), ws.entries, ws.search_scratch, ws.made.data() + ws.frag_first[f]);
    fragment_orbits(ws, graph(f), part(f), f, nfrag == 1, nullptr, topo_uf, budget, exhausted);
  }
  if (exhausted) return false;
  std::vector<std::uint32_t> &by_parent_class = ws.fill;
  auto hydrogens_follow = [&](std::vector<std::uint32_t> &ids, std::uint32_t heavy_count, std::uint32_t &count) {
    ids.resize(n);
    by_parent_class.assign(heavy_count, kUnset);
    count = heavy_count;
    for (std::uint32_t h = nh; h < n; ++h) {
      auto &c = by_parent_class[ids[parent(h)]];
      if (c == kUnset) c = count++;
      ids[h] = c;
    }
  };
  std::uint32_t tcount = 0;
  dense_ids(topo_uf, nh, out.topological, tcount, ws.count);
  hydrogens_follow(out.topological, tcount, out.topological_count);

  // Chemical classes of the heavy atoms, as compute_classes() finds them;
  // a hydrogen gets its parent's. Without a configuration left in the heavy
  // graphs every graph symmetry is allowed, and they are the topological
  // classes.
  bool configured = false;
  for (std::size_t f = 0; f < nfrag; ++f) configured = configured || !graph(f).tetra.empty() || !graph(f).dbl.empty();
  if (configured) {
    for (std::size_t f = 0; f < nfrag; ++f)
      fragment_orbits(ws, graph(f), part(f), f, nfrag == 1, &out.topological, chem_uf, budget, exhausted);
    if (exhausted) return false;
    for (const auto &[a, b] : free_pairs)
      if (chem_uf.find(a) != chem_uf.find(b)) return false;
    std::uint32_t ccount = 0;
    dense_ids(chem_uf, nh, out.chemical, ccount, ws.count);
    hydrogens_follow(out.chemical, ccount, out.chemical_count);
  } else {
    out.chemical = out.topological;
    out.chemical_count = out.topological_count;
  }
  out.notes.clear();
  return true;
}

}  // namespace detail

std::uint64_t constitution_key(const Molecule &m, const AtomClasses &classes) {
  const auto n = m.atom_count();
  if (classes.invariant_rank.size() != n) throw ArgumentError("constitution_key: classes belong to another molecule");
  std::vector<std::vector<std::uint64_t>> rows(n);
  for (std::size_t a = 0; a < n; ++a) {
    auto &r = rows[a];
    r.push_back(classes.invariant_rank[a]);
    r.push_back(atom_colour(m.atom(a), static_cast<std::uint32_t>(m.degree(a))));
    std::vector<std::uint64_t> nb;
    const auto *bid = m.bond_ids_begin(a);
    for (auto it = m.neighbours_begin(a); it != m.neighbours_end(a); ++it, ++bid)
      nb.push_back((std::uint64_t(classes.invariant_rank[*it]) << 3) | order_code(m.bond(*bid).order));
    std::sort(nb.begin(), nb.end());
    r.insert(r.end(), nb.begin(), nb.end());
  }
  std::sort(rows.begin(), rows.end());
  std::uint64_t h = 0xCBF29CE484222325ull;
  for (const auto &r : rows) {
    for (auto v : r) {
      h ^= v + 0x9E3779B97F4A7C15ull + (h << 6) + (h >> 2);
      h *= 0x100000001B3ull;
    }
    h ^= 0xFF;
  }
  return h;
}

}  // namespace nmrpred
