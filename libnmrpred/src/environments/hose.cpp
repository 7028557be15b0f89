// HOSE-style environment codes after BREMSER-1978 (tables/SOURCES.md). The
// syntax, the priority table and the tie rule are specified in docs/hose.md;
// this file follows that text.
//
// How the code is made canonical. Atoms are taken sphere by sphere; inside a
// group they are sorted by their entry (bond, element, charge). Siblings with
// equal entries are "tied": their order changes nothing in the sphere being
// written, only which later groups come first and therefore which of two paths
// to a ring atom writes it and which writes '&'. The code is defined as the
// first one in priority order, compared sphere by sphere, over every order of
// tied siblings. Depending on nothing but the atoms within the spheres, the
// result is the same for any input order, and a code with k spheres is the
// first k spheres of a longer one.
//
// Finding that order without trying all permutations:
//  * a tied sibling whose branch neither shares atoms with, nor has bonds to,
//    the rest of the sphere-limited graph ("closed") writes the same text
//    wherever it stands; closed siblings are sorted by the text of their own
//    branch, computed once per centre;
//  * other tied siblings are placed one position at a time, keeping every
//    choice whose group is first in priority order; partial layouts with the
//    same future are merged, and of two candidates that a checked symmetry
//    exchanges only one is explored. A beam cap bounds work on cage-like graphs.

#include <nmrpred/error.hpp>
#include <nmrpred/hose.hpp>

#include <algorithm>
#include <array>
#include <charconv>
#include <cstdint>
#include <cstring>
#include <memory>
#include <type_traits>
#include <string>
#include <string_view>
#include <vector>

#include <fmt/format.h>

#include "shifts/reference_index.hpp"
#include "support/small_vec.hpp"
#include "support/thread_lease.hpp"

namespace nmrpred {

namespace {

using detail::SmallVec;

// A written entry is one 32-bit token whose numeric order is the priority
// order (smaller = written first): bond rank << 24 | kind << 12 | charge rank.
// The end of a group is a token larger than any entry, so a group that stops
// early sorts after a longer one sharing its start.
constexpr std::uint32_t kEndOfGroup = 0xFFFFFFFFu;
constexpr std::uint32_t kRingClosureKind = 0xFFFu;
constexpr std::uint8_t kOutside = 0xFF;
constexpr std::uint32_t kNone = 0xFFFFFFFFu;
// Partial layouts kept per sphere. Beyond it the kept layouts are the first
// found and the code could depend on atom order; the NCI sample needs at most
// 105 (Zr and Th tetrakis(acetylacetonates)), C60 far fewer.
constexpr std::size_t kMaxBeam = 512;
// Engine::run() spheres: none at all (0 means the engine's full count).
constexpr int kNoSpheres = -1;

// Digest terms (Engine::digests()): one domain bit each for the centre, a
// written atom and a bond, so their terms never share an input.
constexpr std::uint64_t kDigestCentre = std::uint64_t{1} << 60;
constexpr std::uint64_t kDigestAtom = std::uint64_t{2} << 60;
constexpr std::uint64_t kDigestBond = std::uint64_t{3} << 60;

// A 64-bit mixer (the splitmix64 finaliser, common practice).
constexpr std::uint64_t mix64(std::uint64_t x) noexcept {
  x ^= x >> 30;
  x *= 0xBF58476D1CE4E5B9ull;
  x ^= x >> 27;
  x *= 0x94D049BB133111EBull;
  return x ^ (x >> 31);
}

// digests() term of a bond, by bond rank.
constexpr std::array<std::uint64_t, 4> kBondDigests = {mix64(kDigestBond | 0u << 24), mix64(kDigestBond | 1u << 24),
                                                       mix64(kDigestBond | 2u << 24), mix64(kDigestBond | 3u << 24)};

// Element priority, source: BREMSER-1978 (from memory): C, O, N, S, P, Si, B,
// F, Cl, Br, I; other elements follow by atomic number.
constexpr std::array<unsigned, 11> kPriorityElements = {6, 8, 7, 16, 15, 14, 5, 9, 17, 35, 53};

constexpr std::uint32_t element_kind_search(unsigned z) noexcept {
  for (std::uint32_t k = 0; k < kPriorityElements.size(); ++k)
    if (kPriorityElements[k] == z) return k;
  return static_cast<std::uint32_t>(kPriorityElements.size()) + z;
}

// element_kind_search() of the elements there are, read once per atom.
constexpr std::array<std::uint32_t, 128> make_kind_table() {
  std::array<std::uint32_t, 128> t{};
  for (unsigned z = 0; z < t.size(); ++z) t[z] = element_kind_search(z);
  return t;
}
constexpr std::array<std::uint32_t, 128> kKindTable = make_kind_table();

std::uint32_t element_kind(unsigned z) noexcept {
  return z < kKindTable.size() ? kKindTable[z] : element_kind_search(z);
}

unsigned kind_element(std::uint32_t kind) noexcept {
  return kind < kPriorityElements.size() ? kPriorityElements[kind]
                                         : kind - static_cast<std::uint32_t>(kPriorityElements.size());
}

// Multiple bonds before single ones, source: BREMSER-1978 (from memory).
std::uint32_t bond_rank(BondOrder order) noexcept {
  switch (order) {
    case BondOrder::Triple: return 0;
    case BondOrder::Double: return 1;
    case BondOrder::Aromatic: return 2;
    case BondOrder::Single: return 3;
  }
  return 3;
}

// Symbols of bond ranks 0..2; single bonds (rank 3) have none.
constexpr const char kBondSymbols[] = "%=*";

// Neutral first, then +1, -1, +2, -2, ...
std::uint32_t charge_rank(int q) noexcept {
  if (q == 0) return 0;
  return q > 0 ? static_cast<std::uint32_t>(2 * q - 1) : static_cast<std::uint32_t>(-2 * q);
}

int rank_charge(std::uint32_t r) noexcept {
  if (r == 0) return 0;
  return (r & 1u) ? static_cast<int>((r + 1) / 2) : -static_cast<int>(r / 2);
}

// Longest text of one entry: bond, two-letter symbol, sign, three digits
// (formal charges are 8-bit).
constexpr std::size_t kTokenTextMax = 7;
// Longest centre text: symbol, charge, '-', a degree of up to 10 digits.
constexpr std::size_t kCentreTextMax = 2 + 4 + 1 + 10;

char *put_symbol(char *p, unsigned z) noexcept {
  const char *sym = Molecule::element_symbol(z);  // one or two letters
  *p++ = sym[0];
  if (sym[1]) *p++ = sym[1];
  return p;
}

char *put_charge(char *p, int q) noexcept {
  if (q == 0) return p;
  *p++ = q > 0 ? '+' : '-';
  const int mag = q > 0 ? q : -q;
  if (mag > 1) p = std::to_chars(p, p + 3, mag).ptr;
  return p;
}

// Symbols of kPriorityElements, in that order: most entries are one of these,
// and a table read is cheaper than the general lookup.
constexpr std::array<const char *, 11> kPrioritySymbols = {"C", "O", "N", "S", "P", "Si", "B", "F", "Cl", "Br", "I"};

inline char *put_token(char *p, std::uint32_t token) noexcept {
  const std::uint32_t bond = token >> 24;
  if (bond < 3) *p++ = kBondSymbols[bond];
  const std::uint32_t kind = (token >> 12) & 0xFFFu;
  if (kind == kRingClosureKind) {
    *p++ = '&';
    return p;
  }
  if (kind < kPrioritySymbols.size()) {
    const char *sym = kPrioritySymbols[kind];
    *p++ = sym[0];
    if (sym[1]) *p++ = sym[1];
  } else {
    p = put_symbol(p, kind_element(kind));
  }
  const std::uint32_t charge = token & 0xFFFu;
  return charge ? put_charge(p, rank_charge(charge)) : p;
}

// Text of the tokens most entries are: any bond with an uncharged element of
// kPriorityElements, or a ring closure. make() copies four bytes and
// advances by the length instead of branching per character.
struct ShortTokenText {
  char text[4];
  std::uint8_t len;
};
constexpr std::size_t kShortKinds = kPrioritySymbols.size() + 1;  // the last one is '&'

constexpr std::array<ShortTokenText, 4 * kShortKinds> make_short_tokens() {
  std::array<ShortTokenText, 4 * kShortKinds> t{};
  for (std::size_t bond = 0; bond < 4; ++bond) {
    for (std::size_t kind = 0; kind < kShortKinds; ++kind) {
      ShortTokenText &e = t[bond * kShortKinds + kind];
      std::uint8_t n = 0;
      if (bond < 3) e.text[n++] = kBondSymbols[bond];
      if (kind + 1 == kShortKinds) {
        e.text[n++] = '&';
      } else {
        const char *sym = kPrioritySymbols[kind];
        for (std::size_t i = 0; sym[i] != 0; ++i) e.text[n++] = sym[i];
      }
      e.len = n;
    }
  }
  return t;
}
constexpr std::array<ShortTokenText, 4 * kShortKinds> kShortTokens = make_short_tokens();

// put_token() for a buffer with at least four bytes of room after `p`.
inline char *put_token_padded(char *p, std::uint32_t token) noexcept {
  const std::uint32_t bond = token >> 24;
  const std::uint32_t kind = (token >> 12) & 0xFFFu;
  const std::uint32_t charge = token & 0xFFFu;
  std::uint32_t slot = kShortKinds;  // none
  if (kind == kRingClosureKind)
    slot = kShortKinds - 1;
  else if (kind < kPrioritySymbols.size() && charge == 0)
    slot = kind;
  if (slot == kShortKinds || bond > 3) return put_token(p, token);
  const ShortTokenText &e = kShortTokens[bond * kShortKinds + slot];
  std::memcpy(p, e.text, 4);
  return p + e.len;
}

bool is_real(std::uint32_t token) noexcept { return ((token >> 12) & 0xFFFu) != kRingClosureKind; }

// -1, 0, +1 comparison of two token strings that each end implicitly with
// kEndOfGroup (a proper prefix therefore sorts last).
int compare_groups(const std::uint32_t *a, std::size_t na, const std::uint32_t *b, std::size_t nb) noexcept {
  const std::size_t n = std::min(na, nb);
  for (std::size_t i = 0; i < n; ++i)
    if (a[i] != b[i]) return a[i] < b[i] ? -1 : 1;
  if (na == nb) return 0;
  return na > nb ? -1 : 1;
}

struct Neighbour {
  std::uint32_t atom;
  std::uint32_t bond;  // bond rank already shifted into token position
};

// What a run of tied siblings needs at the next sphere.
constexpr std::uint8_t kRunFixed = 0;     // closed branches, already sorted by their text
constexpr std::uint8_t kRunSearch = 1;    // order can matter: placed by the search
constexpr std::uint8_t kRunNoFuture = 2;  // all write an empty group and nothing after

struct Candidate {
  std::uint32_t partial;
  std::uint32_t position;
  std::uint32_t tok_off, tok_len;
  std::uint32_t real_off, real_len;
};

// Partial layouts of one sphere: the order chosen so far for the atoms of the
// current level, marks (level-k atoms already expanded, level-k+1 atoms already
// written), and the level-k+1 atoms in written order.
struct Partials {
  std::size_t count = 0;
  SmallVec<std::uint32_t, 64> seq;    // count x L
  SmallVec<std::uint64_t, 8> marks;   // count x W
  SmallVec<std::uint32_t, 64> next;   // count x L1 (capacity; `filled` used)
  SmallVec<std::uint32_t, 8> source;  // beam state each partial descends from
};

// Buffers of one generation pass. Sub-passes for closed branches start at a
// deeper level and use the frame of that level, so frames never overlap.
struct Frame {
  SmallVec<std::uint32_t, 32> seqs;  // beam states x len
  std::size_t states = 0;
  std::size_t len = 0;  // atoms of the current level written by this pass
  SmallVec<std::uint32_t, 16> runs;    // [begin, end) position pairs of tied siblings
  SmallVec<std::int32_t, 32> run_at;   // position -> run index, -1 if none
  SmallVec<std::uint8_t, 32> open;     // states x runs: one of the Run* values below
  std::array<Partials, 2> parts;       // the current layouts and room for the next ones
  int cur_part = 0;
  Partials &cur() noexcept { return parts[static_cast<std::size_t>(cur_part)]; }
  Partials &alt() noexcept { return parts[static_cast<std::size_t>(1 - cur_part)]; }
  void flip() noexcept { cur_part = 1 - cur_part; }
  SmallVec<Candidate, 16> cands;
  SmallVec<std::uint32_t, 128> ctok;
  SmallVec<std::uint32_t, 32> creal;
  SmallVec<std::uint64_t, 16> entries;  // token << 32 | atom (kNone for '&')
  SmallVec<std::uint32_t, 16> order;
  SmallVec<std::uint32_t, 128> out;      // tokens, every group closed by kEndOfGroup
  SmallVec<std::uint32_t, 8> out_off;    // sphere starts in `out`, plus the end
};

class Engine {
 public:
  // `ranks` (may be empty) only guides the symmetry test; results never depend on it.
  // Sets the engine up for `m`, forgetting the previous molecule but keeping
  // every buffer's capacity, so one engine serves many calls without allocating.
  // `heavy_only`: no run will start at a hydrogen (none is wanted), so the
  // hydrogens, which no walk from a heavy atom enters, are not set up.
  void reset(const Molecule &m, int spheres, const std::vector<std::uint32_t> &ranks, bool heavy_only) {
    mol_ = &m;
    n_ = max_n_ = spheres;
    ranks_ = ranks.size() == m.atom_count() ? &ranks : nullptr;
    const std::size_t count = m.atom_count();
    const std::size_t heavy = m.heavy_atom_count();
    adj_off_.assign(count + 1, 0);
    // Each bond is listed at most once from each end.
    adj_.reserve(2 * m.bond_count());
    Neighbour *const adj = adj_.data();
    std::uint32_t listed = 0;
    atom_tok_.resize(count);
    atom_digest_.resize(count);
    // The molecule's arrays are read directly: the checked accessors cost a
    // compare per bond end, and every index here comes from the molecule.
    const Atom *const atoms = m.atoms().data();
    const Bond *const bonds = m.bonds().data();
    const std::uint32_t *const nb = count > 0 ? m.neighbours_begin(0) : nullptr;
    const std::uint32_t *const bid = count > 0 ? m.bond_ids_begin(0) : nullptr;
    std::uint32_t at = 0;  // where atom i's entries start in nb and bid
    const std::size_t set_up = heavy_only ? heavy : count;
    for (std::size_t i = 0; i < set_up; ++i) {
      const Atom &a = atoms[i];
      atom_tok_[i] = element_kind(a.atomic_number) << 12 | charge_rank(a.formal_charge);
      // digests() reads the terms of written atoms only, and hydrogens never are.
      if (i < heavy) atom_digest_[i] = mix64(kDigestAtom | atom_tok_[i]);
      const auto end = static_cast<std::uint32_t>(at + m.degree(i));
      for (; at < end; ++at) {
        if (nb[at] >= heavy) continue;  // hydrogens (all atoms from heavy on) are never written
        adj[listed++] = Neighbour{nb[at], bond_rank(bonds[bid[at]].order) << 24};
      }
      adj_off_[i + 1] = listed;
    }
    std::fill(adj_off_.begin() + static_cast<std::ptrdiff_t>(set_up) + 1, adj_off_.end(), listed);
    adj_.set_size(listed);
    place_.assign(count, Place{0, 0, kOutside});
    cur_ = 0;
    walk_ = Walk{};
  }

