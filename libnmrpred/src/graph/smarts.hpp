#ifndef NMRPRED_GRAPH_SMARTS_HPP
#define NMRPRED_GRAPH_SMARTS_HPP

// A small SMARTS matcher over nmrpred::Molecule, enough for the patterns of
// the rule tables (tables/increments/*.tsv). Semantics follow the Daylight
// SMARTS theory manual as RDKit implements it for a molecule read from SMILES
// with implicit hydrogens:
//  - hydrogens are explicit atoms in our graph, but patterns never map an atom
//    onto a hydrogen (a pattern that asks for a hydrogen atom is rejected);
//  - H<n> counts all hydrogens on the atom, X<n> all its connections
//    (hydrogens included), D<n> its heavy-atom neighbours;
//  - R<n> is the number of smallest rings that contain the atom, r<n> the
//    size of the smallest of them. "Smallest rings" are the SSSR plus every
//    equally small alternative (relevant cycles), which agrees with RDKit's
//    symmetrized SSSR on the ring systems we checked (tests/test_smarts.cpp);
//  - a bond written as nothing means "single or aromatic";
//  - $(...) recursive patterns are matched on their own, anchored at the atom,
//    independently of the enclosing match.
// Supported: organic-subset and bracket atoms (element symbols, aromatic
// b c n o p s se as, '*', 'a', 'A', #n, isotope, H, D, X, R, r, charges), '!',
// '&', ',', ';', bonds - = # : ~ @ (and / \ as single), branches, ring closures
// (digits and %nn), recursive $(...). Anything else (chirality, '.', h, v, x,
// reaction syntax) is rejected with a TablesError naming the pattern.

#include <array>
#include <cstddef>
#include <cstdint>
#include <functional>
#include <memory>
#include <string>
#include <string_view>
#include <unordered_map>
#include <vector>

#include <nmrpred/molecule.hpp>

namespace nmrpred::detail {

struct SmartsImpl;

// A compiled pattern. Immutable and cheap to copy (shared representation);
// may be used from any number of threads.
class SmartsPattern {
 public:
  SmartsPattern() = default;
  // Throws TablesError naming `text` on a syntax error or unsupported feature.
  explicit SmartsPattern(std::string_view text);
  std::string_view text() const noexcept;
  // Number of atoms of the top-level pattern (recursive parts not counted).
  std::size_t atom_count() const noexcept;
  bool empty() const noexcept { return !impl_; }
  // The order in which a search rooted at pattern atom `root` places the
  // pattern atoms (root first). Neighbours are tried in ascending atom
  // index, so for_each_match with only `root` fixed visits its mappings in
  // ascending lexicographic order of (map[order[0]], map[order[1]], ...).
  const std::vector<std::uint32_t> &search_order(std::size_t root) const;
  const SmartsImpl &impl() const noexcept { return *impl_; }
  // The plain demands of pattern atom 0 (element, aromaticity, hydrogen
  // count, degrees, charge) as a test on SmartsTarget::packed(): false when
  // an anchored match on `packed` cannot exist. Kept in the pattern itself
  // because rule tables try every row on every atom and most rows fail here.
  bool root_may_match(std::uint64_t packed) const noexcept { return (packed & root_mask_) == root_value_; }
  // Whether root_may_match() can hold for an atom of this atomic number
  // (0..255): false when pattern atom 0 demands another element. Lets a
  // rule table list, per element, the rows worth trying on its atoms.
  bool root_may_be(unsigned atomic_number) const noexcept;
  // The same for the atoms bonded to pattern atom 0, on
  // SmartsTarget::neighbour_kinds(): false when some of them finds no heavy
  // neighbour of the element and over a bond that it asks for. Rows that
  // pass the root mostly fail here, for less than a call.
  bool neighbours_may_match(std::uint64_t kinds) const noexcept {
    for (std::size_t i = 0; i < neighbour_demands_; ++i)
      if ((neighbour_kinds_[i] & kinds) == 0) return false;
    return true;
  }

