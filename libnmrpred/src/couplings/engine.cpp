// Per-molecule facts for the coupling rules (engine.hpp).

#include "couplings/engine.hpp"

#include <algorithm>
#include <array>
#include <cctype>
#include <cmath>
#include <limits>

#include <fmt/format.h>

#include "shifts/increment_support.hpp"

namespace nmrpred::detail {

namespace {

std::string token_of(const Atom &a) {
  std::string t = Molecule::element_symbol(a.atomic_number);
  for (auto &ch : t) ch = static_cast<char>(std::tolower(static_cast<unsigned char>(ch)));
  if (a.formal_charge > 0) t += '+';
  if (a.formal_charge < 0) t += '-';
  return t;
}

// Parity of the permutation taking `from` to `to` (same four elements):
// +1 even, -1 odd, 0 if the sets differ.
int parity(std::array<std::int64_t, 4> from, const std::array<std::int64_t, 4> &to) {
  int swaps = 0;
  for (std::size_t i = 0; i < 4; ++i) {
    if (from[i] == to[i]) continue;
    std::size_t j = i + 1;
    while (j < 4 && from[j] != to[i]) ++j;
    if (j == 4) return 0;
    std::swap(from[i], from[j]);
    ++swaps;
  }
  return swaps % 2 ? -1 : 1;
}

}  // namespace

std::string format_hz(double v) {
  auto s = fmt::format("{:.2f}", v);
  if (s == "-0.00") s = "0.00";
  return s;
}

Engine::Engine(const Molecule &mol, const AtomClasses &cls, const CouplingTables &tables, const CouplingOptions &o)
    : m(mol), classes(cls), tab(tables), opt(o) {
  const std::size_t n = m.atom_count();
  h_off_.assign(n + 1, 0);
  x_off_.assign(n + 1, 0);
  h_list_.reserve(n + 1);
  x_list_.reserve(2 * m.bond_count() + 1);
  for (std::size_t a = 0; a < n; ++a) {
    for (auto it = m.neighbours_begin(a); it != m.neighbours_end(a); ++it)
      (m.is_hydrogen(*it) ? h_list_ : x_list_).push_back(*it);
    h_off_[a + 1] = static_cast<std::uint32_t>(h_list_.size());
    x_off_[a + 1] = static_cast<std::uint32_t>(x_list_.size());
  }
  // Spans point into these; keep them non-empty so &v[0] is valid.
  h_list_.push_back(0);
  x_list_.push_back(0);
  pi_.assign(n, 0);
  sp3_.assign(n, false);
  aldehyde_.assign(n, false);
  alkene_partner_.assign(n, -1);
  alkyne_partner_.assign(n, -1);
  for (std::size_t a = 0; a < n; ++a) {
    const auto *bid = m.bond_ids_begin(a);
    int aromatic = 0, doubles = 0, triples = 0;
    std::int64_t double_c = -1, triple_c = -1;
    bool double_o = false;
    for (auto it = m.neighbours_begin(a); it != m.neighbours_end(a); ++it, ++bid) {
      const auto ord = m.bond(*bid).order;
      const unsigned z = m.atom(*it).atomic_number;
      if (ord == BondOrder::Aromatic) ++aromatic;
      if (ord == BondOrder::Double) {
        ++doubles;
        if (z == 6) double_c = *it;
        if (z == 8) double_o = true;
      }
      if (ord == BondOrder::Triple) {
        ++triples;
        if (z == 6) triple_c = *it;
      }
    }
    pi_[a] = doubles + 2 * triples + (aromatic > 0 ? 1 : 0);
    const auto &at = m.atom(a);
    if (at.atomic_number != 6 || at.radical_electrons != 0 || at.formal_charge != 0) continue;
    sp3_[a] = is_sp3_carbon(m, a);
    if (!at.aromatic && aromatic == 0 && m.degree(a) == 3 && doubles == 1 && triples == 0) {
      if (double_c >= 0) alkene_partner_[a] = double_c;
      if (double_o && !hydrogens(a).empty()) aldehyde_[a] = true;
    }
    if (!at.aromatic && m.degree(a) == 2 && triples == 1 && doubles == 0 && triple_c >= 0)
      alkyne_partner_[a] = triple_c;
  }
  // Class representatives: the lowest atom of each chemical class, the atom
  // whose shift predict_h1 computes and copies to the class.
  class_rep_.assign(classes.chemical_count, std::numeric_limits<std::uint32_t>::max());
  for (std::size_t a = 0; a < n; ++a) {
    auto &r = class_rep_[classes.chemical[a]];
    r = std::min<std::uint32_t>(r, static_cast<std::uint32_t>(a));
  }
  // Coordinates count only when 3D and every atom has them (io/ drops them
  // when it had to add hydrogens, so added hydrogens never sit at 0,0,0).
  coordinates_ok_ = m.has_3d_coordinates() && m.coordinates().size() == 3 * n;
}

int Engine::aromatic_pair_fit(int r, int i, int k) {
  auto &ring = aromatic_ring_fitted(r);
  const int n = static_cast<int>(ring.atoms.size());
  auto &slot = ring.pair_fit[static_cast<std::size_t>(i * n + k)];
  if (slot != -2) return slot;
  // The first fitting row in file order; rows that fit only without the
  // fusion marks after all others.
  slot = -1;
  for (const bool strip : {false, true})
    for (std::size_t f = 0; f < ring.fits.size() && slot < 0; ++f) {
      const auto &fit = ring.fits[f];
      if (fit.stripped != strip) continue;
      const auto &row = tab.aromatic[fit.row];
      const int pi = ((fit.dir * (i - fit.start)) % n + n) % n + 1;
      const int pk = ((fit.dir * (k - fit.start)) % n + n) % n + 1;
      if (std::min(pi, pk) == row.position_a && std::max(pi, pk) == row.position_b) slot = static_cast<int>(f);
    }
  return slot;
}

AromaticRing &Engine::aromatic_ring_fitted(int r) {
  if (!aromatic_done_) find_aromatic_rings();
  auto &ring = aromatic_rings_[static_cast<std::size_t>(r)];
  if (ring.fits_done) return ring;
  ring.fits_done = true;
  const int n = static_cast<int>(ring.codes.size());
  std::vector<int> stripped = ring.codes;
  for (auto &c : stripped) c &= ~1;
  // Rows whose atoms are a different multiset cannot fit any numbering.
  std::vector<int> sorted = ring.codes, sorted_plain = stripped;
  std::sort(sorted.begin(), sorted.end());
  std::sort(sorted_plain.begin(), sorted_plain.end());
  for (std::size_t k = 0; k < tab.aromatic.size(); ++k) {
    const auto &row = tab.aromatic[k];
    if (static_cast<int>(row.codes.size()) != n) continue;
    const bool row_marked = row.sorted_codes != row.sorted_plain;
    for (const bool strip : {false, true}) {
      if (strip && (!ring.fused || row_marked)) continue;
      if (strip ? row.sorted_codes != sorted_plain : row.sorted_codes != sorted) continue;
      const auto &tokens = strip ? stripped : ring.codes;
      for (int start = 0; start < n; ++start)
        for (int dir : {1, -1}) {
          bool same = true;
          for (int q = 0; q < n && same; ++q)
            same = tokens[static_cast<std::size_t>(((start + dir * q) % n + n) % n)] ==
                   row.codes[static_cast<std::size_t>(q)];
          if (same) ring.fits.push_back({k, start, dir, strip});
        }
    }
  }
  ring.pair_fit.assign(static_cast<std::size_t>(n * n), -2);
  return ring;
}

// Rings through a bond by a breadth-first search from one end to the other
// that does not use the bond itself, bounded at kMaxRing atoms, run only for
// bonds a rule asks about: the rules need rings of up to eight atoms
// (small-ring couplings, ring-held C=C geometry) and aromatic five- and
// six-membered rings, so the full ring perception of the SMARTS matcher is
// not needed.
std::vector<std::uint32_t> Engine::ring_through(std::uint32_t a, std::uint32_t b, bool aromatic_only,
                                                int max_size) const {
  const std::size_t n = m.atom_count();
  if (dist_.size() != n) dist_.assign(n, -1), parent_.assign(n, 0), touched_.clear();
  for (auto t : touched_) dist_[t] = -1;
  touched_.assign(1, a);
  dist_[a] = 0;
  frontier_.assign(1, a);
  std::vector<std::uint32_t> ring;
  for (int d = 1; d < max_size && !frontier_.empty() && dist_[b] < 0; ++d) {
    next_.clear();
    for (auto u : frontier_)
      for (auto v : heavy(u)) {
        if (dist_[v] >= 0 || (u == a && v == b)) continue;
        if (aromatic_only && order(u, v) != BondOrder::Aromatic) continue;
        dist_[v] = d;
        parent_[v] = u;
        touched_.push_back(v);
        next_.push_back(v);
      }
    frontier_.swap(next_);
  }
  if (dist_[b] < 0) return ring;
  for (std::uint32_t v = b;; v = parent_[v]) {
    ring.push_back(v);
    if (v == a) break;
  }
  std::reverse(ring.begin(), ring.end());
  return ring;
}

// Bonds in no ring at all (bridges of the graph, one depth-first search)
// need no ring search.
void Engine::find_bridges() const {
  const std::size_t n = m.atom_count();
  bridge_.assign(m.bond_count(), false);
  bond_ring_index_.assign(m.bond_count(), -2);
  std::vector<int> low(n, -1), pre(n, -1);
  int counter = 0;
  struct Frame {
    std::uint32_t atom;
    std::int64_t via;  // bond used to enter, -1 at a root
    std::size_t next;  // next neighbour to visit
  };
  std::vector<Frame> stack;
  for (std::size_t root = 0; root < n; ++root) {
    if (pre[root] >= 0 || m.is_hydrogen(root)) continue;
    pre[root] = low[root] = counter++;
    stack.push_back({static_cast<std::uint32_t>(root), -1, 0});
    while (!stack.empty()) {
      auto &f = stack.back();
      const auto nb = heavy(f.atom);
      if (f.next < nb.size()) {
        const auto v = nb[f.next++];
        const auto b = m.bond_between(f.atom, v);
        if (b == f.via) continue;
        if (pre[v] < 0) {
          pre[v] = low[v] = counter++;
          stack.push_back({v, b, 0});
        } else {
          low[f.atom] = std::min(low[f.atom], pre[v]);
        }
        continue;
      }
      const Frame done = f;
      stack.pop_back();
      if (!stack.empty()) {
        auto &up = stack.back();
        low[up.atom] = std::min(low[up.atom], low[done.atom]);
        if (low[done.atom] > pre[up.atom]) bridge_[static_cast<std::size_t>(done.via)] = true;
      }
    }
  }
}

const std::vector<std::uint32_t> *Engine::bond_ring(std::size_t a, std::size_t b) const {
  const auto k = m.bond_between(a, b);
  if (k < 0) return nullptr;
  if (bridge_.empty()) find_bridges();
  const auto kk = static_cast<std::size_t>(k);
  if (bond_ring_index_[kk] == -2) {
    bond_ring_index_[kk] = -1;
    if (!bridge_[kk] && !m.is_hydrogen(a) && !m.is_hydrogen(b)) {
      auto ring = ring_through(m.bond(kk).begin, m.bond(kk).end, false, kMaxRing);
      if (!ring.empty()) {
        bond_ring_index_[kk] = static_cast<int>(rings_.size());
        rings_.push_back(std::move(ring));
      }
    }
  }
  const int r = bond_ring_index_[kk];
  return r < 0 ? nullptr : &rings_[static_cast<std::size_t>(r)];
}

int Engine::bond_ring_size(std::size_t a, std::size_t b) const {
  const auto *ring = bond_ring(a, b);
  return ring ? static_cast<int>(ring->size()) : 0;
}

const std::vector<std::uint32_t> *Engine::three_ring(std::size_t a) const {
  const auto nb = heavy(a);
  for (std::size_t i = 0; i < nb.size(); ++i)
    for (std::size_t j = i + 1; j < nb.size(); ++j)
      if (m.bond_between(nb[i], nb[j]) >= 0) {
        const auto *ring = bond_ring(a, nb[i]);
        if (ring && ring->size() == 3) return ring;
      }
  return nullptr;
}

// Aromatic five- and six-membered rings ('*' marks atoms shared with
// another aromatic ring: fusion), found on first use.
void Engine::find_aromatic_rings() const {
  aromatic_done_ = true;
  atom_aromatic_rings_.assign(m.atom_count(), {});
  std::vector<std::vector<std::uint32_t>> keys;
  for (std::size_t k = 0; k < m.bond_count(); ++k) {
    const auto &bd = m.bond(k);
    if (bd.order != BondOrder::Aromatic || !m.atom(bd.begin).aromatic || !m.atom(bd.end).aromatic) continue;
    // A bond of a ring already found needs no search of its own.
    bool covered = false;
    for (int r : atom_aromatic_rings_[bd.begin]) {
      const auto &at = aromatic_rings_[static_cast<std::size_t>(r)].atoms;
      const auto i = static_cast<std::size_t>(std::find(at.begin(), at.end(), bd.begin) - at.begin());
      covered |= at[(i + 1) % at.size()] == bd.end || at[(i + at.size() - 1) % at.size()] == bd.end;
    }
    if (covered) continue;
    auto ring = ring_through(bd.begin, bd.end, true, 6);
    if (ring.size() < 5) continue;
    auto key = ring;
    std::sort(key.begin(), key.end());
    if (std::find(keys.begin(), keys.end(), key) != keys.end()) continue;
    keys.push_back(std::move(key));
    AromaticRing ar;
    ar.atoms = ring;
    for (auto a : ring) ar.tokens.push_back(token_of(m.atom(a)));
    for (auto a : ring) atom_aromatic_rings_[a].push_back(static_cast<int>(aromatic_rings_.size()));
    aromatic_rings_.push_back(std::move(ar));
  }
  for (auto &ar : aromatic_rings_) {
    for (std::size_t i = 0; i < ar.atoms.size(); ++i) {
      const bool fused = atom_aromatic_rings_[ar.atoms[i]].size() > 1;
      if (fused) {
        ar.tokens[i] += '*';
        ar.fused = true;
      }
      const auto &at = m.atom(ar.atoms[i]);
      ar.codes.push_back(ring_token_code(at.atomic_number, at.formal_charge, fused));
    }
    for (const auto &t : ar.tokens) ar.text += (ar.text.empty() ? "" : ".") + t;
  }
}

SmartsTarget &Engine::smarts_target() {
  if (!target_) target_ = std::make_unique<SmartsTarget>(m);
  return *target_;
}

BondOrder Engine::order(std::size_t a, std::size_t b) const {
  const auto k = m.bond_between(a, b);
  return k < 0 ? BondOrder::Single : m.bond(static_cast<std::size_t>(k)).order;
}

double Engine::chi(std::size_t a) const {
  const unsigned z = m.atom(a).atomic_number;
  return z < tab.karplus.chi.size() ? tab.karplus.chi[z] : std::numeric_limits<double>::quiet_NaN();
}

int Engine::shared_aromatic_ring(std::size_t a, std::size_t b) const {
  if (!aromatic_done_) find_aromatic_rings();
  for (int r : atom_aromatic_rings_[a])
    for (int s : atom_aromatic_rings_[b])
      if (r == s) return r;
  return -1;
}

const CouplingValue *Engine::hh(HhRule r) const {
  const auto &v = tab.hh[static_cast<std::size_t>(r)];
  return v.present ? &v : nullptr;
}

Relation Engine::relation(std::size_t ca, std::size_t cb, std::size_t x, std::size_t y) const {
  // In a ring of up to seven atoms the ring bonds hold the two ring
  // neighbours on one side (io/ gives such bonds no stereo entry).
  if (const auto *ring = bond_ring(ca, cb); ring && ring->size() <= 7) {
    const bool xin = std::find(ring->begin(), ring->end(), x) != ring->end();
    const bool yin = std::find(ring->begin(), ring->end(), y) != ring->end();
    return {xin == yin ? Side::Cis : Side::Trans, false};
  }
  for (const auto &d : m.double_bond_stereo()) {
    std::size_t ra, rb;
    if (d.begin == ca && d.end == cb)
      ra = d.ref_begin, rb = d.ref_end;
    else if (d.begin == cb && d.end == ca)
      ra = d.ref_end, rb = d.ref_begin;
    else
      continue;
    // A reference atom other than ours is the other group on that carbon,
    // which flips the relation (each carbon has exactly two other neighbours).
    const bool cis = (d.cis != (ra != x)) != (rb != y);
    return {cis ? Side::Cis : Side::Trans, false};
  }
  std::vector<std::size_t> on_a, on_b;
  for (auto it = m.neighbours_begin(ca); it != m.neighbours_end(ca); ++it)
    if (*it != cb) on_a.push_back(*it);
  for (auto it = m.neighbours_begin(cb); it != m.neighbours_end(cb); ++it)
    if (*it != ca) on_b.push_back(*it);
  if (on_a.size() != 2 || on_b.size() != 2) return {};
  auto both_h = [&](const std::vector<std::size_t> &v) { return m.is_hydrogen(v[0]) && m.is_hydrogen(v[1]); };
  // =CH2 end: the convention of the 1H increment rules (increments_h1.cpp),
  // applied per class as predict_h1 copies the representative's shift: the
  // proton whose class representative has the lower index is cis to the
  // higher-ranked group on the other carbon.
  auto ch2 = [&](std::size_t p, const std::vector<std::size_t> &mine, const std::vector<std::size_t> &other,
                 std::size_t g) -> Relation {
    const std::size_t p2 = mine[0] == p ? mine[1] : mine[0];
    std::vector<std::size_t> heavy_groups;
    for (auto q : other)
      if (!m.is_hydrogen(q)) heavy_groups.push_back(q);
    if (heavy_groups.empty()) return {};
    std::size_t top = heavy_groups[0];
    if (heavy_groups.size() == 2) {
      const auto &rank = classes.invariant_rank;
      const auto u = heavy_groups[0], v = heavy_groups[1];
      top = rank[u] != rank[v] ? (rank[u] > rank[v] ? u : v) : std::min(u, v);
    }
    bool p_cis_top;
    if (same_class(p, p2)) {
      // Both protons alike: the graph cannot say which is which, and any
      // labelling is as good as another only if the groups opposite are
      // alike too; otherwise follow the index rule.
      if (same_class(other[0], other[1])) return {};
      p_cis_top = p < p2;
    } else {
      p_cis_top = class_rep(p) < class_rep(p2);
    }
    return {((g == top) == p_cis_top) ? Side::Cis : Side::Trans, false};
  };
  const bool a_ch2 = both_h(on_a), b_ch2 = both_h(on_b);
  if (a_ch2 && b_ch2) return {};
  if (a_ch2 && m.is_hydrogen(x)) return ch2(x, on_a, on_b, y);
  if (b_ch2 && m.is_hydrogen(y)) return ch2(y, on_b, on_a, x);
  // One hydrogen on each carbon and no geometry: E assumed, as the 1H
  // increment rules do, so the two hydrogens are trans.
  const bool one_h_a = m.is_hydrogen(on_a[0]) != m.is_hydrogen(on_a[1]);
  const bool one_h_b = m.is_hydrogen(on_b[0]) != m.is_hydrogen(on_b[1]);
  if (one_h_a && one_h_b) return {m.is_hydrogen(x) != m.is_hydrogen(y) ? Side::Cis : Side::Trans, true};
  return {};
}

Side Engine::ring_faces(const std::vector<std::uint32_t> &ring, std::size_t c1, std::size_t h1, std::size_t c2,
                        std::size_t h2) const {
  const std::size_t n = ring.size();
  const auto i1 = static_cast<std::size_t>(std::find(ring.begin(), ring.end(), c1) - ring.begin());
  const auto i2 = static_cast<std::size_t>(std::find(ring.begin(), ring.end(), c2) - ring.begin());
  if (i1 >= n || i2 >= n) return Side::Unknown;
  // Face of ligand x on ring atom c with ring neighbours prev, next (in one
  // direction of travel round the ring): +1 when, seen from x, prev -> next
  // -> (the fourth ligand) turn clockwise. For a ring travelled the same way
  // at every atom, equal faces mean the same side of the ring.
  auto face = [&](std::size_t c, std::size_t x, std::size_t prev, std::size_t next) -> int {
    for (const auto &t : m.tetrahedral_stereo()) {
      if (t.centre != c) continue;
      std::int64_t fourth = kLonePair;
      for (auto it = m.neighbours_begin(c); it != m.neighbours_end(c); ++it)
        if (*it != x && *it != prev && *it != next) fourth = *it;
      const std::array<std::int64_t, 4> from{t.ligands[0], t.ligands[1], t.ligands[2], t.ligands[3]};
      return parity(from, {static_cast<std::int64_t>(x), static_cast<std::int64_t>(prev),
                           static_cast<std::int64_t>(next), fourth});
    }
    return 0;
  };
  const bool forward = ring[(i1 + 1) % n] == c2;
  auto after = [&](std::size_t i) { return ring[(i + 1) % n]; };
  auto before = [&](std::size_t i) { return ring[(i + n - 1) % n]; };
  const int f1 = forward ? face(c1, h1, before(i1), after(i1)) : face(c1, h1, after(i1), before(i1));
  const int f2 = forward ? face(c2, h2, before(i2), after(i2)) : face(c2, h2, after(i2), before(i2));
  if (f1 != 0 && f2 != 0) return f1 == f2 ? Side::Cis : Side::Trans;
  // Two CH2 groups whose protons fall into two classes each: in a small
  // ring the symmetry exchanging the carbons keeps the faces (a symmetry
  // swapping the faces would make both protons of a carbon alike), so
  // protons of one class share a face.
  if (n == 3 && hydrogens(c1).size() == 2 && hydrogens(c2).size() == 2) {
    const auto &p = hydrogens(c1), &q = hydrogens(c2);
    if (!same_class(p[0], p[1]) && !same_class(q[0], q[1]) &&
        ((same_class(p[0], q[0]) && same_class(p[1], q[1])) || (same_class(p[0], q[1]) && same_class(p[1], q[0]))))
      return same_class(h1, h2) ? Side::Cis : Side::Trans;
  }
  return Side::Unknown;
}

bool Engine::has_position(std::size_t a) const {
  if (!coordinates_ok_) return false;
  const double *p = position(a);
  return std::isfinite(p[0]) && std::isfinite(p[1]) && std::isfinite(p[2]);
}

const VinylRow *Engine::vinyl_row(std::size_t s, std::size_t c) {
  const auto key = std::make_pair(s, c);
  if (const auto it = vinyl_cache_.find(key); it != vinyl_cache_.end()) return it->second;
  const VinylRow *found = nullptr;
  const auto p = alkene_partner(c);
  if (p >= 0) {
    std::vector<bool> skeleton(m.atom_count(), false);
    skeleton[c] = skeleton[static_cast<std::size_t>(p)] = true;
    for (const auto &row : tab.vinyl)
      if (match_at(row.smarts, smarts_target(), s, skeleton)) {
        found = &row;
        break;
      }
  }
  vinyl_cache_.emplace(key, found);
  return found;
}

bool Engine::anchor_matches(std::size_t k, std::size_t x) {
  const auto key = std::make_pair(tab.hetero[k].anchor_index, x);
  if (const auto it = anchor_cache_.find(key); it != anchor_cache_.end()) return it->second;
  const bool ok = match_at(tab.anchors[key.first], smarts_target(), x) > 0;
  anchor_cache_.emplace(key, ok);
  return ok;
}

const OneBondRow *Engine::one_bond_row(std::size_t c) {
  if (const auto it = one_bond_cache_.find(c); it != one_bond_cache_.end()) return it->second;
  const OneBondRow *found = nullptr;
  for (const auto &row : tab.one_bond)
    if (match_at(row.smarts, smarts_target(), c)) {
      found = &row;
      break;
    }
  one_bond_cache_.emplace(c, found);
  return found;
}

}  // namespace nmrpred::detail