  // Sets up the spheres of `centre`; read them with code(), hydrogen_code(),
  // parts(), keys() or hydrogen_keys(), which make each sphere when it is
  // first read, so a reader that stops early (keys() with an index) leaves
  // the outer spheres, the costliest, unmade. `spheres` (1..the count given
  // to reset(); 0 means that count) bounds the run to the first spheres,
  // which codes being prefix-stable are those of the full run.
  //
  // kNoSpheres sets up a run that makes nothing, for keys() and
  // hydrogen_keys() with an index that no sphere of the centre can match:
  // they stop before the first sphere, as they do past a run's last one.
  void run(std::uint32_t centre, int spheres = 0) {
    if (spheres == kNoSpheres) {
      n_ = 0;
      made_ = 0;
      return;
    }
    n_ = spheres > 0 ? std::min(spheres, max_n_) : max_n_;
    if (walk_.stamp == cur_ && walk_.centre == centre && walk_.levels >= n_) {
      // The digest walk just met these levels in the order build_region()
      // would: keep them, and put the deeper atoms it met back outside.
      const std::uint32_t size = level_start_[static_cast<std::size_t>(n_) + 1];
      for (std::uint32_t i = size; i < region_.size(); ++i) place_[region_[i]].stamp = 0;
      region_.set_size(size);
      walk_.levels = n_;
    } else {
      build_region(centre);
    }
    const std::size_t r = region_.size();
    closed_.assign(r, -1);
    block_off_.assign(r, kNone);
    // Stamped scratch keeps its counters across centres, so it only grows.
    if (pi_.size() < r) {
      for (auto *v : {&member_stamp_, &mark_, &pi_, &pi_stamp_, &image_stamp_, &role_, &role_stamp_}) v->resize(r, 0);
    }
    pool_.clear();
    begin_pass(frames_[0], centre);
    made_ = 0;
    text_.clear();
    text_off_[0] = 0;
  }

  char *put_centre(char *p, std::uint32_t atom) const {
    const Atom &a = mol_->atom(atom);
    p = put_charge(put_symbol(p, a.atomic_number), a.formal_charge);
    *p++ = '-';
    return std::to_chars(p, p + 10, mol_->degree(atom)).ptr;
  }

  // Centre text ("C-4", "N+-4") of `atom`, the part before ';'.
  std::string centre_text(std::uint32_t atom) const {
    char buf[kCentreTextMax];
    return std::string(buf, put_centre(buf, atom));
  }

  // Makes the spheres of the last run() up to `spheres` (at most the run's
  // count) that are not made yet, with their text: sphere s (1-based) is
  // text_[text_off_[s - 1], text_off_[s]), kept so that a code, a hydrogen's
  // code and the parts are each copied out with a single allocation.
  void make(int spheres) {
    Frame &f = frames_[0];
    for (; made_ < spheres; ++made_) {
      step(f, 0, made_);
      f.out_off.push_back(static_cast<std::uint32_t>(f.out.size()));
      const std::uint32_t b = f.out_off[static_cast<std::size_t>(made_)];
      const std::uint32_t e = f.out_off[static_cast<std::size_t>(made_ + 1)];
      // Room for every token at its longest, plus the over-write of put_token_padded().
      const std::size_t at = text_.size();
      text_.reserve(at + (e - b) * kTokenTextMax + 4);
      char *const begin = text_.data();
      char *p = begin + at;
      for (std::uint32_t i = b; i < e; ++i) {
        if (f.out[i] == kEndOfGroup) {
          if (i + 1 < e) *p++ = ',';
        } else {
          p = put_token_padded(p, f.out[i]);
        }
      }
      text_.set_size(static_cast<std::size_t>(p - begin));
      text_off_[static_cast<std::size_t>(made_ + 1)] = static_cast<std::uint32_t>(text_.size());
    }
  }

  std::size_t sphere_size(int s) const {
    return text_off_[static_cast<std::size_t>(s)] - text_off_[static_cast<std::size_t>(s - 1)];
  }

  std::string sphere_text(int s) const { return std::string(sphere_view(s)); }

  std::string_view sphere_view(int s) const {
    return std::string_view(text_.data() + text_off_[static_cast<std::size_t>(s - 1)], sphere_size(s));
  }

  // detail::hose_key() of every prefix of parts(centre) (see hose_keys()),
  // with `index` only as deep as it can match.
  void keys(std::uint32_t centre, detail::HoseKeys &out, const detail::ReferenceIndex *index) {
    char buf[kCentreTextMax];
    out = detail::HoseKeys{};
    out.key[0] = detail::hose_key_part(detail::kHoseKeySeed, std::string_view(buf, static_cast<std::size_t>(put_centre(buf, centre) - buf)));
    chain_keys(out, 1, index);
  }

  // The same for hydrogen_parts(h, centre, bond).
  void hydrogen_keys(std::uint32_t h, std::uint32_t centre, BondOrder bond, detail::HoseKeys &out,
                     const detail::ReferenceIndex *index) {
    char buf[kCentreTextMax];
    out = detail::HoseKeys{};
    out.key[0] = detail::hose_key_part(detail::kHoseKeySeed, std::string_view(buf, static_cast<std::size_t>(put_centre(buf, h) - buf)));
    char first[kTokenTextMax];
    out.key[1] = detail::hose_key_part(out.key[0], std::string_view(first, static_cast<std::size_t>(put_token(first, bond_rank(bond) << 24 | atom_tok_[centre]) - first)));
    if (index && !index->may_match(1, out.key[1])) {
      out.key[1] = 0;
      out.depth = 0;
      return;
    }
    chain_keys(out, 2, index);
  }