 private:
  std::shared_ptr<const SmartsImpl> impl_;
  // An empty pattern matches nothing: all bits demanded, none given.
  std::uint64_t root_mask_ = ~std::uint64_t{0}, root_value_ = 0;
  // Per pattern atom bonded to atom 0 (the first few; a necessary
  // condition needs not all), the neighbour kinds it may take.
  std::array<std::uint64_t, 4> neighbour_kinds_{};
  std::size_t neighbour_demands_ = 0;
};

// One smallest ring of SmartsTarget::rings(): its atoms in ring order, seen
// in the target's atom pool (valid while the target lives). A view, not a
// list per ring: a list per ring was an allocation per ring per molecule.
class RingView {
 public:
  RingView() = default;
  RingView(const std::uint32_t *first, const std::uint32_t *last) noexcept : first_(first), last_(last) {}
  const std::uint32_t *begin() const noexcept { return first_; }
  const std::uint32_t *end() const noexcept { return last_; }
  std::size_t size() const noexcept { return static_cast<std::size_t>(last_ - first_); }
  bool empty() const noexcept { return first_ == last_; }
  std::uint32_t operator[](std::size_t i) const noexcept { return first_[i]; }
  // The same ring of the same list (not merely the same atoms).
  bool same(const RingView &other) const noexcept { return first_ == other.first_ && last_ == other.last_; }

 private:
  const std::uint32_t *first_ = nullptr, *last_ = nullptr;
};

// SmartsTarget::rings(): the rings' atoms in one pool, each ring a span of it.
class RingList {
 public:
  struct Span {
    std::uint32_t offset = 0, size = 0;
  };
  class iterator {
   public:
    iterator(const std::uint32_t *pool, const Span *span) noexcept : pool_(pool), span_(span) {}
    RingView operator*() const noexcept { return RingView(pool_ + span_->offset, pool_ + span_->offset + span_->size); }
    iterator &operator++() noexcept {
      ++span_;
      return *this;
    }
    bool operator==(const iterator &other) const noexcept { return span_ == other.span_; }
    bool operator!=(const iterator &other) const noexcept { return span_ != other.span_; }

   private:
    const std::uint32_t *pool_;
    const Span *span_;
  };
  std::size_t size() const noexcept { return spans_.size(); }
  bool empty() const noexcept { return spans_.empty(); }
  RingView operator[](std::size_t i) const noexcept { return *iterator(pool_.data(), spans_.data() + i); }
  iterator begin() const noexcept { return iterator(pool_.data(), spans_.data()); }
  iterator end() const noexcept { return iterator(pool_.data(), spans_.data() + spans_.size()); }

 private:
  friend class SmartsTarget;
  std::vector<std::uint32_t> pool_;
  std::vector<Span> spans_;
};

// Per-molecule facts that patterns ask about, read from the molecule once
// because every pattern of every rule table asks them again. Ring perception
// runs on first use only. Not thread-safe: one target per thread (it also
// keeps scratch space and the results of recursive $(...) parts).
class SmartsTarget {
 public:
  explicit SmartsTarget(const Molecule &m);
  // No molecule yet: reset() gives it one.
  SmartsTarget() = default;
  ~SmartsTarget();
  SmartsTarget(const SmartsTarget &) = delete;
  SmartsTarget &operator=(const SmartsTarget &) = delete;
  // Forgets everything known of the molecule it had and reads `m`, keeping
  // the capacity of its buffers (a target per molecule cost a dozen
  // allocations, about as much as the rings of a small one).
  void reset(const Molecule &m);
  const Molecule &molecule() const noexcept { return *m_; }
  std::size_t heavy_degree(std::size_t atom) const { return atoms_[atom].heavy_degree; }
  // Whether ring perception has run (the ring queries below run it once).
  bool rings_known() const noexcept { return rings_done_; }
  // Number of smallest rings (smarts.hpp) that contain the atom / the bond.
  // Asked for every candidate of many searches: inline, perceiving once.
  int ring_count(std::size_t atom) const {
    if (!rings_done_) perceive_rings();
    return atoms_[atom].ring_count;
  }
  // Whether some bond lies on a ring. A quarter of the molecules has none,
  // and they get no per-bond counts: ask this before bond_ring_count().
  bool has_ring_bonds() const {
    if (!rings_done_) perceive_rings();
    return !bond_rings_.empty();
  }
  // Precondition: has_ring_bonds().
  int bond_ring_count(std::size_t bond) const { return bond_rings_[bond]; }
  // Size of the smallest ring that contains the atom, 0 if none.
  int smallest_ring(std::size_t atom) const {
    if (!rings_done_) perceive_rings();
    return atoms_[atom].smallest_ring;
  }
  // The smallest rings as atom lists in ring order, smallest first.
  const RingList &rings() const {
    if (!rings_done_) perceive_rings();
    return rings_;
  }

