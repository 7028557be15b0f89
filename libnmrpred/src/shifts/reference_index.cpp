#include "shifts/reference_index.hpp"

#include <algorithm>
#include <cmath>
#include <limits>
#include <utility>

#include "io/raw_molecule.hpp"
#include "shifts/increments_h1.hpp"
#include "shifts/sources.hpp"

#include <nmrpred/classes.hpp>
#include <nmrpred/error.hpp>
#include <nmrpred/io.hpp>

#include <fmt/format.h>

namespace nmrpred::detail {

void HashSet::assign(const std::vector<std::uint64_t> &values) {
  slots_.reset(values.size());
  has_empty_ = false;
  for (const auto v : values) {
    if (v == kEmpty)
      has_empty_ = true;
    else
      slots_[slots_.probe(v)] = v;
  }
}

void BucketTable::assign(std::vector<std::pair<std::uint64_t, Bucket>> entries) {
  slots_.reset(entries.size());
  buckets_.clear();
  buckets_.reserve(entries.size());
  for (auto &e : entries) {
    slots_[slots_.probe(e.first)] = Slot{e.first, static_cast<std::uint32_t>(buckets_.size())};
    buckets_.push_back(std::move(e.second));
  }
}

std::uint64_t hose_key(const std::vector<std::string> &parts, int spheres) {
  std::uint64_t h = kHoseKeySeed;
  for (int k = 0; k <= spheres && k < static_cast<int>(parts.size()); ++k)
    h = hose_key_part(h, parts[static_cast<std::size_t>(k)]);
  return h;
}

Summary summarise(std::vector<double> v) { return summarise_in_place(v); }

Summary summarise_in_place(std::vector<double> &v) {
  Summary s;
  s.n = static_cast<int>(v.size());
  if (v.empty()) return s;
  std::sort(v.begin(), v.end());
  const auto n = v.size();
  s.median = n % 2 ? v[n / 2] : 0.5 * (v[n / 2 - 1] + v[n / 2]);
  if (n > 1) {
    double var = 0;
    for (double x : v) var += (x - s.median) * (x - s.median);
    s.sd = std::sqrt(var / static_cast<double>(n - 1));
  }
  return s;
}

Summary Bucket::residual_of(std::uint64_t scheme) const {
  const auto it = std::lower_bound(residual_by_scheme.begin(), residual_by_scheme.end(), scheme,
                                   [](const auto &e, std::uint64_t s) { return e.first < s; });
  return it != residual_by_scheme.end() && it->first == scheme ? it->second : Summary{};
}

std::int64_t diastereotopic_partner(const Molecule &m, const AtomClasses &classes, std::size_t h) {
  const auto c = m.attached_to(h);
  if (c < 0) return -1;
  const auto carbon = static_cast<std::size_t>(c);
  if (m.atom(carbon).atomic_number != 6 || m.atom(carbon).aromatic || m.degree(carbon) != 4) return -1;
  std::int64_t partner = -1;
  for (auto it = m.neighbours_begin(carbon); it != m.neighbours_end(carbon); ++it) {
    if (*it == h || !m.is_hydrogen(*it)) continue;
    if (partner >= 0) return -1;  // CH3: a rotor, never diastereotopic
    partner = *it;
  }
  if (partner < 0 || classes.chemical[static_cast<std::size_t>(partner)] == classes.chemical[h]) return -1;
  return partner;
}

std::uint64_t scheme_key(std::string_view method) {
  const auto colon = method.find(':');
  return hose_key_part(kHoseKeySeed, method.substr(0, colon));
}

IndexEntries reference_entries(const Tables &tables, std::size_t first, std::size_t last) {
  const auto &compounds = tables.reference();
  if (first > last || last > compounds.size()) throw InternalError("reference_entries: compounds out of range");
  constexpr double nan = std::numeric_limits<double>::quiet_NaN();
  const ShiftOptions plain;
  IndexEntries out;
  out.constitution.reserve(last - first);
  for (auto ci = static_cast<std::uint32_t>(first); ci < last; ++ci) {
    const auto &c = compounds[ci];
    Molecule m;
    try {
      m = read_molecule(c.smiles, Format::Smiles);
    } catch (const Error &e) {
      throw InputError(fmt::format("{}:{}: reference '{}': SMILES '{}' cannot be read: {}", c.file, c.line, c.id,
                                   c.smiles, e.what()));
    }
    const auto classes = compute_classes(m);
    out.constitution.push_back(constitution_key(m, classes));
    const ShiftQuery q(m, classes, tables, plain, Nucleus::C13);
    const auto increments = make_c13_increments(tables.c13_increments(), tables, c.solvent);
    ShiftOptions in_solvent;
    in_solvent.solvent = c.solvent;
    const ShiftQuery qh(m, classes, tables, in_solvent, Nucleus::H1);
    const auto h1_increments = make_h1_increments(tables.h1_increments(), c.solvent);
    // Only carbons and hydrogens carry assigned shifts.
    std::vector<bool> keyed(m.atom_count(), false);
    for (std::size_t a = 0; a < m.atom_count(); ++a) keyed[a] = m.atom(a).atomic_number == 6 || m.is_hydrogen(a);
    const auto all_keys = hose_keys(m, classes, keyed);
    const auto all_digests = hose_digests(m, keyed);
    // The 13C rule value of `centre` and the scheme it comes from (0: none).
    auto c13_rule = [&](std::size_t centre) -> std::pair<double, std::uint64_t> {
      ShiftDraft s;
      if (increments->estimate(q, centre, s)) return {s.ppm, scheme_key(s.method)};
      return {nan, 0};
    };
    auto h1_rule = [&](std::size_t centre) {
      ShiftDraft s;
      return h1_increments->estimate(qh, centre, s) && !s.exchangeable ? s.ppm : nan;
    };
    auto add = [&](IndexNucleus nucleus, std::size_t centre, double value, double increment, double half,
                   std::uint64_t scheme = 0) {
      out.entries.push_back(IndexEntry{ci, static_cast<std::uint32_t>(nucleus), all_keys[centre].key,
                                       all_digests[centre], value, increment, half, scheme});
    };
    auto check_atom = [&](std::uint32_t a) {
      if (a >= m.heavy_atom_count())
        throw TablesError(fmt::format("{}:{}: reference '{}': atom {} is out of range", c.file, c.line, c.id, a));
    };
    for (const auto &as : c.c13)
      for (std::size_t k = 0; k < as.atoms.size(); ++k) {
        check_atom(as.atoms[k]);
        if (m.atom(as.atoms[k]).atomic_number != 6)
          throw TablesError(fmt::format("{}:{}: reference '{}': 13C shift on atom {}, which is not carbon", c.file, c.line, c.id, as.atoms[k]));
        const auto [inc, scheme] = c13_rule(as.atoms[k]);
        add(kIndexC13, as.atoms[k], as.values.size() == as.atoms.size() ? as.values[k] : as.values[0], inc, nan,
            scheme);
      }
    for (const auto &as : c.h1)
      for (std::size_t k = 0; k < as.atoms.size(); ++k) {
        check_atom(as.atoms[k]);
        std::vector<std::size_t> hs;
        for (auto it = m.neighbours_begin(as.atoms[k]); it != m.neighbours_end(as.atoms[k]); ++it)
          if (m.is_hydrogen(*it)) hs.push_back(*it);
        if (hs.empty())
          throw TablesError(fmt::format("{}:{}: reference '{}': 1H shift on atom {}, which carries no hydrogen", c.file, c.line, c.id, as.atoms[k]));
        const bool diastereotopic = diastereotopic_partner(m, classes, hs[0]) >= 0;
        if (!as.pair_atoms && as.values.size() == 2) {
          // A pair on one atom: both protons share the topological code. The
          // lower value goes with the proton the rules put lower, so that the
          // residuals of a terminal =CH2 compare like with like.
          double inc0 = h1_rule(hs[0]);
          double inc1 = hs.size() > 1 ? h1_rule(hs[1]) : inc0;
          if (inc1 < inc0) std::swap(inc0, inc1);
          const double lo = std::min(as.values[0], as.values[1]), hi = std::max(as.values[0], as.values[1]);
          const double half = diastereotopic ? 0.5 * (hi - lo) : nan;
          add(kIndexH1, hs[0], lo, inc0, half);
          add(kIndexH1, hs[0], hi, inc1, half);
        } else {
          add(kIndexH1, hs[0], as.values.size() == as.atoms.size() ? as.values[k] : as.values[0],
              h1_rule(hs[0]), diastereotopic ? 0.0 : nan);
        }
      }
  }
  return out;
}

namespace {

// Buffers make_bucket() reuses from one bucket to the next.
struct BucketScratch {
  std::vector<double> shifts, residuals, values;
  std::vector<std::pair<std::uint64_t, double>> by_scheme;
};

// The bucket of the reference atoms `atoms` (their entries, in the order
// they were entered): values averaged per compound, then summarised; 13C
// buckets also per rule scheme. Sorts `atoms` by compound.
Bucket make_bucket(std::vector<const IndexEntry *> &atoms, bool c13, BucketScratch &s) {
  constexpr double nan = std::numeric_limits<double>::quiet_NaN();
  std::sort(atoms.begin(), atoms.end(),
            [](const IndexEntry *a, const IndexEntry *b) { return a->compound < b->compound; });
  Bucket b;
  s.shifts.clear();
  s.residuals.clear();
  for (std::size_t i = 0; i < atoms.size();) {
    std::size_t j = i;
    double sum = 0, rsum = 0, hsum = 0;
    int rn = 0, hn = 0;
    for (; j < atoms.size() && atoms[j]->compound == atoms[i]->compound; ++j) {
      sum += atoms[j]->shift_ppm;
      if (std::isfinite(atoms[j]->increment_ppm)) {
        rsum += atoms[j]->shift_ppm - atoms[j]->increment_ppm;
        ++rn;
      }
      if (std::isfinite(atoms[j]->pair_half_ppm)) {
        hsum += atoms[j]->pair_half_ppm;
        ++hn;
      }
    }
    const CompoundValue v{atoms[i]->compound, sum / static_cast<double>(j - i), rn ? rsum / rn : nan,
                          hn ? hsum / hn : nan, atoms[i]->scheme};
    b.compounds.push_back(v);
    s.shifts.push_back(v.shift_ppm);
    if (rn) s.residuals.push_back(v.residual_ppm);
    i = j;
  }
  b.listed_count = static_cast<std::uint32_t>(std::min(b.listed.size(), b.compounds.size()));
  for (std::size_t i = 0; i < b.listed_count; ++i) b.listed[i] = b.compounds[i].compound;
  b.shift = summarise_in_place(s.shifts);
  b.residual = summarise_in_place(s.residuals);
  if (!c13) return b;
  s.by_scheme.clear();
  for (const auto &cv : b.compounds)
    if (std::isfinite(cv.residual_ppm)) s.by_scheme.emplace_back(cv.scheme, cv.residual_ppm);
  std::sort(s.by_scheme.begin(), s.by_scheme.end());
  for (std::size_t i = 0; i < s.by_scheme.size();) {
    std::size_t j = i;
    s.values.clear();
    for (; j < s.by_scheme.size() && s.by_scheme[j].first == s.by_scheme[i].first; ++j)
      s.values.push_back(s.by_scheme[j].second);
    b.residual_by_scheme.emplace_back(s.by_scheme[i].first, summarise_in_place(s.values));
    i = j;
  }
  return b;
}

}  // namespace

std::shared_ptr<const ReferenceIndex> build_reference_index(const Tables &tables, std::uint64_t files_hash) {
  const auto &compounds = tables.reference();
  auto index = std::make_shared<ReferenceIndex>();
  // The built-in compounds' entries come precomputed when the tables are
  // the files they were worked out from, read by the same Open Babel
  // release (its perception decides the graphs, and so the keys).
  const PrecomputedEntries &pre = kPrecomputedEntries;
  if (pre.compounds > 0 && pre.files_hash == files_hash && pre.compounds <= compounds.size() &&
      io::detail::reader_version() == pre.reader_version)
    index->precomputed = pre.compounds;
  const IndexEntries rest = reference_entries(tables, index->precomputed, compounds.size());
  index->constitution.assign(pre.constitution, pre.constitution + index->precomputed);
  index->constitution.insert(index->constitution.end(), rest.constitution.begin(), rest.constitution.end());
  {
    auto ids = std::make_shared<std::string>();
    index->id_start.reserve(compounds.size());
    for (const auto &c : compounds) {
      index->id_start.push_back(static_cast<std::uint32_t>(ids->size()));
      ids->append(c.id).push_back('\0');
      index->has_user |= c.user;
    }
    index->id_text = std::move(ids);
  }
  // The entries in the order they are entered, precomputed ones first, and
  // per table (origin, nucleus) the places in that order of its entries.
  std::vector<const IndexEntry *> order;
  order.reserve((index->precomputed > 0 ? pre.entry_count : 0) + rest.entries.size());
  if (index->precomputed > 0)
    for (std::size_t i = 0; i < pre.entry_count; ++i) order.push_back(pre.entries + i);
  for (const auto &e : rest.entries) order.push_back(&e);
  std::array<std::array<std::vector<std::uint32_t>, 2>, 2> places;
  for (std::uint32_t place = 0; place < order.size(); ++place) {
    const auto *e = order[place];
    places[compounds[e->compound].user ? kUser : kBuiltin][e->nucleus].push_back(place);
  }
  // Per sphere, what goes into index->known and index->known_digests.
  std::array<std::vector<std::uint64_t>, kMaxHoseSpheres + 1> known, known_digests;
  for (std::size_t k = 1; k <= kMaxHoseSpheres; ++k) {
    known_digests[k].reserve(order.size());
    for (const auto *e : order) known_digests[k].push_back(e->digest[k]);
  }
  // A table's atoms are grouped by sorting (key, place in `order`): within a
  // bucket they keep the order they were entered in, which the per-compound
  // sort of make_bucket() depends on for equal compounds (a hash map of lists
  // per key cost an allocation per bucket and most of the time of building
  // the index from precomputed entries). The buffers serve every bucket.
  struct Placed {
    std::uint64_t key;
    std::uint32_t place;
  };
  std::vector<Placed> placed;
  std::vector<const IndexEntry *> atoms;
  BucketScratch scratch;
  for (int o = 0; o < 2; ++o)
    for (int nu = 0; nu < 2; ++nu)
      for (int k = 1; k <= kMaxHoseSpheres; ++k) {
        placed.clear();
        for (const auto place : places[o][nu]) placed.push_back({order[place]->key[static_cast<std::size_t>(k)], place});
        std::sort(placed.begin(), placed.end(), [](const Placed &a, const Placed &b) {
          return a.key != b.key ? a.key < b.key : a.place < b.place;
        });
        std::vector<std::pair<std::uint64_t, Bucket>> entries;
        entries.reserve(placed.size());
        for (std::size_t g0 = 0; g0 < placed.size();) {
          const std::uint64_t key = placed[g0].key;
          atoms.clear();
          for (; g0 < placed.size() && placed[g0].key == key; ++g0) atoms.push_back(order[placed[g0].place]);
          entries.emplace_back(key, make_bucket(atoms, nu == kIndexC13, scratch));
          known[static_cast<std::size_t>(k)].push_back(key);
        }
        index->levels[o][nu][k].assign(std::move(entries));
      }
  for (std::size_t k = 1; k <= kMaxHoseSpheres; ++k) {
    index->known[k].assign(known[k]);
    index->known_digests[k].assign(known_digests[k]);
  }
  return index;
}

}  // namespace nmrpred::detail