  // Fills out.key[k] for k = first..kMaxHoseSpheres from out.key[first - 1]
  // and spheres 1, 2, ... of the last run (sphere s is part first - 1 + s
  // of the code being keyed); beyond the run's spheres the key stays that of
  // its last one.
  void chain_keys(detail::HoseKeys &out, int first, const detail::ReferenceIndex *index) {
    std::uint64_t h = out.key[static_cast<std::size_t>(first - 1)];
    for (int k = first; k <= kMaxHoseSpheres; ++k) {
      const int s = k - first + 1;
      if (s > n_ && index) {
        // With an index the run's spheres come from key_spheres(): the
        // digest of this code at sphere k or before is one no reference
        // atom has, and equal codes have equal digests.
        out.depth = k - 1;
        return;
      }
      if (s <= n_) {
        make(s);
        h = detail::hose_key_part(h, sphere_view(s));
      }
      // Stopping here is exact: build_reference_index() enters every
      // reference atom under its keys at all spheres, so a reference atom
      // whose key at a deeper sphere equals ours has our key at sphere k too,
      // unless two different code texts hash alike, a 64-bit collision that
      // would mislead the full-depth lookup just the same. The deeper
      // spheres, the costliest to make, are left unmade.
      if (index && !index->may_match(k, h)) {
        out.depth = k - 1;
        return;
      }
      out.key[static_cast<std::size_t>(k)] = h;
    }
  }

  // detail::hose_digests() of `centre` into `out` (may be null) up to the
  // first sphere whose digest no reference atom of `index` (may be null) has;
  // returns that sphere, or kMaxHoseSpheres + 1. Uses the region: call it
  // between runs, not while one is being read.
  int digests(std::uint32_t centre, const detail::ReferenceIndex *index, detail::HoseDigests *out) {
    begin_walk(centre);
    std::uint64_t d = centre_digest(centre);
    if (out) (*out)[0] = d;
    for (int k = 1; k <= kMaxHoseSpheres; ++k) {
      d = mix64(d + walk_level());
      if (out) (*out)[static_cast<std::size_t>(k)] = d;
      if (index && !index->digest_may_match(k, d)) return k;
    }
    return kMaxHoseSpheres + 1;
  }

  // digests() term of the centre alone (sphere 0).
  std::uint64_t centre_digest(std::uint32_t centre) const {
    return mix64(mix64(kDigestCentre | atom_tok_[centre]) + mol_->degree(centre));
  }

  // Sphere 1 term of a terminal hydrogen on `parent` bonded by `bond`. The
  // hydrogen's walk meets nothing else there, and below it meets what the
  // walk from `parent` meets a sphere earlier (hydrogens are never written,
  // so no walk comes back to it): its sphere k + 1 term is the parent's
  // sphere k term.
  std::uint64_t hydrogen_first_term(std::uint32_t parent, BondOrder bond) const {
    return atom_digest_[parent] + kBondDigests[bond_rank(bond)];
  }

  // Starts the breadth-first walk of digests() at `centre`: region_ holds
  // the centre, as build_region() leaves it for zero spheres.
  void begin_walk(std::uint32_t centre) {
    next_stamp();
    region_.reserve(place_.size());
    region_.set_size(1);
    region_[0] = centre;
    place_[centre] = Place{cur_, 0, 0};
    level_start_[0] = 0;
    level_start_[1] = 1;
    walk_ = Walk{centre, cur_, 0};
  }

  // Adds the next level to the walk and returns its digest term: sphere k
  // has one entry per bond from a level k-1 atom to level k (a new atom or
  // '&') and one per bond inside level k-1 ('&', written once), each with
  // its bond symbol, and names the level k atoms. So the sum of one term per
  // level k atom and one per such bond is the same for equal texts. The
  // atoms are met in build_region()'s order and placed as it places them,
  // so run() on the same centre keeps them.
  std::uint64_t walk_level() {
    const int k = ++walk_.levels;
    const auto level = static_cast<std::uint8_t>(k);
    Place *const place = place_.data();
    std::uint32_t *const region = region_.data();
    const std::uint32_t stamp = cur_;
    auto size = static_cast<std::uint32_t>(region_.size());
    const std::uint32_t end = size;
    std::uint64_t sum = 0;
    for (std::uint32_t i = level_start_[static_cast<std::size_t>(k - 1)]; i < end; ++i) {
      const std::uint32_t y = region[i];
      for (std::uint32_t j = adj_off_[y]; j < adj_off_[y + 1]; ++j) {
        const std::uint32_t z = adj_[j].atom;
        Place &pz = place[z];
        const std::uint64_t bond = kBondDigests[adj_[j].bond >> 24];
        if (pz.stamp != stamp) {
          pz = Place{stamp, size, level};
          region[size++] = z;
          sum += atom_digest_[z] + bond;
        } else if (pz.level == level || (pz.level + 1 == level && y < z)) {
          sum += bond;
        }
      }
    }
    region_.set_size(size);
    level_start_[static_cast<std::size_t>(k) + 1] = size;
    return sum;
  }

  // `head`, then sphere `outer` unless it is 0, then spheres `first`..`last`
  // in brackets separated by '/' (no brackets if first > last).
  std::string assemble(const char *head, std::size_t head_len, int outer, int first, int last) {
    std::size_t total = head_len + (outer > 0 ? sphere_size(outer) : 0);
    if (first <= last)
      total += 2 + static_cast<std::size_t>(last - first) +
               (text_off_[static_cast<std::size_t>(last)] - text_off_[static_cast<std::size_t>(first - 1)]);
    // Written into scratch first, so the result costs one allocation and one
    // copy rather than a string append per piece.
    code_buf_.reserve(total);
    char *const begin = code_buf_.data();
    char *p = begin;
    auto put = [&p](const char *src, std::size_t n) {
      std::memcpy(p, src, n);
      p += n;
    };
    put(head, head_len);
    if (outer > 0) put(text_.data() + text_off_[static_cast<std::size_t>(outer - 1)], sphere_size(outer));
    if (first <= last) {
      *p++ = '(';
      for (int k = first; k <= last; ++k) {
        if (k > first) *p++ = '/';
        put(text_.data() + text_off_[static_cast<std::size_t>(k - 1)], sphere_size(k));
      }
      *p++ = ')';
    }
    return std::string(begin, p);
  }

  // For a hydrogen bonded to the last centre X by `bond`: its code. Seen from
  // the hydrogen, sphere 1 is X and sphere k+1 is X's sphere k, because
  // hydrogens are never written; codes being prefix-stable, X's first n-1
  // spheres are those of its own (n-1)-sphere code.
  // `spheres` (1..the engine's) picks a shorter code of the same run, as
  // codes are prefix-stable.
  std::string hydrogen_code(std::uint32_t h, std::uint32_t centre, BondOrder bond, int spheres = 0) {
    make((spheres > 0 ? spheres : n_) - 1);
    char head[kCentreTextMax + 1 + kTokenTextMax];
    char *p = put_centre(head, h);
    *p++ = ';';
    p = put_token(p, bond_rank(bond) << 24 | atom_tok_[centre]);
    return assemble(head, static_cast<std::size_t>(p - head), 0, 1, (spheres > 0 ? spheres : n_) - 1);
  }

  // hose_spheres() parts of the last centre.
  std::vector<std::string> parts(std::uint32_t centre) {
    make(n_);
    std::vector<std::string> out;
    out.reserve(static_cast<std::size_t>(n_) + 1);
    out.push_back(centre_text(centre));
    for (int k = 1; k <= n_; ++k) out.push_back(sphere_text(k));
    return out;
  }

  // hose_spheres() parts of a terminal hydrogen on the last centre (see
  // hydrogen_code()).
  std::vector<std::string> hydrogen_parts(std::uint32_t h, std::uint32_t centre, BondOrder bond) {
    make(n_ - 1);
    std::vector<std::string> out;
    out.reserve(static_cast<std::size_t>(n_) + 1);
    out.push_back(centre_text(h));
    char first[kTokenTextMax];
    out.emplace_back(first, put_token(first, bond_rank(bond) << 24 | atom_tok_[centre]));
    for (int k = 1; k < n_; ++k) out.push_back(sphere_text(k));
    return out;
  }

  // Code of the last centre; `spheres` as for hydrogen_code().
  std::string code(std::uint32_t centre, int spheres = 0) {
    make(spheres > 0 ? spheres : n_);
    char head[kCentreTextMax + 1];
    char *p = put_centre(head, centre);
    *p++ = ';';
    return assemble(head, static_cast<std::size_t>(p - head), 1, 2, spheres > 0 ? spheres : n_);
  }

 private:
  template <class Stamps>
  static void bump(std::uint32_t &counter, Stamps &stamps, Stamps *more = nullptr) {
    if (++counter != 0) return;
    std::fill(stamps.begin(), stamps.end(), 0);
    if (more) std::fill(more->begin(), more->end(), 0);
    counter = 1;
  }

  int level_of(std::uint32_t a) const noexcept { return place_[a].stamp == cur_ ? place_[a].level : kOutside; }
  std::uint32_t level_size(int k) const noexcept { return level_start_[k + 1] - level_start_[k]; }

  void next_stamp() {
    if (++cur_ == 0) {  // stamp wrapped: forget every old mark
      for (Place &pl : place_) pl.stamp = 0;
      cur_ = 1;
      walk_ = Walk{};
    }
  }