  // The atom properties patterns test, copied out of the molecule.
  struct AtomFacts {
    std::uint8_t atomic_number = 0;
    bool aromatic = false;
    std::int8_t formal_charge = 0;
    std::uint16_t isotope = 0;
    std::uint32_t hydrogens = 0;  // bonded hydrogens, any isotope
    std::uint32_t degree = 0;     // all neighbours, hydrogens included
  };
  const AtomFacts &facts(std::size_t atom) const { return atoms_[atom].facts; }
  // The same facts packed into one word (smarts.cpp, kPack*), so that a
  // pattern atom's plain demands are tested with one mask and compare.
  std::uint64_t packed(std::size_t atom) const { return atoms_[atom].packed; }
  // packed() of an atom with these facts and this many heavy neighbours.
  static std::uint64_t pack(const AtomFacts &facts, std::uint8_t heavy_degree);
  // The kinds of the atom's heavy neighbours: bit kind_bit(element, order)
  // set for each neighbour of that element over a bond of that order.
  std::uint64_t neighbour_kinds(std::size_t atom) const { return atoms_[atom].neighbour_kinds; }
  // Sixteen element groups by four bond orders; the elements of organic
  // molecules have a group each, the rest share one (smarts.cpp).
  static unsigned kind_bit(unsigned atomic_number, BondOrder order);
  std::size_t atom_count() const noexcept { return atoms_.size(); }
  // Heavy atoms with this atomic number (0..127) and aromatic flag.
  std::uint32_t element_count(unsigned atomic_number, bool aromatic) const {
    return atomic_number < 128 ? element_count_[atomic_number * 2 + (aromatic ? 1 : 0)] : 0;
  }

  // Matcher internals (smarts.cpp): per atom, the memoised result of a
  // recursive part (-1 not yet known, 0, 1), and search buffers reused
  // between searches. recursive_slot() finds or opens the part's row of
  // the memo, shared by all parts of the same text; the reference
  // recursive_value() returns is invalidated by the next recursive_slot()
  // call.
  std::size_t recursive_slot(const SmartsImpl *part) const;
  std::int8_t &recursive_value(std::size_t slot, std::size_t atom) const { return memo_pool_[slot + atom]; }
  std::vector<std::uint32_t> take_buffer() const;
  void return_buffer(std::vector<std::uint32_t> &&buffer) const;
  // The atom map of a search that hands no mapping to a caller: `n` slots on
  // a stack inside the target (the searches of nested recursive parts stack
  // up), or null when they do not fit and the search takes a buffer. Every
  // rule table asks anchored searches of every atom: a buffer per search
  // cost an allocation whenever a deeper nesting or a larger pattern came.
  std::uint32_t *push_map(std::size_t n) const {
    if (n > map_stack_.size() - map_top_) return nullptr;
    std::uint32_t *const slots = map_stack_.data() + map_top_;
    map_top_ += n;
    return slots;
  }
  void pop_map(std::size_t n) const { map_top_ -= n; }
  // Ring systems (atoms joined by bonds in smallest rings) and their heavy
  // atoms by atomic number (0..127) and aromatic flag, as element_count().
  std::size_t ring_system_count() const;
  std::uint32_t ring_system_element_count(std::size_t system, unsigned atomic_number, bool aromatic) const;

