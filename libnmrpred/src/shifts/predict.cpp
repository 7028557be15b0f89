// The shift engine: small sources with one interface, tried in order.

#include <nmrpred/error.hpp>
#include <nmrpred/hose.hpp>
#include <nmrpred/shifts.hpp>
#include <nmrpred/solvents.hpp>

#include <algorithm>
#include <array>
#include <charconv>
#include <limits>
#include <cmath>
#include <cstring>
#include <iterator>
#include <exception>
#include <memory>
#include <new>
#include <optional>
#include <string>
#include <string_view>

#include <fmt/format.h>

#include "graph/heavy_classes.hpp"
#include "shifts/fixed_text.hpp"
#include "shifts/increments_h1.hpp"
#include "shifts/reference_index.hpp"
#include "shifts/sources.hpp"

namespace nmrpred {

namespace detail {

namespace {

using namespace std::string_view_literals;

// Lookup settings per sphere level k (index k). The support is the number of
// distinct reference compounds needed to accept a level; the prior is the
// typical error of a match at that level, calibrated by the leave-one-out
// benchmark (benchmarks/README.md).
struct LevelSetting {
  int min_support;
  double prior_ppm;
};
constexpr LevelSetting kC13Levels[kMaxHoseSpheres + 1] = {
    {0, 0}, {3, 6.0}, {2, 3.0}, {1, 2.0}, {1, 1.4}, {1, 1.0}, {1, 0.8}};
// For protons sphere 1 is only "a hydrogen on carbon": it says nothing, and a
// class average does better (leave-one-out), so it is never used.
constexpr int kNever = 1 << 30;
constexpr LevelSetting kH1Levels[kMaxHoseSpheres + 1] = {
    {0, 0}, {kNever, 0.9}, {2, 0.45}, {1, 0.25}, {1, 0.18}, {1, 0.14}, {1, 0.12}};

// Residual-corrected lookups: at shallow spheres the matched reference atoms
// differ too much in their outer environment for their raw shifts to be
// useful, but the increment rules capture most of that difference. There the
// estimate is the query's increment value plus the median of (shift -
// increment) over the matched reference atoms. Levels and priors come from
// the leave-one-out benchmark (benchmarks/README.md).
constexpr int kResidualMaxSphere = 6;
constexpr double kC13ResidualPrior[kMaxHoseSpheres + 1] = {0, 2.2, 1.5, 0.9, 0.5, 0.4, 0.3};
// 1H spheres 3-6: 0.15, 0.11, 0.08, 0.05 scaled by 0.8 once the methine and
// summed-beta rules made more protons land near their value: the +/-1u
// interval held 80-83% at each of these levels and 80.2% overall, above the
// 60-80% the uncertainties are meant to give; now 77-80% per level, 77.8%
// overall (benchmarks/README.md).
constexpr double kH1ResidualPrior[kMaxHoseSpheres + 1] = {0, 0.5, 0.15, 0.12, 0.09, 0.06, 0.04};
// At spheres 1-3 the matched compounds share little beyond the first
// neighbours, and a median over a handful of them is itself noisy: there the
// correction is shrunk by n / (n + 1) for n compounds and capped, so that a
// few unlike compounds (bridged bicyclics matched to an open chain, say)
// cannot move the rules' value far. Measured with the leave-one-out
// benchmark (benchmarks/loo_shifts.cpp): 13C carbons off by more than 5 ppm
// 224 -> 209 of 3953, 1H protons off by more than 0.5 ppm 148 -> 144 of 2708.
// The 13C cap was 3 ppm while residuals of any scheme corrected a sum; since
// spheres 2-3 take only residuals of the query's own scheme
// (kC13SameSchemeSphere) it held back corrections that were right
// (pinacolone C3, BHT's CMe3: the sum of a quaternary carbon next to
// tert-butyl 6-8 ppm high). Cap 3/4/5/6 ppm: 111/107/106/109 carbons off
// by more than 5 ppm; at 5, 92 carbons change, summed absolute error
// 317.7 -> 307.5 ppm, 5 leave the tail, none enters, coverage 79.1 -> 79.0 %.
constexpr int kShallowSphere = 3;
constexpr double kC13ShallowCapPpm = 5.0;
constexpr double kH1ShallowCapPpm = 0.2;
// Diastereotopic CH2 protons take the spread of their pair only from
// compounds that share the environment to sphere 4 or deeper. At sphere 3 a
// single compound with a pair (propylene carbonate, 4.56/4.03) spread the
// OCH2 of sugars, dioxolanes and glycidyl ethers by the same 0.53 ppm and put
// 91 NCI protons above 4.5 ppm (tests/python/test_h1_facts.py).
constexpr int kPairMinSphere = 4;
// A proton matched by built-in reference atoms no increment rule covers (so
// no residual correction) takes its own rule's value where one applies
// rather than the raw median of such unlike compounds.
// Leave-one-out (benchmarks/loo_shifts.cpp --1h): at sphere 2 the one such
// proton, 2-nitropropane CH, 0.90 -> 0.23 ppm off. Sphere 3 was a wash
// (14 protons, summed absolute error 1.41 ppm better and 1.44 worse) until
// the lactam-ring, alpha-plus-beta and arylamino rules covered more
// protons; now the protons it changes gain 1.73 ppm and lose 1.44, and
// thioanisole's ortho protons leave the > 0.5 ppm tail (0.54 -> 0.09), none
// enters it. At spheres 4-5 such matches are mostly a single compound that
// differs just beyond the code (quinoxaline and benzimidazole matching each
// other, thioanisole matching methyl phenyl sulfone): the rule wins there
// too; 17 protons change, 13 closer and 4 further, summed absolute error
// 5.53 -> 1.56 ppm, 5 leave the > 0.5 ppm tail (4 of them quinoxaline, whose
// parent rows are its own values), none enters it. No sphere-6 match of
// this kind has a rule.
// 13C: a lookup whose matched reference atoms no rule covers cannot be
// corrected; up to sphere 4 such a match gives way to the query's own rule
// value where one applies. Leave-one-out (benchmarks/loo_shifts.cpp): five
// carbons change, all closer (dimethyl phthalate CH, matched only by
// phthalic anhydride at spheres 3-4: 5.1 -> 1.6 and 3.0 -> 0.7 ppm off;
// N-methylaniline CH3 at sphere 2: 4.2 -> 3.9); spheres 5-6 hold no such case.
constexpr int kC13WeakSphere = 4;
// 13C at spheres 2-3: the matched atoms share only their first neighbours
// with the query, and their rules may be another scheme than the query's
// (an open-chain additive sum correcting a ring-scheme sum, a benzene sum
// correcting a fused parent's). Only residuals of the query's own scheme
// (scheme_key(): the method text up to its ':', which names the ring size
// or class) correct it; without any, the match counts as uncorrectable.
// Leave-one-out (benchmarks/loo_shifts.cpp): 536 carbons change (282
// closer, 246 further), summed absolute error 821.1 -> 769.5 ppm, 5 carbons
// leave the >5 ppm tail and 3 enter it (delta-valerolactone C4 4.9 -> 5.1,
// thymine C6 4.6 -> 5.1, 1-naphthol C2 4.1 -> 7.4). At sphere 1, where a
// median over hundreds of compounds stands for the scheme's overall bias,
// the same filter lost 4 carbons net, so sphere 1 keeps all residuals.
constexpr int kC13SameSchemeSphere = 2;

// Room of the engine's draft method text, which every atom of a molecule
// reuses: the longest texts are a rule's with a correction's and a CH2
// pair's tails, and over the first 1,000 NCI records 400 characters hold
// 98.6 % of those.
constexpr std::size_t kDraftMethodRoom = 400;

// Appends the pieces of a method text to a string through a buffer: a
// looked-up atom's text gets a dozen pieces, each appended on its own a
// capacity check and a library call. flush() ends the text (kept explicit:
// appending may throw, which a destructor must not).
class TextAppender {
 public:
  explicit TextAppender(std::string &s) : s_(s) {}
  TextAppender(const TextAppender &) = delete;
  TextAppender &operator=(const TextAppender &) = delete;

