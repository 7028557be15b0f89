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

#include <cstddef>
#include <cstdint>
#include <functional>
#include <memory>
#include <string>
#include <string_view>
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
  const SmartsImpl &impl() const noexcept { return *impl_; }

 private:
  std::shared_ptr<const SmartsImpl> impl_;
};

// Per-molecule facts that patterns ask about. Ring perception runs on first
// use only. Not thread-safe: one target per thread.
class SmartsTarget {
 public:
  explicit SmartsTarget(const Molecule &m);
  const Molecule &molecule() const noexcept { return m_; }
  std::size_t heavy_degree(std::size_t atom) const { return heavy_degree_[atom]; }
  // Number of smallest rings (smarts.hpp) that contain the atom / the bond.
  int ring_count(std::size_t atom) const;
  int bond_ring_count(std::size_t bond) const;
  // Size of the smallest ring that contains the atom, 0 if none.
  int smallest_ring(std::size_t atom) const;
  // The smallest rings as atom lists in ring order, smallest first.
  const std::vector<std::vector<std::uint32_t>> &rings() const;

 private:
  void perceive_rings() const;
  const Molecule &m_;
  std::vector<std::uint8_t> heavy_degree_;
  mutable bool rings_done_ = false;
  mutable std::vector<std::vector<std::uint32_t>> rings_;
  mutable std::vector<std::uint8_t> atom_rings_, bond_rings_, atom_smallest_;
};

// Anchored match: does `p` match with its atom 0 on molecule atom `atom`,
// using no atom whose flag in `excluded` is set (`excluded` may be empty or
// shorter than the atom count: missing flags are false)? Returns the number of
// pattern atoms matched (p.atom_count()), or 0 when there is no match.
std::size_t match_at(const SmartsPattern &p, const SmartsTarget &t, std::size_t atom,
                     const std::vector<bool> &excluded = {});

// Every mapping (pattern atom -> molecule atom) in which pattern atom i sits on
// `fixed[i]` when fixed[i] >= 0 (fixed may be empty), using no excluded atom.
// `visit` returns true to stop the search. Returns true if any mapping was
// visited. Mappings that differ only by symmetry are all visited.
bool for_each_match(const SmartsPattern &p, const SmartsTarget &t, const std::vector<std::int64_t> &fixed,
                    const std::vector<bool> &excluded,
                    const std::function<bool(const std::vector<std::uint32_t> &)> &visit);

}  // namespace nmrpred::detail

#endif
