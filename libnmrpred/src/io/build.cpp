// RawMolecule (input order, implicit hydrogen counts) -> MoleculeData (the
// library's atom order with every hydrogen as an atom). Runs outside the Open
// Babel lock.

#include "io/build.hpp"

#include <algorithm>
#include <cstdint>
#include <limits>
#include <utility>

#include <fmt/format.h>

#include <nmrpred/error.hpp>

namespace nmrpred::io::detail {

namespace {

constexpr int kMaxAtomicNumber = 118;
constexpr std::int32_t kNoAtom = -1;

std::string atom_label(std::size_t i, const AtomDescriber &describe_atom) {
  std::string d = describe_atom ? describe_atom(i) : std::string();
  return d.empty() ? fmt::format("input atom {}", i) : fmt::format("input atom {} ({})", i, d);
}

void check_atom(const RawAtom &a, std::size_t i, const AtomDescriber &describe_atom) {
  if (a.atomic_number <= 0 || a.atomic_number > kMaxAtomicNumber)
    throw InputError(fmt::format("{} is not a chemical element (unknown symbol, wildcard or query atom)",
                                 atom_label(i, describe_atom)));
  if (a.isotope < 0 || a.isotope > std::numeric_limits<std::uint16_t>::max())
    throw InputError(fmt::format("{}: mass number {} is out of range", atom_label(i, describe_atom), a.isotope));
  if (a.formal_charge < std::numeric_limits<std::int8_t>::min() ||
      a.formal_charge > std::numeric_limits<std::int8_t>::max())
    throw InputError(fmt::format("{}: charge {} is out of range", atom_label(i, describe_atom), a.formal_charge));
  if (a.radical_electrons < 0 || a.radical_electrons > 8 || a.implicit_hydrogens < 0)
    throw InputError(fmt::format("{}: impossible electron or hydrogen count", atom_label(i, describe_atom)));
}

BondOrder bond_order(const RawBond &b) {
  if (b.aromatic) return BondOrder::Aromatic;
  switch (b.order) {
    case 1: return BondOrder::Single;
    case 2: return BondOrder::Double;
    case 3: return BondOrder::Triple;
    case 0:
    case 4:
      throw UnsupportedError(fmt::format("bond between input atoms {} and {} has order {}; only single, double, "
                                         "triple and aromatic bonds are supported",
                                         b.begin, b.end, b.order));
    default:
      throw InputError(fmt::format("bond between input atoms {} and {} has type {}, which is not a bond order "
                                   "(query bond?)",
                                   b.begin, b.end, b.order));
  }
}

// Smallest ring that may hold a double bond whose geometry the input chooses.
constexpr std::size_t kMinStereoRingSize = 8;

// True if atoms a and b (bonded) are also joined by a path of at most
// ring_size - 2 other bonds, i.e. their bond lies in a ring smaller than ring_size.
// Breadth-first and depth-bounded; `mark` (one entry per atom, reused between
// calls with a fresh `stamp`) keeps each call linear in the atoms it reaches.
bool in_small_ring(const std::vector<std::vector<std::uint32_t>> &adj, std::uint32_t a, std::uint32_t b,
                   std::size_t ring_size, std::vector<std::uint32_t> &mark, std::uint32_t stamp) {
  const std::size_t max_depth = ring_size - 2;
  std::vector<std::uint32_t> frontier{a}, next;
  mark[a] = stamp;
  for (std::size_t depth = 1; depth <= max_depth && !frontier.empty(); ++depth) {
    next.clear();
    for (auto u : frontier)
      for (auto v : adj[u]) {
        if (u == a && v == b) continue;  // not through the bond itself
        if (v == b) return true;
        if (mark[v] == stamp) continue;
        mark[v] = stamp;
        next.push_back(v);
      }
    frontier.swap(next);
  }
  return false;
}

}  // namespace

MoleculeData build_molecule_data(const RawMolecule &raw, const AtomDescriber &describe_atom,
                                 std::vector<std::string> &warnings) {
  const std::size_t n = raw.atoms.size();
  if (n == 0) throw InputError("the record contains no atoms");
  for (std::size_t i = 0; i < n; ++i) check_atom(raw.atoms[i], i, describe_atom);

  std::vector<std::vector<std::uint32_t>> input_adj(n);
  std::vector<BondOrder> orders;
  orders.reserve(raw.bonds.size());
  for (const auto &b : raw.bonds) {
    if (b.begin >= n || b.end >= n) throw InternalError("Open Babel returned a bond to a missing atom");
    orders.push_back(bond_order(b));
    input_adj[b.begin].push_back(b.end);
    input_adj[b.end].push_back(b.begin);
  }

  auto is_h = [&](std::size_t i) { return raw.atoms[i].atomic_number == 1; };

  // New positions: heavy atoms first, in input order.
  std::vector<std::int32_t> new_index(n, kNoAtom);
  std::vector<std::uint32_t> heavy;  // input positions of heavy atoms, in order
  for (std::size_t i = 0; i < n; ++i)
    if (!is_h(i)) {
      new_index[i] = static_cast<std::int32_t>(heavy.size());
      heavy.push_back(static_cast<std::uint32_t>(i));
    }

  // Each explicit hydrogen joins the group of its first heavy neighbour (a
  // bridging hydrogen has two; the lower index keeps the order deterministic).
  std::vector<std::vector<std::uint32_t>> explicit_h(heavy.size());
  std::vector<std::uint32_t> free_h;
  for (std::size_t i = 0; i < n; ++i) {
    if (!is_h(i)) continue;
    std::int32_t home = kNoAtom;
    for (auto nb : input_adj[i])
      if (!is_h(nb) && (home == kNoAtom || new_index[nb] < home)) home = new_index[nb];
    if (home == kNoAtom)
      free_h.push_back(static_cast<std::uint32_t>(i));
    else
      explicit_h[static_cast<std::size_t>(home)].push_back(static_cast<std::uint32_t>(i));
  }

  MoleculeData data;
  std::size_t total = n;
  for (const auto &a : raw.atoms) total += static_cast<std::size_t>(a.implicit_hydrogens);
  if (total > std::numeric_limits<std::int32_t>::max()) throw InputError("molecule has too many atoms");
  data.atoms.reserve(total);
  data.input_index.reserve(total);
  std::vector<Bond> added_bonds;
  // First hydrogen added to each input atom: what Open Babel's ImplicitRef means.
  std::vector<std::int32_t> first_added(n, kNoAtom);

  auto push_input = [&](std::uint32_t i) {
    const RawAtom &r = raw.atoms[i];
    Atom a;
    a.atomic_number = static_cast<std::uint8_t>(r.atomic_number);
    a.isotope = static_cast<std::uint16_t>(r.isotope);
    a.formal_charge = static_cast<std::int8_t>(r.formal_charge);
    a.radical_electrons = static_cast<std::uint8_t>(r.radical_electrons);
    a.aromatic = r.aromatic;
    new_index[i] = static_cast<std::int32_t>(data.atoms.size());
    data.atoms.push_back(a);
    data.input_index.push_back(static_cast<std::int32_t>(i));
  };
  auto push_implicit = [&](std::uint32_t owner) {
    for (int k = 0; k < raw.atoms[owner].implicit_hydrogens; ++k) {
      const auto idx = static_cast<std::uint32_t>(data.atoms.size());
      if (k == 0) first_added[owner] = static_cast<std::int32_t>(idx);
      Atom h;
      h.atomic_number = 1;
      data.atoms.push_back(h);
      data.input_index.push_back(-1);
      added_bonds.push_back(Bond{static_cast<std::uint32_t>(new_index[owner]), idx, BondOrder::Single});
    }
  };

  for (auto i : heavy) push_input(i);
  for (std::size_t g = 0; g < heavy.size(); ++g) {
    for (auto h : explicit_h[g]) push_input(h);
    push_implicit(heavy[g]);
  }
  for (auto h : free_h) {
    push_input(h);
    push_implicit(h);  // [HH] is H2
  }
  for (std::size_t g = 0; g < heavy.size(); ++g)
    for (auto h : explicit_h[g])
      if (raw.atoms[h].implicit_hydrogens > 0) push_implicit(h);  // odd input such as C[H2]; kept as written

  data.bonds.reserve(raw.bonds.size() + added_bonds.size());
  for (std::size_t k = 0; k < raw.bonds.size(); ++k) {
    auto a = static_cast<std::uint32_t>(new_index[raw.bonds[k].begin]);
    auto b = static_cast<std::uint32_t>(new_index[raw.bonds[k].end]);
    if (a > b) std::swap(a, b);
    data.bonds.push_back(Bond{a, b, orders[k]});
  }
  data.bonds.insert(data.bonds.end(), added_bonds.begin(), added_bonds.end());
  // Sorted bonds make equal graphs compare equal whatever order the file listed them in.
  std::sort(data.bonds.begin(), data.bonds.end(), [](const Bond &x, const Bond &y) {
    return x.begin != y.begin ? x.begin < y.begin : x.end < y.end;
  });

  // Adjacency of the result, for checking stereo references.
  std::vector<std::vector<std::uint32_t>> adj(data.atoms.size());
  for (const auto &b : data.bonds) {
    adj[b.begin].push_back(b.end);
    adj[b.end].push_back(b.begin);
  }
  auto bonded = [&](std::uint32_t a, std::uint32_t b) {
    return std::find(adj[a].begin(), adj[a].end(), b) != adj[a].end();
  };

  for (const auto &t : raw.tetrahedral) {
    if (t.centre >= n) continue;
    const auto centre = static_cast<std::uint32_t>(new_index[t.centre]);
    TetrahedralStereo s;
    s.centre = centre;
    bool ok = true;
    int lone = 0;
    for (int k = 0; k < 4 && ok; ++k) {
      const auto ref = t.ligands[k];
      if (ref >= 0 && static_cast<std::size_t>(ref) < n) {
        s.ligands[k] = new_index[ref];
      } else if (ref == kRefImplicit) {
        if (first_added[t.centre] != kNoAtom && raw.atoms[t.centre].implicit_hydrogens == 1) {
          s.ligands[k] = first_added[t.centre];
        } else if (raw.atoms[t.centre].implicit_hydrogens == 0) {
          s.ligands[k] = kLonePair;  // e.g. the lone pair of a sulfoxide sulfur
          ++lone;
        } else {
          ok = false;
        }
      } else {
        ok = false;
      }
    }
    if (ok) {
      std::size_t real = 0;
      for (int k = 0; k < 4 && ok; ++k) {
        if (s.ligands[k] == kLonePair) continue;
        ++real;
        const auto l = static_cast<std::uint32_t>(s.ligands[k]);
        if (!bonded(centre, l)) ok = false;
        for (int j = 0; j < k; ++j)
          if (s.ligands[j] == s.ligands[k]) ok = false;
      }
      ok = ok && lone <= 1 && real == adj[centre].size();
    }
    if (!ok) {
      warnings.push_back(fmt::format("tetrahedral stereo at {} ignored: its references do not match the "
                                     "neighbours",
                                     atom_label(t.centre, describe_atom)));
      continue;
    }
    data.tetrahedral.push_back(s);
  }

  std::vector<std::uint32_t> ring_mark(raw.cis_trans.empty() ? 0 : data.atoms.size(), 0);
  std::uint32_t ring_stamp = 0;
  for (const auto &c : raw.cis_trans) {
    if (c.begin >= n || c.end >= n) continue;
    const auto nb = static_cast<std::uint32_t>(new_index[c.begin]);
    const auto ne = static_cast<std::uint32_t>(new_index[c.end]);
    if (!bonded(nb, ne)) continue;
    // In a ring of fewer than 8 atoms the geometry is forced, not specified:
    // common practice (InChI and RDKit give such bonds no stereo descriptor).
    if (in_small_ring(adj, nb, ne, kMinStereoRingSize, ring_mark, ++ring_stamp)) continue;
    // One reference per end of the double bond; an atom that is written in the
    // input is preferred over an implicit hydrogen.
    auto pick = [&](std::uint32_t owner, std::uint32_t other, int first) -> std::pair<int, std::int32_t> {
      const auto owner_new = static_cast<std::uint32_t>(new_index[owner]);
      for (int k = first; k < first + 2; ++k) {
        const auto ref = c.refs[k];
        if (ref >= 0 && static_cast<std::size_t>(ref) < n && static_cast<std::uint32_t>(ref) != other &&
            bonded(owner_new, static_cast<std::uint32_t>(new_index[ref])))
          return {k, new_index[ref]};
      }
      for (int k = first; k < first + 2; ++k)
        if (c.refs[k] == kRefImplicit && first_added[owner] != kNoAtom) return {k, first_added[owner]};
      return {-1, kNoAtom};
    };
    const auto [kb, ref_b] = pick(c.begin, c.end, 0);
    const auto [ke, ref_e] = pick(c.end, c.begin, 2);
    if (kb < 0 || ke < 0) {
      warnings.push_back(fmt::format("double bond stereo between input atoms {} and {} ignored: no reference "
                                     "atom on one end",
                                     c.begin, c.end));
      continue;
    }
    DoubleBondStereo d;
    d.begin = nb;
    d.end = ne;
    d.ref_begin = static_cast<std::uint32_t>(ref_b);
    d.ref_end = static_cast<std::uint32_t>(ref_e);
    d.cis = (kb == 0 && ke == 3) || (kb == 1 && ke == 2);  // U-shaped order, see RawCisTrans
    data.double_bonds.push_back(d);
  }

  if (raw.dimension > 0 && data.atoms.size() == n) {
    bool any_nonzero = false;
    data.coordinates.resize(3 * n);
    for (std::size_t i = 0; i < n; ++i) {
      const auto &r = raw.atoms[i];
      const auto j = static_cast<std::size_t>(new_index[i]);
      data.coordinates[3 * j] = r.x;
      data.coordinates[3 * j + 1] = r.y;
      data.coordinates[3 * j + 2] = r.z;
      any_nonzero = any_nonzero || r.x != 0.0 || r.y != 0.0 || r.z != 0.0;
    }
    if (any_nonzero) {
      data.coordinates_3d = raw.dimension == 3;
    } else {
      data.coordinates.clear();  // all-zero coordinates mean "none given" (MDL 0D files)
    }
  }
  return data;
}

}  // namespace nmrpred::io::detail