  TextAppender &text(std::string_view t) {
    if (t.size() > room()) {
      flush();
      if (t.size() > sizeof buf_) {
        s_.append(t);
        return *this;
      }
    }
    std::memcpy(p_, t.data(), t.size());
    p_ += t.size();
    return *this;
  }
  // n in decimal, as std::to_string writes it.
  TextAppender &integer(int n) {
    if (room() < kNumberRoom) flush();
    p_ = std::to_chars(p_, p_ + kNumberRoom, n).ptr;
    return *this;
  }
  // v as fmt's "{:+.1f}" writes it (the sign is v's, so -0.04 gives -0.0).
  TextAppender &signed_1(double v) {
    std::uint64_t tenths = 0;
    if (!scaled_magnitude(v, 10, tenths)) {
      flush();
      fmt::format_to(std::back_inserter(s_), "{:+.1f}", v);
      return *this;
    }
    if (room() < kNumberRoom) flush();
    p_ = put_scaled(p_, std::signbit(v) ? '-' : '+', tenths, 1);
    return *this;
  }
  void flush() {
    s_.append(buf_, p_);
    p_ = buf_;
  }

 private:
  static constexpr std::size_t kNumberRoom = 24;  // put_scaled's most, and an int's
  std::size_t room() const { return static_cast<std::size_t>(buf_ + sizeof buf_ - p_); }
  std::string &s_;
  char buf_[256];
  char *p_ = buf_;
};

class ReferenceLookup final : public ShiftSource {
 public:
  ReferenceLookup(bool user, const ShiftSource *increments) : user_(user), increments_(increments) {}

