#ifndef NMRPRED_SHIFTS_REFERENCE_INDEX_HPP
#define NMRPRED_SHIFTS_REFERENCE_INDEX_HPP

// Lookup structures built from the reference compounds: for each origin
// (built-in or user), nucleus and HOSE sphere level, the reference atoms whose
// environment has a given code, already averaged per compound and summarised,
// so a lookup costs one hash probe per level.

#include <array>
#include <cstdint>
#include <memory>
#include <string>
#include <string_view>
#include <unordered_map>
#include <utility>
#include <vector>

#include <nmrpred/classes.hpp>
#include <nmrpred/hose.hpp>
#include <nmrpred/shifts.hpp>
#include <nmrpred/molecule.hpp>
#include <nmrpred/tables.hpp>

namespace nmrpred::detail {

enum IndexNucleus { kIndexC13 = 0, kIndexH1 = 1 };
enum IndexOrigin { kBuiltin = 0, kUser = 1 };

// One reference compound's atoms with one code, averaged.
struct CompoundValue {
  std::uint32_t compound;  // index into Tables::reference()
  double shift_ppm;
  // shift - what the 13C increment rules give for the same atoms; NaN where
  // the rules do not apply. Lookups use it to correct the rules for the
  // query's own environment.
  double residual_ppm;
  // Half the difference of the two values the compound gives the protons of
  // a diastereotopic sp3 CH2 with this code (0 where it gives one value for
  // both); NaN where the atom is no such CH2. See diastereotopic_partner().
  double pair_half_ppm;
  // Which 13C rule scheme gave the residual (scheme_key() of its method
  // text); 0 where there is none.
  std::uint64_t scheme;
};

// A key for the scheme a rule value comes from: its method text up to the
// first ':' (the scheme's name, with the ring size or class name where the
// text gives one). Thread rule: pure.
std::uint64_t scheme_key(std::string_view method);

struct Summary {
  int n = 0;  // compounds
  double median = 0, sd = 0;
};

// How many reference compounds a lookup lists at most (Shift::references).
inline constexpr std::size_t kMaxListedReferences = ReferenceIds::kMax;

struct Bucket {
  std::vector<CompoundValue> compounds;  // sorted by compound
  // Derivable: the `compound` of the first min(kMaxListedReferences,
  // compounds.size()) entries of `compounds`. Stored for locality: a lookup
  // that excludes none lists them from here, beside the summaries it has
  // just read, and so reads no compound values (40 bytes each, elsewhere on
  // the heap).
  std::array<std::uint32_t, kMaxListedReferences> listed{};
  std::uint32_t listed_count = 0;
  Summary shift, residual;               // over all compounds (residual: those that have one)
  // The residual summarised per scheme (sorted by scheme), so a lookup that
  // takes only the query's scheme reads it instead of summarising hundreds
  // of compounds of a shallow sphere anew.
  std::vector<std::pair<std::uint64_t, Summary>> residual_by_scheme;
  // Summary of the residuals of `scheme` (n = 0: none).
  Summary residual_of(std::uint64_t scheme) const;
};

// The other proton of a diastereotopic CH2 on an sp3 carbon: the carbon's
// second hydrogen when the two fall into different chemical classes (a CH2
// next to a stereocentre, a ring CH2 cis/trans to a substituent); -1 for any
// other atom. Thread rule: pure.
std::int64_t diastereotopic_partner(const Molecule &m, const AtomClasses &classes, std::size_t h);

// Hash of the code with `spheres` spheres, computed from its parts
// (hose_spheres()/split_hose_code()) without building the text.
std::uint64_t hose_key(const std::vector<std::string> &parts, int spheres);

// hose_key() one part at a time: start from kHoseKeySeed and feed parts 0, 1,
// ... in turn; after part k the value is hose_key(parts, k).
inline constexpr std::uint64_t kHoseKeySeed = 0xCBF29CE484222325ull;
inline std::uint64_t hose_key_part(std::uint64_t h, std::string_view part) {
  for (unsigned char c : part) {
    h ^= c;
    h *= 0x100000001B3ull;
  }
  h ^= 0x1F;  // sphere separator, not a character codes use
  h *= 0x100000001B3ull;
  return h;
}

// key[k] = hose_key(hose_spheres(m, classes, atom, kMaxHoseSpheres), k) for
// k = 0..depth; deeper keys are not made (zero): no reference atom of the
// index they were made for can match them (ReferenceIndex::may_match()).
struct HoseKeys {
  std::array<std::uint64_t, kMaxHoseSpheres + 1> key{};
  int depth = kMaxHoseSpheres;
};

struct ReferenceIndex;

// Per atom, its HoseKeys, for the atoms flagged in `wanted` (shorter means
// false); other atoms get zeros. Made straight from the HOSE engine's text
// without building the parts, one engine run per topological class that a
// wanted atom belongs to. With `index` (null: every sphere) an atom is keyed
// only to the deepest sphere whose key the index holds, so the engine stops
// early for most atoms. Defined in environments/hose.cpp. Thread rule: pure.
std::vector<HoseKeys> hose_keys(const Molecule &m, const AtomClasses &classes, const std::vector<bool> &wanted,
                                const ReferenceIndex *index = nullptr);
// Per atom flagged in `wanted`, element k (k = 0..kMaxHoseSpheres): a digest
// of what the first k spheres of its code fix whatever the order of their
// entries (the centre; per sphere the kinds of the atoms written, the bonds
// of all entries). Equal codes have equal digests, and the digests come from
// a walk of the graph without the canonical ordering, so a digest that no
// reference atom has rules a code out before the engine makes it. Other atoms
// get zeros. Defined in environments/hose.cpp. Thread rule: pure.
using HoseDigests = std::array<std::uint64_t, kMaxHoseSpheres + 1>;
std::vector<HoseDigests> hose_digests(const Molecule &m, const std::vector<bool> &wanted);
// hose_codes(m, classes, spheres) (nmrpred/hose.hpp), and in `keys` the
// hose_keys(m, classes, keyed, index) of the atoms flagged in `keyed` and of
// every atom of their topological classes (others get zeros), from one engine
// run per topological class. Errors as hose_codes().
std::vector<std::string> hose_codes_and_keys(const Molecule &m, const AtomClasses &classes, int spheres,
                                             const std::vector<bool> &keyed, std::vector<HoseKeys> &keys,
                                             const ReferenceIndex *index = nullptr);

// Median and sample standard deviation about it.
Summary summarise(std::vector<double> values);
// The same, sorting `values` in place (for callers that reuse the buffer).
Summary summarise_in_place(std::vector<double> &values);

// The slot of `value` in a table of 2^(64 - shift) slots. Multiplicative
// hashing (common practice): the top bits of value * an odd constant.
inline std::size_t hash_slot(std::uint64_t value, unsigned shift) noexcept {
  return static_cast<std::size_t>((value * 0x9E3779B97F4A7C15ull) >> shift);
}

// Open addressing with linear probing (common practice), the part HashSet
// and BucketTable share: filled once and then only asked, at most half full,
// so most probes read one slot. `Slot` is the slot type; `SlotKey` says
// whether a slot is empty (static bool empty(const Slot &)) and which key a
// full one holds (static std::uint64_t key(const Slot &)).
template <class Slot, class SlotKey>
class ProbedSlots {
 public:
  // Empty slots for up to `n` keys.
  void reset(std::size_t n) {
    unsigned bits = 1;
    while ((std::size_t{1} << bits) < 2 * n) ++bits;
    slots_.assign(std::size_t{1} << bits, Slot{});
    mask_ = slots_.size() - 1;
    shift_ = 64 - bits;
  }
  // The slot that holds `key`, or else the empty slot where it goes. The
  // key is compared first (most questions find it in the first slot); an
  // empty slot whose key happens to equal it ends the probe just as well,
  // since no slot past an empty one holds it.
  std::size_t probe(std::uint64_t key) const noexcept {
    std::size_t i = hash_slot(key, shift_);
    while (SlotKey::key(slots_[i]) != key && !SlotKey::empty(slots_[i])) i = (i + 1) & mask_;
    return i;
  }
  // Starts loading the slot where probe(key) starts.
  void prefetch(std::uint64_t key) const noexcept {
#if defined(__GNUC__)
    __builtin_prefetch(&slots_[hash_slot(key, shift_)]);
#else
    (void)key;
#endif
  }
  const Slot &operator[](std::size_t i) const noexcept { return slots_[i]; }
  Slot &operator[](std::size_t i) noexcept { return slots_[i]; }