  void build_region(std::uint32_t centre) {
    next_stamp();
    // The region holds each atom at most once, so it fits in atom_count()
    // slots; plain pointers in the walk keep the compiler from reloading the
    // buffers after every store.
    region_.reserve(place_.size());
    std::uint32_t *const region = region_.data();
    Place *const place = place_.data();
    const Neighbour *const adj = adj_.data();
    const std::uint32_t *const adj_off = adj_off_.data();
    const std::uint32_t stamp = cur_;
    std::uint32_t size = 0;
    region[size++] = centre;
    place[centre].stamp = stamp;
    place[centre].level = 0;
    place[centre].local = 0;
    level_start_[0] = 0;
    level_start_[1] = 1;
    for (int d = 0; d < n_; ++d) {
      const std::uint32_t end = level_start_[d + 1];
      const auto level = static_cast<std::uint8_t>(d + 1);
      for (std::uint32_t i = level_start_[d]; i < end; ++i) {
        const std::uint32_t a = region[i];
        for (std::uint32_t k = adj_off[a]; k < adj_off[a + 1]; ++k) {
          const std::uint32_t z = adj[k].atom;
          Place &pz = place[z];
          if (pz.stamp == stamp) continue;
          pz.stamp = stamp;
          pz.level = level;
          pz.local = size;
          region[size++] = z;
        }
      }
      level_start_[d + 2] = size;
    }
    region_.set_size(size);
    walk_ = Walk{centre, stamp, n_};
  }

  // A branch with nothing to write after its own (empty) group.
  bool trivial(std::uint32_t y, int k) const {
    for (std::uint32_t j = adj_off_[y]; j < adj_off_[y + 1]; ++j) {
      const int lz = level_of(adj_[j].atom);
      if (lz == k || lz == k + 1) return false;
    }
    return true;
  }

  // True if every atom reachable from y away from the centre (within the
  // spheres) is reached only through y's branch and has no bond that will be
  // written to an atom outside it.
  bool closed(std::uint32_t y) {
    const std::uint32_t ly = place_[y].local;
    if (closed_[ly] >= 0) return closed_[ly] == 1;
    bump(member_cur_, member_stamp_);
    list_.clear();
    list_.push_back(y);
    member_stamp_[ly] = member_cur_;
    // The list grows level by level, so when an atom is taken every member
    // at its own level and the level below is known: the test can run in
    // the same pass and stop at the first bond leaving the branch.
    bool ok = true;
    for (std::size_t i = 0; i < list_.size() && ok; ++i) {
      const std::uint32_t a = list_[i];
      const int la = place_[a].level;
      for (std::uint32_t j = adj_off_[a]; j < adj_off_[a + 1]; ++j) {
        const std::uint32_t z = adj_[j].atom;
        const int lz = level_of(z);
        if (lz == kOutside) continue;
        const bool inside = member_stamp_[place_[z].local] == member_cur_;
        if (lz == la + 1) {
          if (!inside) {
            member_stamp_[place_[z].local] = member_cur_;
            list_.push_back(z);
          }
        } else if ((lz == la - 1 && a != y && !inside) || (lz == la && la < n_ && !inside)) {
          ok = false;
          break;
        }
      }
    }
    closed_[ly] = ok ? 1 : 0;
    return ok;
  }

  // Offset in pool_ of y's branch text: for each sphere k+1..n, a length and
  // that many tokens.
  std::uint32_t block(std::uint32_t y, int k, int caller_frame) {
    const std::uint32_t ly = place_[y].local;
    if (block_off_[ly] != kNone) return block_off_[ly];
    if (trivial(y, k)) {
      const auto off = static_cast<std::uint32_t>(pool_.size());
      for (int m = k + 1; m <= n_; ++m) {
        if (m == k + 1) {
          pool_.push_back(1);
          pool_.push_back(kEndOfGroup);
        } else {
          pool_.push_back(0);
        }
      }
      block_off_[ly] = off;
      return off;
    }
    if (k <= caller_frame) throw InternalError("HOSE code: branch pass would reuse a busy frame");
    generate(k, k, y);
    const Frame &f = frames_[static_cast<std::size_t>(k)];
    const auto off = static_cast<std::uint32_t>(pool_.size());
    for (std::size_t s = 0; s + 1 < f.out_off.size(); ++s) {
      pool_.push_back(f.out_off[s + 1] - f.out_off[s]);
      pool_.append(f.out.begin() + f.out_off[s], f.out.begin() + f.out_off[s + 1]);
    }
    block_off_[ly] = off;
    return off;
  }

  int compare_blocks(std::uint32_t a, std::uint32_t b, int k) const {
    for (int m = k + 1; m <= n_; ++m) {
      const std::uint32_t la = pool_[a], lb = pool_[b];
      const int c = compare_groups(&pool_[a + 1], la, &pool_[b + 1], lb);
      if (c != 0) return c;
      a += la + 1;
      b += lb + 1;
    }
    return 0;
  }

  // Readies `f` to write the spheres after atom `start` with step().
  static void begin_pass(Frame &f, std::uint32_t start) {
    f.seqs.assign(1, start);
    f.states = 1;
    f.len = 1;
    f.runs.clear();
    f.run_at.assign(1, -1);
    f.out.clear();
    f.out_off.assign(1, 0);
  }

  // Writes spheres k0+1..n of the branch starting at atom `start` (level k0)
  // into frames_[fi].out.
  void generate(int fi, int k0, std::uint32_t start) {
    Frame &f = frames_[static_cast<std::size_t>(fi)];
    begin_pass(f, start);
    for (int k = k0; k < n_; ++k) {
      step(f, fi, k);
      f.out_off.push_back(static_cast<std::uint32_t>(f.out.size()));
    }
  }

  // Group of atom y (level k) in partial layout p: its entries, sorted, are
  // appended to `tokens`, the atoms it writes for the first time to `reals`.
  void eval_group(Frame &f, const Partials &P, std::size_t p, std::size_t W, int k, std::uint32_t y,
                  SmallVec<std::uint32_t, 128> &tokens, SmallVec<std::uint32_t, 32> &reals) {
    f.entries.clear();
    const std::uint64_t *marks = P.marks.data() + p * W;
    const std::uint32_t base = level_start_[k];
    for (std::uint32_t j = adj_off_[y]; j < adj_off_[y + 1]; ++j) {
      const std::uint32_t z = adj_[j].atom;
      const int lz = level_of(z);
      if (lz != k && lz != k + 1) continue;  // k-1: that bond is already written
      const std::uint32_t bit = place_[z].local - base;
      const bool marked = (marks[bit >> 6] >> (bit & 63)) & 1u;
      if (lz == k) {
        // A bond inside the sphere is written once, by the atom expanded first.
        if (!marked) f.entries.push_back(std::uint64_t{adj_[j].bond | kRingClosureKind << 12} << 32 | kNone);
      } else if (marked) {
        f.entries.push_back(std::uint64_t{adj_[j].bond | kRingClosureKind << 12} << 32 | kNone);
      } else {
        f.entries.push_back(std::uint64_t{adj_[j].bond | atom_tok_[z]} << 32 | z);
      }
    }
    sort_entries(f);
    for (const std::uint64_t e : f.entries) {
      tokens.push_back(static_cast<std::uint32_t>(e >> 32));
      if (static_cast<std::uint32_t>(e) != kNone) reals.push_back(static_cast<std::uint32_t>(e));
    }
  }

  // Insertion sort: groups hold a handful of entries.
  static void sort_entries(Frame &f) noexcept {
    std::uint64_t *e = f.entries.data();
    const std::size_t n = f.entries.size();
    for (std::size_t i = 1; i < n; ++i) {
      const std::uint64_t v = e[i];
      std::size_t j = i;
      for (; j > 0 && v < e[j - 1]; --j) e[j] = e[j - 1];
      e[j] = v;
    }
  }

  void apply(Frame &f, Partials &P, std::size_t p, std::size_t W, std::size_t L, std::size_t L1,
             std::size_t filled, int k, std::uint32_t pos, const Candidate &c) {
    std::uint32_t *seq = P.seq.data() + p * L;
    std::swap(seq[pos], seq[c.position]);
    std::uint64_t *marks = P.marks.data() + p * W;
    const std::uint32_t base = level_start_[k];
    const std::uint32_t ybit = place_[seq[pos]].local - base;
    marks[ybit >> 6] |= std::uint64_t{1} << (ybit & 63);
    std::uint32_t *next = P.next.data() + p * L1;
    for (std::uint32_t i = 0; i < c.real_len; ++i) {
      const std::uint32_t z = f.creal[c.real_off + i];
      const std::uint32_t bit = place_[z].local - base;
      marks[bit >> 6] |= std::uint64_t{1} << (bit & 63);
      next[filled + i] = z;
    }
  }

  void resize_partials(Partials &P, std::size_t count, std::size_t L, std::size_t W, std::size_t L1) {
    P.count = count;
    if (P.seq.size() < count * L) P.seq.resize(count * L);
    if (P.marks.size() < count * W) P.marks.resize(count * W);
    if (P.next.size() < count * L1) P.next.resize(count * L1);
    if (P.source.size() < count) P.source.resize(count);
  }

  // Partial layouts whose remaining atoms, marks and written atoms agree have
  // the same future; keep one of each.
  void dedupe(Frame &f, std::size_t L, std::size_t W, std::size_t L1, std::size_t upto, std::size_t filled) {
    Partials &P = f.cur();
    if (P.count < 2) return;
    // The unplaced members of an open run form a set: sort them by index.
    const std::size_t R = f.runs.size() / 2;
    if (upto < L && upto > 0 && f.run_at[upto] >= 0 && f.run_at[upto - 1] == f.run_at[upto]) {
      const auto r = static_cast<std::size_t>(f.run_at[upto]);
      for (std::size_t p = 0; p < P.count; ++p)
        if (f.open[P.source[p] * R + r] == kRunSearch)
          std::sort(P.seq.data() + p * L + upto, P.seq.data() + p * L + f.runs[2 * r + 1]);
    }
    auto less = [&](std::uint32_t a, std::uint32_t b) {
      const auto *sa = P.seq.data() + a * L, *sb = P.seq.data() + b * L;
      for (std::size_t i = upto; i < L; ++i)
        if (sa[i] != sb[i]) return sa[i] < sb[i];
      const auto *ma = P.marks.data() + a * W, *mb = P.marks.data() + b * W;
      for (std::size_t i = 0; i < W; ++i)
        if (ma[i] != mb[i]) return ma[i] < mb[i];
      const auto *na = P.next.data() + a * L1, *nb = P.next.data() + b * L1;
      for (std::size_t i = 0; i < filled; ++i)
        if (na[i] != nb[i]) return na[i] < nb[i];
      return false;
    };
    f.order.resize(P.count);
    for (std::uint32_t i = 0; i < P.count; ++i) f.order[i] = i;
    std::sort(f.order.begin(), f.order.end(), less);
    std::size_t kept = 0;
    for (std::size_t i = 0; i < f.order.size(); ++i)
      if (i == 0 || less(f.order[kept - 1], f.order[i])) f.order[kept++] = f.order[i];
    kept = std::min(kept, kMaxBeam);
    if (kept == P.count) return;
    Partials &Q = f.alt();
    resize_partials(Q, kept, L, W, L1);
    for (std::size_t i = 0; i < kept; ++i) {
      const std::size_t s = f.order[i];
      std::copy_n(P.seq.data() + s * L, L, Q.seq.data() + i * L);
      std::copy_n(P.marks.data() + s * W, W, Q.marks.data() + i * W);
      std::copy_n(P.next.data() + s * L1, filled, Q.next.data() + i * L1);
      Q.source[i] = P.source[s];
    }
    f.flip();
  }