  bool estimate(const ShiftQuery &q, std::size_t atom, ShiftDraft &out) const override {
    const auto &index = q.tables.reference_index();
    if (user_ && !index.has_user) return false;
    const int nucleus = q.nucleus == Nucleus::C13 ? kIndexC13 : kIndexH1;
    const auto *levels = q.nucleus == Nucleus::C13 ? kC13Levels : kH1Levels;
    const auto &excluded = q.excluded_compounds();
    const auto &keys = q.keys(atom);
    // The query's own increment value, computed only once a match needs it,
    // straight into `out`, which this call owns until it returns: a corrected
    // value's text is the rule's text with a tail, so the tail is appended in
    // place (a Shift of its own cost an allocation per looked-up atom, a
    // shared scratch tied the text's life to other users of the scratch).
    // Until the rule's value is taken or the atom passed on, `out` holds the
    // rule's fields; every path below sets all the fields a source fills,
    // and exchangeable and observed, which the rule may set but a lookup
    // does not, are put back.
    bool inc_done = false;
    double inc_q = std::numeric_limits<double>::quiet_NaN();
    auto query_increments = [&] {
      if (inc_done) return;
      const bool exchangeable = out.exchangeable, observed = out.observed;
      if (increments_->estimate(q, atom, out)) inc_q = out.ppm;
      out.exchangeable = exchangeable;
      out.observed = observed;
      inc_done = true;
    };
    const auto &tables = index.levels[user_ ? kUser : kBuiltin][nucleus];
    // The spheres are tried from the deepest down, most deep ones missing:
    // the slots of all are asked for at once, so their cache misses overlap
    // rather than follow one another.
    for (int k = keys.depth; k >= 1; --k) tables[k].prefetch(keys.key[static_cast<std::size_t>(k)]);
    for (int k = keys.depth; k >= 1; --k) {
      const Bucket *found = tables[k].find(keys.key[static_cast<std::size_t>(k)]);
      if (!found) continue;
      const Bucket &b = *found;
      Summary shift = b.shift, residual = b.residual;
      std::vector<std::uint32_t> used;
      // Blind mode: recompute without the query's own compound(s), if present.
      bool touched = false;
      for (auto c : excluded)
        touched |= std::binary_search(b.compounds.begin(), b.compounds.end(), CompoundValue{c, 0, 0, 0, 0},
                                      [](const CompoundValue &x, const CompoundValue &y) { return x.compound < y.compound; });
      if (touched) {
        std::vector<double> sv, rv;
        sv.reserve(b.compounds.size());
        rv.reserve(b.compounds.size());
        for (const auto &cv : b.compounds) {
          if (std::find(excluded.begin(), excluded.end(), cv.compound) != excluded.end()) continue;
          sv.push_back(cv.shift_ppm);
          if (std::isfinite(cv.residual_ppm)) rv.push_back(cv.residual_ppm);
        }
        shift = summarise(std::move(sv));
        residual = summarise(std::move(rv));
      }
      if (shift.n < (user_ ? 1 : levels[k].min_support)) continue;
      if (k <= kResidualMaxSphere && increments_ && residual.n > 0) {
        query_increments();
        if (std::isfinite(inc_q) && q.nucleus == Nucleus::C13 && k >= kC13SameSchemeSphere && k <= kShallowSphere) {
          const auto key = scheme_key(out.method);  // still the rule's text
          if (!touched) {
            residual = b.residual_of(key);
          } else {
            std::vector<double> rv;
            rv.reserve(b.compounds.size());
            for (const auto &cv : b.compounds)
              if (cv.scheme == key && std::isfinite(cv.residual_ppm) &&
                  std::find(excluded.begin(), excluded.end(), cv.compound) == excluded.end())
                rv.push_back(cv.residual_ppm);
            residual = summarise(std::move(rv));
          }
        }
        if (std::isfinite(inc_q) && residual.n > 0) {
          double correction = residual.median;
          if (k <= kShallowSphere) {
            const double cap = q.nucleus == Nucleus::C13 ? kC13ShallowCapPpm : kH1ShallowCapPpm;
            correction *= static_cast<double>(residual.n) / (residual.n + 1.0);
            correction = std::clamp(correction, -cap, cap);
          }
          out.ppm = inc_q + correction;
          const double prior = (q.nucleus == Nucleus::C13 ? kC13ResidualPrior : kH1ResidualPrior)[k];
          out.uncertainty_ppm = std::sqrt(prior * prior + residual.sd * residual.sd);
          // Pieces through a buffer rather than the formatter: one of these
          // per looked-up atom. The rule's text is already there
          // (query_increments).
          TextAppender m(out.method);
          m.text("; corrected by "sv).signed_1(correction);
          const bool shrunk = correction != residual.median;
          m.text(shrunk ? " ppm: the median residual of "sv : " ppm, the median residual of "sv)
              .integer(residual.n)
              .text(user_ ? " user"sv : " built-in"sv)
              .text(residual.n == 1 ? " reference compound"sv : " reference compounds"sv)
              .text(" at HOSE sphere "sv)
              .integer(k);
          if (shrunk)
            m.text(" ("sv)
                .signed_1(residual.median)
                .text(" ppm), shrunk and capped as at every sphere up to "sv)
                .integer(kShallowSphere);
          m.flush();
          fill_common(out, q, b, excluded, k);
          split_pair(out, q, atom, k, excluded);
          return true;
        }
      }
      // An uncorrectable built-in match gives way to the query's own rule
      // (1H at any sphere, 13C up to kC13WeakSphere).
      if (!user_ && increments_ && (q.nucleus == Nucleus::H1 || k <= kC13WeakSphere)) {
        query_increments();
        if (std::isfinite(inc_q)) return false;
      }
      out.ppm = shift.median;
      out.uncertainty_ppm = std::sqrt(levels[k].prior_ppm * levels[k].prior_ppm + shift.sd * shift.sd);
      out.solvent_named = false;  // the reference compounds' value, not the rule's
      // Through a buffer rather than the formatter, as above.
      out.method.clear();
      TextAppender m(out.method);
      m.text(user_ ? "user"sv : "built-in"sv)
          .text(" reference lookup, HOSE sphere "sv)
          .integer(k)
          .text(", "sv)
          .integer(shift.n)
          .text(shift.n == 1 ? " compound"sv : " compounds"sv)
          .flush();
      fill_common(out, q, b, excluded, k);
      split_pair(out, q, atom, k, excluded);
      return true;
    }
    return false;
  }