 private:
  std::vector<Slot> slots_ = std::vector<Slot>(2);
  std::size_t mask_ = 1;
  unsigned shift_ = 63;
};

// A set of 64-bit hash values (a sorted array took a dozen steps of binary
// search per question).
class HashSet {
 public:
  void assign(const std::vector<std::uint64_t> &values);
  bool contains(std::uint64_t value) const noexcept {
    if (value == kEmpty) return has_empty_;
    return slots_[slots_.probe(value)] == value;
  }

 private:
  static constexpr std::uint64_t kEmpty = 0;
  struct SlotKey {
    static bool empty(std::uint64_t s) noexcept { return s == kEmpty; }
    static std::uint64_t key(std::uint64_t s) noexcept { return s; }
  };
  ProbedSlots<std::uint64_t, SlotKey> slots_;
  bool has_empty_ = false;  // whether kEmpty itself is in the set
};

// Buckets by key, each slot holding the key and its bucket's place, so that a
// find reads one slot and one bucket (std::unordered_map chased a node per
// probe; a separate array of places cost a cache miss more per find).
class BucketTable {
 public:
  void assign(std::vector<std::pair<std::uint64_t, Bucket>> entries);
  // Null when no bucket has `key`.
  const Bucket *find(std::uint64_t key) const noexcept {
    const Slot &s = slots_[slots_.probe(key)];
    return s.bucket == kNone ? nullptr : &buckets_[s.bucket];
  }
  // Starts loading the slot a find(key) reads first, for a caller that has
  // other work to do before the find.
  void prefetch(std::uint64_t key) const noexcept { slots_.prefetch(key); }
  // Every bucket, in no particular order.
  const std::vector<Bucket> &buckets() const noexcept { return buckets_; }