  // Roles of atoms in a partial layout for the symmetry test: fixed (their
  // place is decided), members of one still unordered run, or free (level
  // k+1 atoms not yet written and everything deeper).
  static constexpr std::uint32_t kRoleFree = 0, kRoleFixed = 1, kRoleSet = 2;

  std::uint32_t role_of(std::uint32_t a) const {
    const std::uint32_t l = place_[a].local;
    return role_stamp_[l] == role_cur_ ? role_[l] : kRoleFree;
  }

  void set_roles(const Frame &f, const Partials &P, std::size_t p, std::size_t pos, std::size_t L,
                 std::size_t L1, std::size_t filled, int k) {
    bump(role_cur_, role_stamp_);
    // Level-k atoms outside this pass (another branch) keep still.
    for (std::uint32_t l = level_start_[k]; l < level_start_[k + 1]; ++l) {
      role_[l] = kRoleFixed;
      role_stamp_[l] = role_cur_;
    }
    const std::size_t R = f.runs.size() / 2;
    const std::uint32_t *seq = P.seq.data() + p * L;
    for (std::size_t i = pos; i < L; ++i) {
      const std::int32_t r = f.run_at[i];
      const std::uint8_t mode = r >= 0 ? f.open[P.source[p] * R + static_cast<std::size_t>(r)] : kRunFixed;
      if (mode != kRunFixed) role_[place_[seq[i]].local] = kRoleSet + static_cast<std::uint32_t>(r);
    }
    const std::uint32_t *next = P.next.data() + p * L1;
    for (std::size_t i = 0; i < filled; ++i) {
      role_[place_[next[i]].local] = kRoleFixed;
      role_stamp_[place_[next[i]].local] = role_cur_;
    }
  }

  std::uint32_t domain_degree(std::uint32_t a, int k) const {
    std::uint32_t d = 0;
    for (std::uint32_t j = adj_off_[a]; j < adj_off_[a + 1]; ++j) {
      const int l = level_of(adj_[j].atom);
      if (l != kOutside && l >= k) ++d;
    }
    return d;
  }

  bool bonded(std::uint32_t a, std::uint32_t b, std::uint32_t bond) const {
    for (std::uint32_t j = adj_off_[a]; j < adj_off_[a + 1]; ++j)
      if (adj_[j].atom == b) return adj_[j].bond == bond;
    return false;
  }

  // True if a symmetry of the graph of levels >= k maps x onto y while keeping
  // the partial layout (roles set by set_roles): then placing x or y first
  // gives the same code and one branch is enough. The mapping is built by
  // matching neighbours and closed as an involution (mirror images, exchanged
  // branches); it is then complete and checked, so a "true" is a proof. A
  // "false" only costs a branch.
  bool symmetric(int k, std::uint32_t x, std::uint32_t y) {
    bump(cert_cur_, pi_stamp_, &image_stamp_);
    queue_.clear();
    auto mapped = [&](std::uint32_t a) { return pi_stamp_[place_[a].local] == cert_cur_; };
    auto is_image = [&](std::uint32_t b) { return image_stamp_[place_[b].local] == cert_cur_; };
    auto map = [&](std::uint32_t a, std::uint32_t b) {
      pi_[place_[a].local] = b;
      pi_stamp_[place_[a].local] = cert_cur_;
      image_stamp_[place_[b].local] = cert_cur_;
      queue_.push_back({a, b});
    };
    map(x, y);
    std::size_t head = 0;
    for (;;) {
      while (head < queue_.size()) {
        const std::uint32_t a = queue_[head].first, b = queue_[head].second;
        ++head;
        const std::uint32_t role = role_of(a);
        if (place_[a].level != place_[b].level || atom_tok_[a] != atom_tok_[b] || role != role_of(b) ||
            (role == kRoleFixed && a != b) || domain_degree(a, k) != domain_degree(b, k))
          return false;
        for (std::uint32_t j = adj_off_[a]; j < adj_off_[a + 1]; ++j) {
          const std::uint32_t u = adj_[j].atom, bond = adj_[j].bond;
          const int lu = level_of(u);
          if (lu == kOutside || lu < k) continue;
          if (mapped(u)) {
            if (!bonded(b, pi_[place_[u].local], bond)) return false;
            continue;
          }
          std::uint32_t pick = kNone;
          if (!is_image(u) && bonded(b, u, bond)) pick = u;
          for (int pass = 0; pass < 2 && pick == kNone; ++pass) {
            for (std::uint32_t i = adj_off_[b]; i < adj_off_[b + 1]; ++i) {
              const std::uint32_t v = adj_[i].atom;
              if (adj_[i].bond != bond || level_of(v) != lu || is_image(v) || atom_tok_[v] != atom_tok_[u] ||
                  role_of(v) != role_of(u))
                continue;
              if (pass == 0 && ranks_ && (*ranks_)[u] != (*ranks_)[v]) continue;
              pick = v;
              break;
            }
          }
          if (pick == kNone) return false;
          map(u, pick);
        }
      }
      bool grew = false;
      const std::size_t count = queue_.size();
      for (std::size_t i = 0; i < count; ++i) {
        const std::uint32_t a = queue_[i].first, b = queue_[i].second;
        if (mapped(b)) continue;
        if (is_image(a)) return false;
        map(b, a);
        grew = true;
      }
      if (!grew) return true;
    }
  }

  // Among the best candidates of one partial layout, drops those that a
  // symmetry maps onto a candidate already kept.
  void prune_symmetric(Frame &f, const Partials &P, std::size_t pos, std::size_t L, std::size_t L1,
                       std::size_t filled, int k) {
    std::size_t out = 0;
    for (std::size_t i = 0; i < keep_.size();) {
      const std::uint32_t p = f.cands[keep_[i]].partial;
      std::size_t j = i;
      while (j < keep_.size() && f.cands[keep_[j]].partial == p) ++j;
      if (j - i > 1) set_roles(f, P, p, pos, L, L1, filled, k);
      const std::size_t first = out;
      for (std::size_t t = i; t < j; ++t) {
        const std::uint32_t y = P.seq[p * L + f.cands[keep_[t]].position];
        bool dup = false;
        for (std::size_t u = first; u < out && !dup; ++u)
          dup = symmetric(k, P.seq[p * L + f.cands[keep_[u]].position], y);
        if (!dup) keep_[out++] = keep_[t];
      }
      i = j;
    }
    keep_.resize(out);
  }

  // Writes sphere k+1 from the beam of level-k layouts in f.
  void step(Frame &f, int fi, int k) {
    // A pass over one branch writes only part of each level: L is what it
    // holds now, L1 bounds what it can write next, W covers both levels.
    const std::size_t L = f.len;
    const std::size_t L1 = level_size(k + 1);
    const std::size_t W = (level_size(k) + L1 + 63) / 64;
    const std::size_t R = f.runs.size() / 2;

    // 1. Runs of tied siblings: nothing to do, sort closed branches by their
    //    own text, or leave open for the search below.
    f.open.assign(f.states * R, 0);
    for (std::size_t s = 0; s < f.states; ++s) {
      for (std::size_t r = 0; r < R; ++r) {
        std::uint32_t *seg = f.seqs.data() + s * L + f.runs[2 * r];
        const std::size_t len = f.runs[2 * r + 1] - f.runs[2 * r];
        bool all_trivial = true, all_closed = true;
        for (std::size_t i = 0; i < len && all_closed; ++i) {
          if (trivial(seg[i], k)) continue;
          all_trivial = false;
          if (!closed(seg[i])) all_closed = false;
        }
        if (all_trivial) {
          f.open[s * R + r] = kRunNoFuture;
          continue;
        }
        if (!all_closed) {
          f.open[s * R + r] = kRunSearch;
          continue;
        }
        for (std::size_t i = 0; i < len; ++i) block(seg[i], k, fi);
        std::sort(seg, seg + len, [&](std::uint32_t a, std::uint32_t b) {
          const int c = compare_blocks(block_off_[place_[a].local], block_off_[place_[b].local], k);
          return c != 0 ? c < 0 : a < b;
        });
      }
    }

    bool any_search = false;
    for (std::size_t i = 0; i < f.open.size() && !any_search; ++i) any_search = f.open[i] == kRunSearch;
    if (f.states == 1 && !any_search) {
      step_fixed(f, k);
      return;
    }

    // 2. Place the level-k atoms one position at a time.
    Partials &P0 = f.cur();
    resize_partials(P0, f.states, L, W, L1);
    std::copy_n(f.seqs.begin(), f.states * L, P0.seq.begin());
    std::fill_n(P0.marks.data(), f.states * W, std::uint64_t{0});
    for (std::size_t s = 0; s < f.states; ++s) P0.source[s] = static_cast<std::uint32_t>(s);
    std::size_t filled = 0;
    for (std::size_t pos = 0; pos < L; ++pos) {
      Partials &P = f.cur();
      const std::int32_t r = f.run_at[pos];
      if (P.count == 1 && (r < 0 || f.open[P.source[0] * R + static_cast<std::size_t>(r)] != kRunSearch)) {
        // The usual case: one layout, nothing to choose.
        f.creal.clear();
        eval_group(f, P, 0, W, k, P.seq[pos], f.out, f.creal);
        f.out.push_back(kEndOfGroup);
        const Candidate c{0, static_cast<std::uint32_t>(pos), 0, 0, 0, static_cast<std::uint32_t>(f.creal.size())};
        apply(f, P, 0, W, L, L1, filled, k, static_cast<std::uint32_t>(pos), c);
        filled += f.creal.size();
        continue;
      }
      f.cands.clear();
      f.ctok.clear();
      f.creal.clear();
      std::size_t best = 0;
      for (std::size_t p = 0; p < P.count; ++p) {
        const bool search = r >= 0 && f.open[P.source[p] * R + static_cast<std::size_t>(r)] == kRunSearch;
        const std::size_t last = search ? f.runs[2 * static_cast<std::size_t>(r) + 1] : pos + 1;
        for (std::size_t c = pos; c < last; ++c) {
          Candidate cand{static_cast<std::uint32_t>(p), static_cast<std::uint32_t>(c),
                         static_cast<std::uint32_t>(f.ctok.size()), 0, static_cast<std::uint32_t>(f.creal.size()), 0};
          eval_group(f, P, p, W, k, P.seq[p * L + c], f.ctok, f.creal);
          cand.tok_len = static_cast<std::uint32_t>(f.ctok.size()) - cand.tok_off;
          cand.real_len = static_cast<std::uint32_t>(f.creal.size()) - cand.real_off;
          f.cands.push_back(cand);
          if (f.cands.size() > 1) {
            const Candidate &b = f.cands[best];
            if (compare_groups(f.ctok.data() + cand.tok_off, cand.tok_len, f.ctok.data() + b.tok_off, b.tok_len) < 0)
              best = f.cands.size() - 1;
          }
        }
      }
      const Candidate bc = f.cands[best];
      auto ties_best = [&](const Candidate &c) {
        return compare_groups(f.ctok.data() + c.tok_off, c.tok_len, f.ctok.data() + bc.tok_off, bc.tok_len) == 0;
      };
      keep_.clear();
      for (std::uint32_t i = 0; i < f.cands.size(); ++i)
        if (i == best || ties_best(f.cands[i])) keep_.push_back(i);
      if (keep_.size() > 1) prune_symmetric(f, P, pos, L, L1, filled, k);
      if (P.count == 1 && keep_.size() == 1) {
        apply(f, P, 0, W, L, L1, filled, k, static_cast<std::uint32_t>(pos), f.cands[keep_[0]]);
      } else {
        Partials &Q = f.alt();
        resize_partials(Q, keep_.size(), L, W, L1);
        for (std::size_t q = 0; q < keep_.size(); ++q) {
          const Candidate &c = f.cands[keep_[q]];
          std::copy_n(P.seq.data() + c.partial * L, L, Q.seq.data() + q * L);
          std::copy_n(P.marks.data() + c.partial * W, W, Q.marks.data() + q * W);
          std::copy_n(P.next.data() + c.partial * L1, filled, Q.next.data() + q * L1);
          Q.source[q] = P.source[c.partial];
          apply(f, Q, q, W, L, L1, filled, k, static_cast<std::uint32_t>(pos), c);
        }
        f.flip();
        dedupe(f, L, W, L1, pos + 1, filled + bc.real_len);
      }
      f.out.append(f.ctok.begin() + bc.tok_off, f.ctok.begin() + bc.tok_off + bc.tok_len);
      f.out.push_back(kEndOfGroup);
      filled += bc.real_len;
    }

    // 3. The surviving layouts become the beam of level k+1.
    if (k + 1 == n_) return;  // nothing reads it after the last sphere
    const Partials &P = f.cur();
    f.states = P.count;
    f.len = filled;
    f.seqs.resize(f.states * filled);
    for (std::size_t s = 0; s < f.states; ++s)
      std::copy_n(P.next.data() + s * L1, filled, f.seqs.data() + s * filled);
    find_runs(f);
  }