  // The two protons of a diastereotopic sp3 CH2 share the environment code,
  // so the lookup alone gives them one value. Where matched reference
  // compounds list such a CH2 (with a pair of values, or one value for both),
  // the pair is spread about that value by the median half-difference; where
  // none at the matched sphere does, the next smaller sphere down to
  // kPairMinSphere that has some is used. No published rule says which
  // proton of a general CH2 is the lower one: the proton whose chemical class
  // comes first (lower lowest atom index) gets the lower value, the
  // convention the coupling tables use for =CH2 (tables/FORMAT.md), and the
  // uncertainty grows by the half-difference in quadrature, the error of the
  // opposite assignment.
  void split_pair(ShiftDraft &out, const ShiftQuery &q, std::size_t atom, int k,
                  const std::vector<std::uint32_t> &excluded) const {
    if (q.nucleus != Nucleus::H1) return;
    const auto partner = diastereotopic_partner(q.molecule, q.classes, atom);
    if (partner < 0) return;
    Summary pair;
    int from = k;
    const auto &index = q.tables.reference_index();
    for (int j = k; pair.n == 0 && j >= kPairMinSphere; --j) {
      const Bucket *found =
          index.levels[user_ ? kUser : kBuiltin][kIndexH1][j].find(q.keys(atom).key[static_cast<std::size_t>(j)]);
      if (!found) continue;
      std::vector<double> &hv = q.scratch().values;
      hv.clear();
      for (const auto &cv : found->compounds)
        if (std::isfinite(cv.pair_half_ppm) &&
            std::find(excluded.begin(), excluded.end(), cv.compound) == excluded.end())
          hv.push_back(cv.pair_half_ppm);
      pair = summarise_in_place(hv);
      from = j;
    }
    // Formatted into a buffer on the stack, then appended with room made for
    // exactly its size: the method grows at most once.
    fmt::memory_buffer tail;
    auto to_tail = std::back_inserter(tail);
    const bool lower = q.classes.chemical[atom] < q.classes.chemical[static_cast<std::size_t>(partner)];
    if (pair.n == 0) {
      constexpr std::string_view none =
          "; diastereotopic CH2: no matched reference lists such a pair, both protons share the value";
      tail.append(none.data(), none.data() + none.size());
    } else if (pair.median <= 0) {
      fmt::format_to(to_tail,
                     "; diastereotopic CH2: the references matched at HOSE sphere {} give one value for both "
                     "protons (median of {} compound{}), both share it",
                     from, pair.n, pair.n == 1 ? "" : "s");
    } else {
      out.ppm += lower ? -pair.median : pair.median;
      out.uncertainty_ppm = std::hypot(out.uncertainty_ppm, pair.median);
      fmt::format_to(to_tail, "; diastereotopic CH2: {}{:.2f} ppm, half the median difference of the pair over {} "
                              "reference compound{} matched at HOSE sphere {}; the {} value by class order (which "
                              "proton is which is not known)",
                              lower ? "-" : "+", pair.median, pair.n, pair.n == 1 ? "" : "s", from,
                              lower ? "lower" : "higher");
    }
    out.method.reserve(out.method.size() + tail.size());
    out.method.append(tail.data(), tail.size());
  }

 private:
  void fill_common(ShiftDraft &out, const ShiftQuery &q, const Bucket &b, const std::vector<std::uint32_t> &excluded,
                   int k) const {
    out.source = user_ ? ShiftSourceKind::UserReference : ShiftSourceKind::Reference;
    out.sphere = k;
    const auto &index = q.tables.reference_index();
    if (excluded.empty()) {
      ReferenceIdsAccess::assign(out.references, index, b.listed.data(), b.listed_count);
      return;
    }
    std::array<std::uint32_t, kMaxListedReferences> listed;
    std::size_t n = 0;
    for (const auto &cv : b.compounds) {
      if (n == kMaxListedReferences) break;
      if (std::find(excluded.begin(), excluded.end(), cv.compound) != excluded.end()) continue;
      listed[n++] = cv.compound;
    }
    ReferenceIdsAccess::assign(out.references, index, listed.data(), n);
  }