 private:
  static constexpr std::uint32_t kNone = ~std::uint32_t{0};
  struct Slot {
    std::uint64_t key = 0;
    std::uint32_t bucket = kNone;
  };
  struct SlotKey {
    static bool empty(const Slot &s) noexcept { return s.bucket == kNone; }
    static std::uint64_t key(const Slot &s) noexcept { return s.key; }
  };
  ProbedSlots<Slot, SlotKey> slots_;
  std::vector<Bucket> buckets_;
};

struct ReferenceIndex {
  // levels[origin][nucleus][k] maps hose_key(parts, k), k = 1..kMaxHoseSpheres.
  std::array<std::array<std::array<BucketTable, kMaxHoseSpheres + 1>, 2>, 2> levels;
  std::vector<std::uint64_t> constitution;  // per compound
  // Tables::reference()[c].id of compound c, all in one pool, each followed
  // by a NUL: a lookup lists up to 10 ids, and reading them from the
  // compound records cost a cache miss per record (some 200 bytes each) and
  // another for a long id's text. The shifts' ReferenceIds share the pool
  // rather than copy the ids, and are its one reader (ReferenceIdsAccess
  // gives them a compound's start; the NUL ends the id).
  std::shared_ptr<const std::string> id_text;
  std::vector<std::uint32_t> id_start;  // per compound
  bool has_user = false;
  // How many compounds' entries came from kPrecomputedEntries (0: all were
  // worked out when the index was built).
  std::size_t precomputed = 0;
  // known[k]: every key of levels[*][*][k] (both origins, both nuclei).
  // Each reference atom is entered at all spheres 1..kMaxHoseSpheres, so a
  // key missing here at sphere k rules out every deeper match.
  std::array<HashSet, kMaxHoseSpheres + 1> known;
  // known_digests[k]: hose_digests() at sphere k of every reference atom in
  // levels.
  std::array<HashSet, kMaxHoseSpheres + 1> known_digests;
  // Whether some lookup at sphere k could find `key`.
  bool may_match(int k, std::uint64_t key) const { return known[static_cast<std::size_t>(k)].contains(key); }
  // Whether some reference atom's code could agree with one whose digest at
  // sphere k is `digest`: if not, no lookup at sphere k or deeper can match.
  bool digest_may_match(int k, std::uint64_t digest) const {
    return known_digests[static_cast<std::size_t>(k)].contains(digest);
  }
};

// Makes a shift's ReferenceIds (nmrpred/shifts.hpp) of compounds of the
// index's pool without copying their ids.
struct ReferenceIdsAccess {
  // `compounds`: at most ReferenceIds::kMax.
  static void assign(ReferenceIds &ids, const ReferenceIndex &index, const std::uint32_t *compounds, std::size_t n) {
    ids.text_ = index.id_text;
    for (std::size_t i = 0; i < n; ++i) ids.start_[i] = index.id_start[compounds[i]];
    ids.size_ = static_cast<std::uint32_t>(n);
  }
};

// What one assigned shift of a reference compound puts into the index: the
// work per compound (reading its SMILES, classes, HOSE keys and digests, the
// rule values) done, the grouping into buckets not yet.
struct IndexEntry {
  std::uint32_t compound;  // index into Tables::reference()
  std::uint32_t nucleus;   // IndexNucleus
  std::array<std::uint64_t, kMaxHoseSpheres + 1> key;     // [k]: sphere k's key (k >= 1)
  std::array<std::uint64_t, kMaxHoseSpheres + 1> digest;  // [k]: sphere k's digest (k >= 1)
  double shift_ppm;
  double increment_ppm;  // the query-side rule value, NaN if no rule applies
  double pair_half_ppm;  // 1H diastereotopic pair: half the difference; NaN if none
  std::uint64_t scheme;  // 13C: scheme_key() of the rule's method, 0 if none
};

// The entries of reference compounds [first, last) of `tables` and their
// constitution keys (constitution_key(), one per compound, in order).
// Throws TablesError or InputError naming the record of a bad compound.
struct IndexEntries {
  std::vector<std::uint64_t> constitution;
  std::vector<IndexEntry> entries;
};
IndexEntries reference_entries(const Tables &tables, std::size_t first, std::size_t last);

// The entries of the built-in compounds, worked out when the library was
// built (libnmrpred/build_tools/make_index_data.cpp writes them) for table
// files whose fnv1a hash (as Tables::version() prints it) is `files_hash`;
// the program that writes them is linked with none (`compounds` 0).
struct PrecomputedEntries {
  std::uint64_t files_hash;
  const char *reader_version;  // io::detail::reader_version() of the program that wrote them
  std::size_t compounds;  // the first `compounds` reference records
  const std::uint64_t *constitution;
  const IndexEntry *entries;
  std::size_t entry_count;
};
extern const PrecomputedEntries kPrecomputedEntries;

// Needs tables.reference() and tables.c13_increments(); not tables.reference_index().
// `files_hash`: the hash of the table files `tables` was made from; where it
// is that of the precomputed entries, the built-in compounds' entries are
// taken from them rather than worked out again (ReferenceIndex::precomputed
// says how many were).
std::shared_ptr<const ReferenceIndex> build_reference_index(const Tables &tables, std::uint64_t files_hash);

}  // namespace nmrpred::detail

#endif