 private:
  void perceive_rings() const;
  void perceive_ring_systems() const;
  const Molecule *m_ = nullptr;
  // Everything known of one atom side by side: a search tests several of
  // these facts on each candidate, and one record per atom is one
  // allocation per molecule where an array per fact was one per fact.
  struct AtomRecord {
    AtomFacts facts;
    std::uint8_t heavy_degree = 0;
    // Set by ring perception (wrapping at 256 as the counts always did).
    std::uint8_t ring_count = 0, smallest_ring = 0;
    std::int32_t ring_part = -1;  // ring system, -1 off every ring
    std::uint64_t packed = 0;
    std::uint64_t neighbour_kinds = 0;
  };
  mutable std::vector<AtomRecord> atoms_;  // ring fields filled on first ring query
  std::array<std::uint32_t, 256> element_count_{};
  mutable bool rings_done_ = false;
  mutable RingList rings_;
  mutable std::vector<std::uint8_t> bond_rings_;
  mutable std::uint32_t ring_parts_ = 0;  // ring systems
  static constexpr std::size_t kSystemCountSize = 256;  // per ring system: counts as element_count_
  mutable bool systems_done_ = false;
  mutable std::vector<std::uint32_t> system_counts_;
  // Memo rows one after another in one pool; an open-addressing table
  // (power-of-two size, linear probing) maps a part's text to its row's
  // offset. A molecule asks about some dozens of parts: a node-based map
  // cost an allocation per part and per node.
  mutable std::vector<std::int8_t> memo_pool_;
  static constexpr std::size_t kMemoRowsReserved = 48;
  mutable std::vector<std::pair<const SmartsImpl *, std::size_t>> memo_slots_;
  mutable std::size_t memo_used_ = 0;
  mutable std::vector<std::vector<std::uint32_t>> buffers_;
  // push_map()'s stack: room for a dozen nested searches of table patterns.
  mutable std::array<std::uint32_t, 256> map_stack_;
  mutable std::size_t map_top_ = 0;
  // perceive_rings()'s scratch, kept from one molecule to the next: blocks
  // per heavy atom and per bond, and the candidate cycles of a ring system
  // of more than one ring with their bond sets and the elimination's rows.
  struct RingScratch {
    std::vector<std::int32_t> sized;
    struct Cycle {
      std::uint32_t atoms_off, size, bits_off;
    };
    std::vector<Cycle> candidates;
    std::vector<std::uint64_t> bit_pool, basis, v;
    std::vector<std::size_t> pivots;
    std::vector<std::uint32_t> by_bits, group;
    std::vector<char> copy;
  };
  mutable RingScratch ring_scratch_;
};

// Anchored match: does `p` match with its atom 0 on molecule atom `atom`,
// using no atom whose flag in `excluded` is set (`excluded` may be empty or
// shorter than the atom count: missing flags are false)? Returns the number of
// pattern atoms matched (p.atom_count()), or 0 when there is no match.
std::size_t match_at_unscreened(const SmartsPattern &p, const SmartsTarget &t, std::size_t atom,
                                const std::vector<bool> &excluded);
// The screens are inline at every call site (rule tables call this for
// every row on every atom, and most calls end in them).
#if defined(__GNUC__)
[[gnu::always_inline]]
#endif
inline std::size_t match_at(const SmartsPattern &p, const SmartsTarget &t, std::size_t atom,
                            const std::vector<bool> &excluded = {}) {
  if (atom >= t.atom_count() || !p.root_may_match(t.packed(atom)) || !p.neighbours_may_match(t.neighbour_kinds(atom)))
    return 0;
  return match_at_unscreened(p, t, atom, excluded);
}

// Every mapping (pattern atom -> molecule atom) in which pattern atom i sits on
// `fixed[i]` when fixed[i] >= 0 (fixed may be empty), using no excluded atom.
// `visit` returns true to stop the search. Returns true if any mapping was
// visited. Mappings that differ only by symmetry are all visited.
bool for_each_match(const SmartsPattern &p, const SmartsTarget &t, const std::vector<std::int64_t> &fixed,
                    const std::vector<bool> &excluded,
                    const std::function<bool(const std::vector<std::uint32_t> &)> &visit);

// The first mapping for_each_match() visits with pattern atom 0 fixed on
// `atom` and no other, into `out`; false (and `out` empty) if there is none.
// Without the visitor's costs, for callers that want one mapping.
bool first_match_at(const SmartsPattern &p, const SmartsTarget &t, std::size_t atom, const std::vector<bool> &excluded,
                    std::vector<std::uint32_t> &out);

// Every mapping of `p` (what for_each_match with no fixed atom visits), in no
// particular order: the search starts from the pattern atom with the rarest
// element. Callers that need for_each_match's order for an anchored search
// rebuild it with search_order() (see there).
std::vector<std::vector<std::uint32_t>> all_matches(const SmartsPattern &p, const SmartsTarget &t);

}  // namespace nmrpred::detail

#endif