  bool user_;
  const ShiftSource *increments_;
};

// Protons whose shifts the lookups and rules estimate: deuterium and
// tritium give no 1H signal, and protons on O, N and S exchange, so they
// take typical values and are never looked up.
enum class ProtonKind { Silent, CarbonBound, Labile };
ProtonKind proton_kind(const Molecule &m, std::size_t h) {
  if (m.atom(h).isotope > 1) return ProtonKind::Silent;
  const auto heavy = m.attached_to(h);
  const auto z = heavy >= 0 ? m.atom(static_cast<std::size_t>(heavy)).atomic_number : 0;
  return z == 8 || z == 7 || z == 16 ? ProtonKind::Labile : ProtonKind::CarbonBound;
}

}  // namespace

std::uint64_t ShiftQuery::constitution() const {
  if (!constitution_done_) {
    constitution_ = constitution_key(molecule, classes);
    constitution_done_ = true;
  }
  return constitution_;
}

const std::vector<std::uint32_t> &ShiftQuery::excluded_compounds() const {
  if (!excluded_done_) {
    if (options.blind) {
      const auto &con = tables.reference_index().constitution;
      const auto key = constitution();
      for (std::uint32_t c = 0; c < con.size(); ++c)
        if (con[c] == key) excluded_.push_back(c);
    }
    excluded_done_ = true;
  }
  return excluded_;
}

const SmartsTarget &MoleculeFacts::smarts_target() const {
  if (!target_) {
    target_.emplace();
    target_->serves(molecule_.atom_count());
    (*target_)->reset(molecule_);
  }
  return **target_;
}

void MoleculeFacts::set_all_keys(std::vector<HoseKeys> keys, std::vector<bool> keyed, const ReferenceIndex &index) {
  if (keys.size() != molecule_.atom_count() || (!keyed.empty() && keyed.size() != keys.size()))
    throw InternalError(fmt::format("{} HOSE keys for {} atoms", keys.size(), molecule_.atom_count()));
  keys_ = std::move(keys);
  if (keyed.empty()) keyed.assign(molecule_.atom_count(), true);
  keyed_ = std::move(keyed);
  keyed_for_ = &index;
}

const HoseKeys &MoleculeFacts::keys(std::size_t atom, Nucleus asking, const ReferenceIndex &index) const {
  // Keys stop at the last sphere `index` can match: those made for another
  // index may stop too early for this one.
  if (keyed_for_ != &index) {
    keyed_.clear();
    keyed_for_ = &index;
  }
  // One pass over the molecule keys every wanted atom once per class, which
  // costs less than a few single-atom calls; the lookups need only the keys,
  // not the text. An atom's keys do not depend on which others are wanted.
  // Of the protons only those the 1H lookup is asked about are keyed.
  if (keyed_.empty()) {
    flag_keyed(molecule_, asking, both_nuclei_, keyed_);
    keys_ = hose_keys(molecule_, classes_, keyed_, &index);
  }
  if (!keyed_.at(atom)) {
    keyed_.assign(molecule_.atom_count(), true);
    keys_ = hose_keys(molecule_, classes_, keyed_, &index);
  }
  return keys_[atom];
}

bool lookup_keyed(const Molecule &m, std::size_t atom) {
  return m.atom(atom).atomic_number == 6 || (m.is_hydrogen(atom) && proton_kind(m, atom) == ProtonKind::CarbonBound);
}

void flag_keyed(const Molecule &m, Nucleus asking, bool both_nuclei, std::vector<bool> &keyed) {
  keyed.assign(m.atom_count(), false);
  // For 13C alone the hydrogens, never carbons, need no look.
  const std::size_t last = !both_nuclei && asking == Nucleus::C13 ? m.heavy_atom_count() : m.atom_count();
  for (std::size_t a = 0; a < last; ++a)
    keyed[a] = (both_nuclei || (m.atom(a).atomic_number == 6) == (asking == Nucleus::C13)) && lookup_keyed(m, a);
}

namespace {

// The few sources of one prediction, in order, kept on the stack as the
// sources themselves are (a vector cost an allocation per call).
class SourceList {
 public:
  void push_back(const ShiftSource *s) { list_.at(n_++) = s; }
  const ShiftSource *const *begin() const { return list_.data(); }
  const ShiftSource *const *end() const { return list_.data() + n_; }

 private:
  std::array<const ShiftSource *, 4> list_{};
  std::size_t n_ = 0;
};

// Atoms of one run of the engine, ascending: a part of a list the caller
// owns.
class AtomRange {
 public:
  AtomRange(const std::size_t *first, const std::size_t *last) : first_(first), last_(last) {}
  const std::size_t *begin() const { return first_; }
  const std::size_t *end() const { return last_; }

 private:
  const std::size_t *first_;
  const std::size_t *last_;
};

// Room for the method texts of a run, per class: over the 4,999 NCI records
// texts average 200 characters for carbons and 177 for protons (nine in ten
// under 350), so the pool of a molecule rarely grows.
constexpr std::size_t kPoolRoomPerClass = 256;

// Asks `sources` in order for each atom of `atoms` and appends the shifts to
// `out`; equivalent atoms (same chemical class) get a copy of the first
// one's shift, whose method text they share. finish(draft, atom) may amend
// each class's estimate before it is kept; it is called for the class's
// first atom only, so what it looks at must be the same for every atom of
// the class (as anything invariant under the molecule's symmetry is).
template <class Finish>
void run_sources(const ShiftQuery &q, const SourceList &sources, AtomRange atoms, std::vector<std::string> *warnings,
                 std::vector<Shift> &out, Finish &&finish) {
  TextPool &texts = q.texts();
  // Chemical class -> position in out of its first atom; sized once rather
  // than grown class by class.
  constexpr auto kNotYet = std::numeric_limits<std::size_t>::max(), kUnseen = kNotYet - 1;
  std::size_t classes = 0;
  for (auto atom : atoms) classes = std::max<std::size_t>(classes, q.classes.chemical[atom] + std::size_t{1});
  std::vector<std::size_t> &by_class = q.scratch().positions;
  by_class.assign(classes, kUnseen);
  // The classes of the run, for the pool's room.
  std::size_t distinct = 0;
  for (auto atom : atoms) {
    auto &c = by_class[q.classes.chemical[atom]];
    if (c == kUnseen) c = kNotYet, ++distinct;
  }
  texts.expect(distinct * kPoolRoomPerClass);
  // One draft for every atom of the molecule, both nuclei: its method text
  // keeps its room, so an estimate allocates no text of its own.
  ShiftDraft &d = q.scratch().draft;
  d.method.reserve(kDraftMethodRoom);
  for (auto atom : atoms) {
    const std::size_t cls = q.classes.chemical[atom];
    if (by_class[cls] != kNotYet) {
      // Equivalent atoms always share the value. Copied in place: the
      // caller reserved room for every atom, so the source stays put.
      out.push_back(out[by_class[cls]]);
      out.back().atom = atom;
      continue;
    }
    d.reset();
    bool done = false;
    for (const auto *src : sources)
      if (src->estimate(q, atom, d)) {
        done = true;
        break;
      }
    if (!done) throw InternalError(fmt::format("atom {}: no shift source answered", atom));
    if (d.source == ShiftSourceKind::ClassAverage && warnings)
      warnings->push_back(fmt::format("atom {}: no reference environment or increment rule fits; "
                                      "class average with a large uncertainty",
                                      atom));
    finish(d, atom);
    by_class[cls] = out.size();
    Shift &s = out.emplace_back();
    s.atom = atom;
    s.nucleus = q.nucleus;
    s.ppm = d.ppm;
    s.uncertainty_ppm = d.uncertainty_ppm;
    s.source = d.source;
    s.sphere = d.sphere;
    s.method = texts.add(d.method);
    s.references = std::move(d.references);
    s.exchangeable = d.exchangeable;
    s.observed = d.observed;
  }
}

void keep_as_is(ShiftDraft &, std::size_t) {}

}  // namespace

namespace {

// The increment rules' values of a molecule's carbons, found beforehand
// (predict_c13_set's rules stage) and handed out as the rules source would
// give them: the same fields set, none touched where there is no value.
class KeptRuleValues final : public ShiftSource {
 public:
  // Per heavy atom, the position of its value in `values`, or kNoValue;
  // the method texts are slices of `methods`.
  static constexpr std::uint32_t kNoValue = std::numeric_limits<std::uint32_t>::max();
  KeptRuleValues(const std::uint32_t *value_of, std::size_t atoms, const KeptAnswer *values,
                 std::string_view methods)
      : value_of_(value_of), atoms_(atoms), values_(values), methods_(methods) {}