  // Step for the usual case: one layout and no tied siblings whose order is
  // open, so every group is written where it stands. Gives what the general
  // placement loop gives for a single layout with nothing to choose, without
  // its per-layout copies, and finds the next runs while writing.
  void step_fixed(Frame &f, int k) {
    bump(mark_cur_, mark_);
    const std::size_t L = f.len;
    const bool last = k + 1 == n_;  // nothing reads the next level's layout
    f.creal.clear();  // level k+1 atoms in written order
    f.runs.clear();
    for (std::size_t pos = 0; pos < L; ++pos) {
      const std::uint32_t y = f.seqs[pos];
      const std::uint32_t jb = adj_off_[y], je = adj_off_[y + 1];
      f.entries.reserve(je - jb);
      std::uint64_t *ent = f.entries.data();
      std::size_t ne = 0;
      for (std::uint32_t j = jb; j < je; ++j) {
        const std::uint32_t z = adj_[j].atom;
        const int lz = level_of(z);
        if (lz != k && lz != k + 1) continue;  // k-1: that bond is already written
        const bool marked = mark_[place_[z].local] == mark_cur_;
        if (lz == k) {
          // A bond inside the sphere is written once, by the atom expanded first.
          if (!marked) ent[ne++] = std::uint64_t{adj_[j].bond | kRingClosureKind << 12} << 32 | kNone;
        } else if (marked) {
          ent[ne++] = std::uint64_t{adj_[j].bond | kRingClosureKind << 12} << 32 | kNone;
        } else {
          ent[ne++] = std::uint64_t{adj_[j].bond | atom_tok_[z]} << 32 | z;
        }
      }
      f.entries.set_size(ne);
      sort_entries(f);
      f.out.reserve(f.out.size() + ne + 1);
      f.creal.reserve(f.creal.size() + ne);
      std::uint32_t *out = f.out.data() + f.out.size();
      for (std::size_t i = 0; i < ne; ++i) {
        const auto token = static_cast<std::uint32_t>(ent[i] >> 32);
        const auto z = static_cast<std::uint32_t>(ent[i]);
        *out++ = token;
        if (z == kNone) continue;
        mark_[place_[z].local] = mark_cur_;
        const auto at = static_cast<std::uint32_t>(f.creal.size());
        if (!last && i > 0 && static_cast<std::uint32_t>(ent[i - 1] >> 32) == token) {
          // Tied with the previous atom of this group: extend or open a run.
          if (!f.runs.empty() && f.runs.back() == at) {
            ++f.runs.back();
          } else {
            f.runs.push_back(at - 1);
            f.runs.push_back(at + 1);
          }
        }
        f.creal.push_back(z);
      }
      *out++ = kEndOfGroup;
      f.out.set_size(static_cast<std::size_t>(out - f.out.data()));
      mark_[place_[y].local] = mark_cur_;
    }
    f.states = 1;
    f.len = f.creal.size();
    if (last) return;
    f.seqs.resize(f.len);
    std::copy_n(f.creal.data(), f.len, f.seqs.data());
    f.run_at.assign(f.len, -1);
    for (std::size_t r = 0; r < f.runs.size() / 2; ++r)
      for (std::uint32_t q = f.runs[2 * r]; q < f.runs[2 * r + 1]; ++q) f.run_at[q] = static_cast<std::int32_t>(r);
  }

  // Tied siblings of the sphere just written (runs of equal real entries in
  // one group) become the runs of the next step.
  void find_runs(Frame &f) {
    f.runs.clear();
    f.run_at.assign(f.len, -1);
    const std::size_t sphere_begin = f.out_off.back();
    std::uint32_t pos = 0;
    std::size_t i = sphere_begin;
    while (i < f.out.size()) {
      const std::uint32_t t = f.out[i];
      if (t == kEndOfGroup || !is_real(t)) {
        ++i;
        continue;
      }
      std::size_t j = i + 1;
      while (j < f.out.size() && f.out[j] == t) ++j;
      const auto len = static_cast<std::uint32_t>(j - i);
      if (len > 1) {
        for (std::uint32_t q = pos; q < pos + len; ++q) f.run_at[q] = static_cast<std::int32_t>(f.runs.size() / 2);
        f.runs.push_back(pos);
        f.runs.push_back(pos + len);
      }
      pos += len;
      i = j;
    }
  }

 public:
  // Scratch of code_every_atom(), kept here to keep its capacity.
  struct EveryAtom {
    std::vector<std::uint32_t> by_class, pending, h_start, h_list, fill;
    std::vector<std::uint8_t> done;
    // Which topological classes a call wants (flagged_classes()).
    std::vector<char> flagged;
  };
  EveryAtom every;

 private:
  const Molecule *mol_ = nullptr;
  int n_ = 0;      // spheres of the current run
  int made_ = 0;   // of which made so far (make())
  int max_n_ = 0;  // spheres given to reset()
  const std::vector<std::uint32_t> *ranks_ = nullptr;
  // Per atom of the molecule.
  SmallVec<std::uint32_t, 64> adj_off_;
  SmallVec<Neighbour, 128> adj_;
  SmallVec<std::uint32_t, 64> atom_tok_;
  SmallVec<std::uint64_t, 64> atom_digest_;  // digests() term of each atom
  // Where an atom lies relative to the current centre; valid when `stamp`
  // equals cur_. One record, as the inner loops read all three together.
  struct Place {
    std::uint32_t stamp;
    std::uint32_t local;  // index in region_
    std::uint8_t level;   // sphere, 0 for the centre
  };
  SmallVec<Place, 64> place_;
  std::uint32_t cur_ = 0;
  // Per atom of the region of the current centre (local ids).
  SmallVec<std::uint32_t, 64> region_;
  std::array<std::uint32_t, kMaxHoseSpheres + 2> level_start_{};
  SmallVec<std::int8_t, 64> closed_;
  SmallVec<std::uint32_t, 64> block_off_;
  SmallVec<std::uint32_t, 256> pool_;
  SmallVec<char, 512> text_;
  SmallVec<char, 256> code_buf_;  // one code being assembled
  std::array<std::uint32_t, kMaxHoseSpheres + 1> text_off_{};
  SmallVec<std::uint32_t, 64> member_stamp_;
  SmallVec<std::uint32_t, 64> mark_;  // stamps of step_fixed(): expanded or written
  std::uint32_t mark_cur_ = 0;
  std::uint32_t member_cur_ = 0;  // stamps of the closedness test
  SmallVec<std::uint32_t, 64> list_;
  // Whose levels region_ holds: 0..levels of the walk from `centre`, valid
  // while `stamp` is cur_ (begin_walk(), walk_level(), build_region()).
  struct Walk {
    std::uint32_t centre = kNone;
    std::uint32_t stamp = 0;
    int levels = -1;
  };
  Walk walk_;
  // Symmetry test scratch, indexed by local id.
  SmallVec<std::uint32_t, 64> pi_, pi_stamp_, image_stamp_, role_, role_stamp_;
  std::uint32_t cert_cur_ = 0, role_cur_ = 0;
  struct Pair {
    std::uint32_t first, second;
  };
  SmallVec<Pair, 64> queue_;
  SmallVec<std::uint32_t, 16> keep_;
  std::array<Frame, kMaxHoseSpheres + 1> frames_;
};

// The engine of one call, set up for its molecule. Each thread keeps one
// engine (a single heap block holding its scratch inline) and lends it out,
// so calls after the first allocate only their results: allocating that block
// per call cost more than coding a small molecule. A nested call, which the
// library does not make today, gets an engine of its own.
class EngineLease {
 public:
  EngineLease(const Molecule &m, int spheres, const std::vector<std::uint32_t> &ranks, bool heavy_only = false) {
    lease_.serves(m.atom_count());
    lease_->reset(m, spheres, ranks, heavy_only);
  }
  Engine &operator*() const noexcept { return *lease_; }
  Engine *operator->() const noexcept { return &*lease_; }