  bool estimate(const ShiftQuery &, std::size_t atom, ShiftDraft &out) const override {
    if (atom >= atoms_ || value_of_[atom] == kNoValue) return false;
    values_[value_of_[atom]].give(methods_, out);
    return true;
  }

 private:
  const std::uint32_t *value_of_;
  std::size_t atoms_;
  const KeptAnswer *values_;
  std::string_view methods_;
};

// predict_c13_on with the rules' source given (null: none, as without
// options.use_increments).
std::vector<Shift> predict_c13_with(const ShiftQuery &q, const ShiftSource *increments,
                                    std::vector<std::string> *warnings) {
  const Molecule &molecule = q.molecule;
  const ReferenceLookup user(true, increments), builtin(false, increments);
  const ShiftSource &fallback = detail::c13_class_average();
  SourceList sources;
  if (q.options.use_reference) {
    sources.push_back(&user);
    sources.push_back(&builtin);
  }
  if (increments) sources.push_back(increments);
  sources.push_back(&fallback);
  // Room for every atom (the scratch's, so a following 1H call of
  // predict_c13_h1 reuses it for the protons): grown one carbon at a time the
  // list reallocated a few times per molecule, and counting the carbons
  // first walked the atoms twice.
  std::vector<std::size_t> &atoms = q.scratch().atoms;
  atoms.clear();
  atoms.reserve(molecule.atom_count());
  for (std::size_t a = 0; a < molecule.heavy_atom_count(); ++a)
    if (molecule.atom(a).atomic_number == 6) atoms.push_back(a);
  if (warnings)
    for (std::size_t a = 0; a < molecule.atom_count(); ++a)
      if (molecule.atom(a).radical_electrons) {
        // The tables hold closed-shell molecules only; a radical's spectrum is
        // dominated by paramagnetic effects no rule here describes.
        warnings->push_back(fmt::format("atom {}: unpaired electrons; shifts near a radical centre are not "
                                        "reliable (values are those of the closed-shell graph)",
                                        a));
        break;
      }
  std::vector<Shift> out;
  out.reserve(atoms.size());
  detail::run_sources(q, sources, AtomRange{atoms.data(), atoms.data() + atoms.size()}, warnings, out,
                      keep_as_is);
  return out;
}

}  // namespace

std::vector<Shift> predict_c13_on(const Molecule &molecule, const AtomClasses &classes, const Tables &tables,
                                  const ShiftOptions &options, std::vector<std::string> *warnings,
                                  const MoleculeFacts *shared) {
  if (classes.chemical.size() != molecule.atom_count())
    throw ArgumentError("predict_c13: classes belong to another molecule");
  detail::ShiftQuery q(molecule, classes, tables, options, Nucleus::C13, shared);
  std::unique_ptr<detail::ShiftSource> increments;
  if (options.use_increments)
    increments = detail::make_c13_increments(tables.c13_increments(), tables, options.solvent);
  return predict_c13_with(q, increments.get(), warnings);
}

namespace {

// predict_c13_set's molecules per block: each stage goes through a block
// before the next stage starts, so its code and tables stay in the caches
// (one molecule at a time, the classes, HOSE, pattern and lookup code evict
// one another: classes + 13C over the NCI sample took 1.22-1.25x reading that
// way and 1.07x in blocks, benchmarks/README.md). Blocks of 256 and 1,024
// molecules came out alike within the machine's noise, blocks of 64 kept
// less of the gain; what a block holds between stages (classes, keys, rule
// values and their texts) is a few kilobytes per molecule.
constexpr std::size_t kSetBlock = 256;

// Runs `stage` on molecule i of the set unless an earlier stage failed on it;
// a failure becomes the molecule's status, as predict_all() treats a record.
template <class Stage>
void guarded(C13SetEntry &entry, Stage &&stage) {
  if (entry.error != Status::Ok) return;
  try {
    stage();
  } catch (const Error &e) {
    entry.error = e.status();
    entry.error_message = e.what();
  } catch (const std::bad_alloc &) {
    throw;  // carrying on would only fail again
  } catch (const std::exception &e) {
    entry.error = Status::Internal;
    entry.error_message = fmt::format("internal error (please report): {}", e.what());
  }
  if (entry.error != Status::Ok) {
    entry.shifts.clear();
    entry.warnings.clear();
  }
}

}  // namespace

std::vector<C13SetEntry> predict_c13_set(const std::vector<Molecule> &molecules, const Tables &tables,
                                         const ShiftOptions &options) {
  std::vector<C13SetEntry> out(molecules.size());
  std::shared_ptr<const C13IncrementTables> parsed;
  // The rules' source, made once, before any molecule: so the solvent is
  // checked once (per molecule every one would fail alike). It serves the
  // molecules one after the other, asked once per carbon class, and keeps
  // no answer (they are kept here, in `values`).
  std::unique_ptr<ShiftSource> rules;
  if (options.use_increments) {
    parsed = tables.c13_increments();
    rules = make_c13_increments(parsed, tables, options.solvent, false);
  }
  const ReferenceIndex *index = options.use_reference ? &tables.reference_index() : nullptr;
  // Per molecule of a block, what the stages pass on: its classes (those
  // of heavy_atom_classes() where that shortcut serves), the carbons flagged
  // for keys and their keys, and where its rule values start.
  std::vector<AtomClasses> classes(kSetBlock);
  std::vector<std::vector<bool>> keyed(kSetBlock);
  std::vector<std::vector<HoseKeys>> keys(kSetBlock);
  std::vector<std::size_t> value_start(kSetBlock);
  // Per heavy atom of the block's molecules, one after the other, the
  // position of its rule value (KeptRuleValues::kNoValue: none), the values
  // and their method texts.
  std::vector<std::uint32_t> value_of;
  std::vector<KeptAnswer> values;
  std::string methods;
  ShiftDraft draft;
  std::vector<char> seen;  // rules stage: per class of the molecule, whether asked
  for (std::size_t first = 0; first < molecules.size(); first += kSetBlock) {
    const std::size_t last = std::min(molecules.size(), first + kSetBlock);
    for (std::size_t i = first; i < last; ++i)
      guarded(out[i], [&] {
        AtomClasses &c = classes[i - first];
        // Blind mode takes the constitution key from compute_classes()'s
        // invariant ranks, which the heavy-atom shortcut does not give.
        if (options.blind || !heavy_atom_classes(molecules[i], c)) c = compute_classes(molecules[i]);
        out[i].classes.assign(c.chemical.begin(), c.chemical.begin() + molecules[i].heavy_atom_count());
      });
    if (index)
      for (std::size_t i = first; i < last; ++i) {
        auto &flags = keyed[i - first];
        keys[i - first].clear();
        guarded(out[i], [&] {
          const Molecule &m = molecules[i];
          // The atoms predict_c13_on's first lookup keys.
          flag_keyed(m, Nucleus::C13, false, flags);
          keys[i - first] = hose_keys(m, classes[i - first], flags, index);
        });
      }
    value_of.clear();
    values.clear();
    methods.clear();
    for (std::size_t i = first; i < last; ++i) {
      value_start[i - first] = value_of.size();
      if (!parsed) continue;
      guarded(out[i], [&] {
        const Molecule &m = molecules[i];
        const std::size_t at = value_of.size();
        value_of.resize(at + m.heavy_atom_count(), KeptRuleValues::kNoValue);
        // The carbons run_sources asks about: the first of each chemical
        // class, in atom order, which is the order the lookups ask in.
        ShiftQuery q(m, classes[i - first], tables, options, Nucleus::C13);
        seen.assign(m.atom_count(), 0);
        for (std::size_t a = 0; a < m.heavy_atom_count(); ++a) {
          if (m.atom(a).atomic_number != 6) continue;
          char &s = seen[classes[i - first].chemical[a]];
          if (s) continue;
          s = 1;
          draft.reset();
          if (!rules->estimate(q, a, draft)) continue;
          value_of[at + a] = static_cast<std::uint32_t>(values.size());
          values.push_back(KeptAnswer::keep(draft, methods));
        }
      });
    }
    for (std::size_t i = first; i < last; ++i)
      guarded(out[i], [&] {
        const Molecule &m = molecules[i];
        MoleculeFacts facts(m, classes[i - first]);
        if (index) facts.set_all_keys(std::move(keys[i - first]), std::move(keyed[i - first]), *index);
        ShiftQuery q(m, classes[i - first], tables, options, Nucleus::C13, &facts);
        const KeptRuleValues kept(value_of.data() + value_start[i - first], m.heavy_atom_count(), values.data(),
                                  methods);
        out[i].shifts = predict_c13_with(q, parsed ? &kept : nullptr, &out[i].warnings);
      });
  }
  return out;
}

std::vector<Shift> predict_h1_on(const Molecule &molecule, const AtomClasses &classes, const Tables &tables,
                                 const ShiftOptions &options, std::vector<std::string> *warnings,
                                 const MoleculeFacts *shared) {
  if (classes.chemical.size() != molecule.atom_count())
    throw ArgumentError("predict_h1: classes belong to another molecule");
  std::optional<Solvent> owned_solvent;
  const Solvent &solvent = find_solvent_ref(tables, options.solvent, owned_solvent);
  detail::ShiftQuery q(molecule, classes, tables, options, Nucleus::H1, shared);
  std::unique_ptr<detail::ShiftSource> increments;
  if (options.use_increments) increments = detail::make_h1_increments(tables.h1_increments(), solvent.name);
  const ReferenceLookup user(true, increments.get()), builtin(false, increments.get());
  const ShiftSource &fallback = detail::h1_class_average();
  SourceList sources;
  // One pass over the hydrogens into two lists of the scratch, each
  // ascending by atom: the carbon-bound protons and the exchangeable ones.
  const std::size_t hydrogens = molecule.atom_count() - molecule.heavy_atom_count();
  std::vector<std::size_t> &carbon_bound = q.scratch().atoms, &labile = q.scratch().labile;
  carbon_bound.clear();
  labile.clear();
  carbon_bound.reserve(hydrogens);
  for (std::size_t a = molecule.heavy_atom_count(); a < molecule.atom_count(); ++a) {
    const auto kind = proton_kind(molecule, a);
    if (kind == ProtonKind::CarbonBound) {
      carbon_bound.push_back(a);
    } else if (kind == ProtonKind::Labile) {
      // Most molecules have none: room only once one turns up.
      labile.reserve(hydrogens);
      labile.push_back(a);
    }
  }
  if (options.use_reference) {
    sources.push_back(&user);
    sources.push_back(&builtin);
  }
  if (increments) sources.push_back(increments.get());
  sources.push_back(&fallback);
  std::vector<Shift> out;
  out.reserve(carbon_bound.size() + labile.size());
  // Carbon-bound protons have no published solvent corrections in the
  // tables, except special-group rows of their own solvent or of any solvent
  // (ShiftDraft::solvent_named), whose method names it. In another solvent
  // than CDCl3 every other value's method says whose value it is: the
  // built-in reference compounds are mostly CDCl3 solutions (584 of 675) and
  // the rule tables hold for CDCl3 (tables/FORMAT.md). A user's own
  // compounds are taken as the user gave them.
  const bool as_in_cdcl3 = solvent.id != "cdcl3";
  detail::run_sources(q, sources, AtomRange{carbon_bound.data(), carbon_bound.data() + carbon_bound.size()}, warnings,
                      out, [&](ShiftDraft &d, std::size_t atom) {
                        if (d.source != ShiftSourceKind::Reference && d.source != ShiftSourceKind::UserReference &&
                            detail::diastereotopic_partner(molecule, classes, atom) >= 0)
                          d.method += "; diastereotopic CH2: no reference lookup, both protons share the value";
                        if (as_in_cdcl3 && d.source != ShiftSourceKind::UserReference && !d.solvent_named) {
                          d.method += "; value for CDCl3 solutions, no published correction to "sv;
                          d.method += solvent.name;
                          d.method += " applied"sv;
                        }
                      });
  // Exchangeable protons: reference values from other solvents and
  // concentrations do not carry over; the solvent-specific typical values of
  // the special-proton table (or a class average) with a wide uncertainty.
  SourceList labile_sources;
  if (increments) labile_sources.push_back(increments.get());
  labile_sources.push_back(&fallback);
  if (labile.empty()) return out;
  // Appended behind the carbon-bound protons, whose positions the run does
  // not touch, then merged in place: both parts ascend by atom and no atom
  // is in both (one list rather than two and their merged copy).
  const auto carbon_bound_count = static_cast<std::ptrdiff_t>(out.size());
  detail::run_sources(q, labile_sources, AtomRange{labile.data(), labile.data() + labile.size()}, nullptr, out,
                      [&](ShiftDraft &d, std::size_t) {
                        const bool from_table = d.source == ShiftSourceKind::Increments;
                        d.exchangeable = true;
                        d.observed = !solvent.exchanges_labile_protons;
                        if (from_table) return;
                        auto to_method = std::back_inserter(d.method);
                        if (solvent.exchanges_labile_protons)
                          fmt::format_to(to_method, "; exchanges with {} and gives no signal", solvent.name);
                        else
                          fmt::format_to(to_method,
                                         "; in {} the signal may be broad or absent, and its position depends on "
                                         "concentration, water and temperature",
                                         solvent.name);
                      });
  std::inplace_merge(out.begin(), out.begin() + carbon_bound_count, out.end(),
                     [](const Shift &a, const Shift &b) { return a.atom < b.atom; });
  return out;
}

}  // namespace detail

std::vector<Shift> predict_c13(const Molecule &molecule, const AtomClasses &classes, const Tables &tables,
                               const ShiftOptions &options, std::vector<std::string> *warnings) {
  return detail::predict_c13_on(molecule, classes, tables, options, warnings, nullptr);
}

std::vector<Shift> predict_h1(const Molecule &molecule, const AtomClasses &classes, const Tables &tables,
                              const ShiftOptions &options, std::vector<std::string> *warnings) {
  return detail::predict_h1_on(molecule, classes, tables, options, warnings, nullptr);
}

std::vector<C13SetEntry> predict_c13_set(const std::vector<Molecule> &molecules, const Tables &tables,
                                         const ShiftOptions &options) {
  return detail::predict_c13_set(molecules, tables, options);
}

C13H1Shifts predict_c13_h1(const Molecule &molecule, const AtomClasses &classes, const Tables &tables,
                           const ShiftOptions &options, std::vector<std::string> *warnings) {
  if (classes.chemical.size() != molecule.atom_count())
    throw ArgumentError("predict_c13_h1: classes belong to another molecule");
  const detail::MoleculeFacts facts(molecule, classes, detail::MoleculeFacts::Askers::BothNuclei);
  C13H1Shifts out;
  out.c13 = detail::predict_c13_on(molecule, classes, tables, options, warnings, &facts);
  out.h1 = detail::predict_h1_on(molecule, classes, tables, options, warnings, &facts);
  return out;
}

}  // namespace nmrpred