 private:
  detail::ThreadLease<Engine> lease_;
};

void check_request(const Molecule &m, const AtomClasses &classes, int spheres) {
  if (spheres < 1 || spheres > kMaxHoseSpheres)
    throw ArgumentError(fmt::format("HOSE code: {} spheres requested; allowed are 1 to {}", spheres, kMaxHoseSpheres));
  if (classes.topological.size() != m.atom_count())
    throw ArgumentError(fmt::format("HOSE code: classes cover {} atoms but the molecule has {}",
                                    classes.topological.size(), m.atom_count()));
}

void check_atom(const Molecule &m, std::size_t atom) {
  if (atom >= m.atom_count())
    throw ArgumentError(
        fmt::format("HOSE code: atom index {} is out of range (molecule has {} atoms)", atom, m.atom_count()));
}

}  // namespace

std::string hose_code(const Molecule &molecule, const AtomClasses &classes, std::size_t atom, int spheres) {
  check_request(molecule, classes, spheres);
  check_atom(molecule, atom);
  const EngineLease engine(molecule, spheres, classes.invariant_rank);
  engine->run(static_cast<std::uint32_t>(atom));
  return engine->code(static_cast<std::uint32_t>(atom));
}

std::vector<std::string> hose_spheres(const Molecule &molecule, const AtomClasses &classes, std::size_t atom,
                                      int spheres) {
  check_request(molecule, classes, spheres);
  check_atom(molecule, atom);
  const EngineLease engine(molecule, spheres, classes.invariant_rank);
  engine->run(static_cast<std::uint32_t>(atom));
  return engine->parts(static_cast<std::uint32_t>(atom));
}

namespace {

// Runs `engine` once per topological class and hands each result to the
// callbacks: centre(atom) after a run on `atom`, hydrogen(h, atom, bond) for
// a terminal hydrogen h on it, copy(to, from) for an atom of a class already
// done. Atoms of one topological class are exchanged by an automorphism, so
// their codes agree. Terminal hydrogens take their result from the run of
// their heavy atom (see Engine::hydrogen_code).
//
// `needed` (may be null: all) flags the topological classes whose results are
// wanted: the others are skipped, but the bookkeeping (which atom stands for
// its class) stays the same, so a wanted result is made from the same run as
// with every class wanted.
//
// `depth(a)` gives the spheres the run on atom a must make for what the
// callbacks read of a and its hydrogens (0: the engine's full count;
// kNoSpheres: none, for callbacks that only key with an index).
struct FullDepth {
  int operator()(std::size_t) const noexcept { return 0; }
};
template <class Centre, class Hydrogen, class Copy, class Depth = FullDepth>
void code_every_atom(const Molecule &molecule, const AtomClasses &classes, Engine &engine, Centre centre,
                     Hydrogen hydrogen, Copy copy, const std::vector<char> *needed = nullptr, Depth depth = {}) {
  auto spheres_for = [&](std::size_t a) { return depth(a); };
  auto wanted = [&](std::size_t a) { return !needed || (*needed)[classes.topological[a]]; };
  const std::size_t count = molecule.atom_count();
  std::uint32_t max_class = 0;
  for (auto c : classes.topological) max_class = std::max(max_class, c);
  // Bookkeeping lives in the engine, which keeps its capacity between calls.
  auto &by_class = engine.every.by_class;
  by_class.assign(static_cast<std::size_t>(max_class) + 1, kNone);
  auto &pending = engine.every.pending;  // hydrogens on the current heavy atom
  pending.clear();
  auto &done = engine.every.done;
  done.assign(count, 0);
  const std::size_t heavy = molecule.heavy_atom_count();
  // Terminal hydrogens of each heavy atom, in index order (counting sort).
  auto &h_start = engine.every.h_start;
  auto &h_list = engine.every.h_list;
  h_start.assign(heavy + 2, 0);
  // No hydrogen wanted (13C alone): none is coded, and none is copied, as a
  // hydrogen would copy only another's empty result.
  bool hydrogens = !needed;
  for (std::size_t h = heavy; h < count && !hydrogens; ++h) hydrogens = wanted(h);
  const std::size_t last = hydrogens ? count : heavy;
  auto terminal_parent = [&](std::size_t h) -> std::size_t {
    const std::int64_t parent = molecule.attached_to(h);
    if (molecule.degree(h) == 1 && parent >= 0 && static_cast<std::size_t>(parent) < heavy)
      return static_cast<std::size_t>(parent);
    return heavy;
  };
  for (std::size_t h = heavy; h < last; ++h) ++h_start[terminal_parent(h) + 1];
  for (std::size_t a = 0; a < heavy; ++a) h_start[a + 1] += h_start[a];
  h_list.resize(h_start[heavy]);
  {
    auto &fill = engine.every.fill;
    fill.assign(h_start.begin(), h_start.begin() + static_cast<std::ptrdiff_t>(heavy));
    for (std::size_t h = heavy; h < last; ++h) {
      const std::size_t parent = terminal_parent(h);
      if (parent < heavy) h_list[fill[parent]++] = static_cast<std::uint32_t>(h);
    }
  }
  auto take_class = [&](std::size_t a) {
    const std::uint32_t rep = by_class[classes.topological[a]];
    if (rep == kNone) return false;
    copy(a, rep);
    done[a] = 1;
    return true;
  };
  auto record = [&](std::size_t a) {
    by_class[classes.topological[a]] = static_cast<std::uint32_t>(a);
    done[a] = 1;
  };
  for (std::size_t a = 0; a < heavy; ++a) {
    pending.clear();
    for (std::uint32_t i = h_start[a]; i < h_start[a + 1]; ++i)
      if (!take_class(h_list[i])) pending.push_back(h_list[i]);
    const bool heavy_done = take_class(a);
    if (heavy_done && pending.empty()) continue;
    bool run = !heavy_done && wanted(a);
    for (auto h : pending) run = run || wanted(h);
    if (run) engine.run(static_cast<std::uint32_t>(a), spheres_for(a));
    if (!heavy_done) {
      if (run && wanted(a)) centre(a);
      record(a);
    }
    for (auto h : pending) {
      if (take_class(h)) continue;
      // A terminal hydrogen's only bond is the one to `a`.
      if (run && wanted(h)) hydrogen(h, a, molecule.bond(*molecule.bond_ids_begin(h)).order);
      record(h);
    }
  }
  // Hydrogens bonded to no heavy atom, or to more than one atom.
  for (std::size_t h = heavy; h < last; ++h) {
    if (done[h] || take_class(h)) continue;
    if (wanted(h)) {
      engine.run(static_cast<std::uint32_t>(h), spheres_for(h));
      centre(h);
    }
    record(h);
  }
}

}  // namespace

std::vector<std::string> hose_codes(const Molecule &molecule, const AtomClasses &classes, int spheres) {
  check_request(molecule, classes, spheres);
  std::vector<std::string> codes(molecule.atom_count());
  if (codes.empty()) return codes;
  const EngineLease engine_ptr(molecule, spheres, classes.invariant_rank);
  Engine &engine = *engine_ptr;
  code_every_atom(
      molecule, classes, engine,
      [&](std::size_t a) { codes[a] = engine.code(static_cast<std::uint32_t>(a)); },
      [&](std::size_t h, std::size_t a, BondOrder bond) {
        codes[h] = engine.hydrogen_code(static_cast<std::uint32_t>(h), static_cast<std::uint32_t>(a), bond);
      },
      [&](std::size_t to, std::size_t from) { codes[to] = codes[from]; });
  return codes;
}

std::vector<std::vector<std::string>> hose_spheres_all(const Molecule &molecule, const AtomClasses &classes,
                                                       int spheres) {
  check_request(molecule, classes, spheres);
  std::vector<std::vector<std::string>> parts(molecule.atom_count());
  if (parts.empty()) return parts;
  const EngineLease engine_ptr(molecule, spheres, classes.invariant_rank);
  Engine &engine = *engine_ptr;
  code_every_atom(
      molecule, classes, engine, [&](std::size_t a) { parts[a] = engine.parts(static_cast<std::uint32_t>(a)); },
      [&](std::size_t h, std::size_t a, BondOrder bond) {
        parts[h] = engine.hydrogen_parts(static_cast<std::uint32_t>(h), static_cast<std::uint32_t>(a), bond);
      },
      [&](std::size_t to, std::size_t from) { parts[to] = parts[from]; });
  return parts;
}

namespace detail {

namespace {

// Per topological class, 1 if any atom flagged in `atoms` (shorter means
// false) belongs to it: the HOSE engine runs once per class. Written over
// `flagged`, the engine's scratch, which keeps its capacity between calls.
const std::vector<char> &flagged_classes(const AtomClasses &classes, const std::vector<bool> &atoms,
                                         std::vector<char> &flagged) {
  std::uint32_t max_class = 0;
  for (auto c : classes.topological) max_class = std::max(max_class, c);
  flagged.assign(static_cast<std::size_t>(max_class) + 1, 0);
  // A bit iterator steps where indexing divides for every atom.
  auto bit = atoms.begin();
  const std::size_t n = std::min(atoms.size(), classes.topological.size());
  for (std::size_t a = 0; a < n; ++a, ++bit)
    if (*bit) flagged[classes.topological[a]] = 1;
  return flagged;
}

// Spheres the run on `a` must make so that the keys of `a` and of the
// terminal hydrogens on it, of those `keyed(atom)` flags, reach every sphere
// at which `index` (null: any reference) might match them; 0 if none is keyed.
// With an index that is, per keyed code, one less than the first sphere whose
// digest no reference atom has; one walk from `a` serves a and its
// hydrogens, and run(a) keeps the levels it met. `hydrogens` false: no
// hydrogen is keyed, none is asked about.
template <class Keyed>
int key_spheres(Engine &engine, const Molecule &molecule, std::size_t a, Keyed keyed, const ReferenceIndex *index,
                bool hydrogens = true) {
  const bool centre_keyed = keyed(a);
  const std::size_t heavy = molecule.heavy_atom_count();
  // Digests at sphere 1 of the keyed terminal hydrogens on a, each value
  // once: hydrogens whose digests agree there agree at every sphere, as the
  // rest of their walk is a's.
  SmallVec<std::uint64_t, 8> chains;
  if (hydrogens && a < heavy) {
    for (auto it = molecule.neighbours_begin(a); it != molecule.neighbours_end(a); ++it) {
      const std::size_t h = *it;
      if (h < heavy || molecule.degree(h) != 1 || !keyed(h)) continue;
      if (!index) {
        chains.push_back(0);
        break;
      }
      const BondOrder bond = molecule.bond(*molecule.bond_ids_begin(h)).order;
      const std::uint64_t d =
          mix64(engine.centre_digest(static_cast<std::uint32_t>(h)) +
                engine.hydrogen_first_term(static_cast<std::uint32_t>(a), bond));
      // A hydrogen whose sphere 1 no reference has needs no sphere of a.
      if (index->digest_may_match(1, d) && std::find(chains.begin(), chains.end(), d) == chains.end())
        chains.push_back(d);
    }
  }
  // A terminal hydrogen's sphere k is a's sphere k - 1.
  if (!index) return centre_keyed ? kMaxHoseSpheres : chains.empty() ? 0 : kMaxHoseSpheres - 1;
  int d = 0;
  bool centre_on = centre_keyed;
  std::uint64_t centre = centre_on ? engine.centre_digest(static_cast<std::uint32_t>(a)) : 0;
  if (centre_on || !chains.empty()) engine.begin_walk(static_cast<std::uint32_t>(a));
  for (int k = 1; k <= kMaxHoseSpheres && (centre_on || !chains.empty()); ++k) {
    const std::uint64_t term = engine.walk_level();
    if (centre_on) {
      centre = mix64(centre + term);
      if (!index->digest_may_match(k, centre)) {
        d = std::max(d, k - 1);
        centre_on = false;
      } else if (k == kMaxHoseSpheres) {
        d = kMaxHoseSpheres;
      }
    }
    // The hydrogens' sphere k + 1.
    std::size_t live = 0;
    for (std::uint64_t h : chains) {
      h = mix64(h + term);
      if (!index->digest_may_match(k + 1, h)) {
        d = std::max(d, k - 1);
      } else if (k + 1 == kMaxHoseSpheres) {
        d = std::max(d, kMaxHoseSpheres - 1);
      } else {
        chains[live++] = h;
      }
    }
    chains.set_size(live);
  }
  return d;
}

}  // namespace

std::vector<HoseDigests> hose_digests(const Molecule &molecule, const std::vector<bool> &wanted) {
  std::vector<HoseDigests> out(molecule.atom_count(), HoseDigests{});
  if (out.empty()) return out;
  const std::vector<std::uint32_t> no_ranks;
  const EngineLease engine(molecule, kMaxHoseSpheres, no_ranks);
  for (std::size_t a = 0; a < wanted.size() && a < out.size(); ++a)
    if (wanted[a]) engine->digests(static_cast<std::uint32_t>(a), nullptr, &out[a]);
  return out;
}

std::vector<HoseKeys> hose_keys(const Molecule &molecule, const AtomClasses &classes, const std::vector<bool> &wanted,
                                const ReferenceIndex *index) {
  check_request(molecule, classes, kMaxHoseSpheres);
  std::vector<HoseKeys> keys(molecule.atom_count(), HoseKeys{});
  if (keys.empty()) return keys;
  // A terminal hydrogen's sphere k is its heavy atom's sphere k - 1: when
  // only such hydrogens are wanted (1H shifts on their own), the heavy atoms'
  // last sphere, the costliest, is never read and, codes being prefix-stable,
  // need not be made.
  const std::size_t heavy = molecule.heavy_atom_count();
  bool only_terminal_h = true, any_h = false;
  auto bit = wanted.begin();
  for (std::size_t a = 0; a < wanted.size() && a < keys.size(); ++a, ++bit) {
    if (!*bit) continue;
    const std::int64_t parent = molecule.attached_to(a);
    only_terminal_h = only_terminal_h && a >= heavy && molecule.degree(a) == 1 && parent >= 0 &&
                      static_cast<std::size_t>(parent) < heavy;
    any_h = any_h || a >= heavy;
  }
  const EngineLease engine_ptr(molecule, only_terminal_h ? kMaxHoseSpheres - 1 : kMaxHoseSpheres,
                               classes.invariant_rank, !any_h);
  Engine &engine = *engine_ptr;
  const std::vector<char> &needed = flagged_classes(classes, wanted, engine.every.flagged);
  auto is_needed = [&](std::size_t a) { return needed[classes.topological[a]] != 0; };
  // Without an index every sphere may match: the engine's full count. With
  // one, a centre whose first sphere no reference atom has, nor a sphere of
  // its hydrogens beyond their first, is keyed without making any sphere:
  // chain_keys() stops there as it stops after a run's last sphere.
  auto depth = [&](std::size_t a) {
    if (!index) return 0;
    const int d = key_spheres(engine, molecule, a, is_needed, index, any_h);
    return d > 0 ? d : kNoSpheres;
  };
  code_every_atom(
      molecule, classes, engine, [&](std::size_t a) { engine.keys(static_cast<std::uint32_t>(a), keys[a], index); },
      [&](std::size_t h, std::size_t a, BondOrder bond) {
        engine.hydrogen_keys(static_cast<std::uint32_t>(h), static_cast<std::uint32_t>(a), bond, keys[h], index);
      },
      [&](std::size_t to, std::size_t from) { keys[to] = keys[from]; }, &needed, depth);
  return keys;
}

std::vector<std::string> hose_codes_and_keys(const Molecule &molecule, const AtomClasses &classes, int spheres,
                                             const std::vector<bool> &keyed, std::vector<HoseKeys> &keys,
                                             const ReferenceIndex *index) {
  check_request(molecule, classes, spheres);
  const std::size_t count = molecule.atom_count();
  std::vector<std::string> codes(count);
  keys.assign(count, HoseKeys{});
  if (codes.empty()) return codes;
  // The keys need up to six spheres (a terminal hydrogen's, five of its
  // heavy atom's), fewer where the index cannot match deeper; the codes,
  // being prefix-stable, are read from the same runs, which for atoms
  // without keys stop at the codes' own spheres.
  const EngineLease engine_ptr(molecule, kMaxHoseSpheres, classes.invariant_rank);
  Engine &engine = *engine_ptr;
  // An atom takes its result from its class's first atom: a class is keyed
  // whole or not at all.
  const std::vector<char> &class_keyed = flagged_classes(classes, keyed, engine.every.flagged);
  auto is_keyed = [&](std::size_t a) { return class_keyed[classes.topological[a]] != 0; };
  auto depth = [&](std::size_t a) { return std::max(spheres, key_spheres(engine, molecule, a, is_keyed, index)); };
  code_every_atom(
      molecule, classes, engine,
      [&](std::size_t a) {
        codes[a] = engine.code(static_cast<std::uint32_t>(a), spheres);
        if (is_keyed(a)) engine.keys(static_cast<std::uint32_t>(a), keys[a], index);
      },
      [&](std::size_t h, std::size_t a, BondOrder bond) {
        codes[h] = engine.hydrogen_code(static_cast<std::uint32_t>(h), static_cast<std::uint32_t>(a), bond, spheres);
        if (is_keyed(h))
          engine.hydrogen_keys(static_cast<std::uint32_t>(h), static_cast<std::uint32_t>(a), bond, keys[h], index);
      },
      [&](std::size_t to, std::size_t from) {
        codes[to] = codes[from];
        keys[to] = keys[from];
      },
      nullptr, depth);
  return codes;
}

}  // namespace detail

std::string join_hose_spheres(const std::vector<std::string> &parts, int spheres) {
  if (spheres < 1 || spheres > kMaxHoseSpheres)
    throw ArgumentError(fmt::format("HOSE code: {} spheres requested; allowed are 1 to {}", spheres, kMaxHoseSpheres));
  if (parts.size() < static_cast<std::size_t>(spheres) + 1)
    throw ArgumentError(fmt::format("HOSE code: {} spheres requested but only {} given", spheres,
                                    parts.empty() ? 0 : parts.size() - 1));
  std::string s = parts[0];
  s += ';';
  s += parts[1];
  if (spheres >= 2) {
    s += '(';
    for (int k = 2; k <= spheres; ++k) {
      if (k > 2) s += '/';
      s += parts[static_cast<std::size_t>(k)];
    }
    s += ')';
  }
  return s;
}

std::vector<std::string> split_hose_code(std::string_view code) {
  auto bad = [&](const char *why) {
    return InputError(fmt::format("HOSE code \"{}\": {}", code, why));
  };
  const std::size_t semi = code.find(';');
  if (semi == std::string_view::npos) throw bad("no ';' after the centre");
  if (semi == 0) throw bad("the centre is empty");
  std::vector<std::string> parts;
  parts.emplace_back(code.substr(0, semi));
  const std::string_view rest = code.substr(semi + 1);
  const std::size_t open = rest.find('(');
  if (open == std::string_view::npos) {
    if (rest.find_first_of(";/)") != std::string_view::npos) throw bad("unexpected ';', '/' or ')' in sphere 1");
    parts.emplace_back(rest);
    return parts;
  }
  if (rest.back() != ')') throw bad("missing ')' at the end");
  const std::string_view first = rest.substr(0, open);
  const std::string_view inner = rest.substr(open + 1, rest.size() - open - 2);
  if (first.find_first_of(";/)") != std::string_view::npos) throw bad("unexpected ';', '/' or ')' in sphere 1");
  if (inner.find_first_of(";()") != std::string_view::npos) throw bad("unexpected ';', '(' or ')' inside the brackets");
  parts.emplace_back(first);
  std::size_t b = 0;
  for (;;) {
    const std::size_t e = inner.find('/', b);
    parts.emplace_back(inner.substr(b, e == std::string_view::npos ? std::string_view::npos : e - b));
    if (e == std::string_view::npos) break;
    b = e + 1;
  }
  if (parts.size() - 1 > static_cast<std::size_t>(kMaxHoseSpheres)) throw bad("more than 6 spheres");
  return parts;
}

}  // namespace nmrpred
