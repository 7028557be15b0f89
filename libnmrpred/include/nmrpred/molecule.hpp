#ifndef NMRPRED_MOLECULE_HPP
#define NMRPRED_MOLECULE_HPP

/// \file molecule.hpp
/// The library's own molecule graph: compact, immutable once built, and free of
/// any third-party type. Every stage after io/ works on this.
///
/// Atom order: heavy atoms first, in input order; then every hydrogen (any
/// isotope), grouped by the heavy atom it is bonded to (in heavy-atom order;
/// hydrogens given explicitly in the input come before implicit ones added by the
/// reader), then hydrogens bonded to no heavy atom. Indices are 0-based.
///
/// Thread rule: a built Molecule is immutable and may be read from any thread.

#include <array>
#include <cstdint>
#include <string>
#include <vector>

#include <nmrpred/export.hpp>

namespace nmrpred {

/// Bond multiplicity as the graph sees it. Aromatic bonds keep their own kind so
/// that Kekule and aromatic input of the same ring describe the same graph.
enum class BondOrder : std::uint8_t { Single = 1, Double = 2, Triple = 3, Aromatic = 4 };

/// One atom. Plain value.
struct Atom {
  std::uint8_t atomic_number = 0;      ///< 1..118; 0 is never stored (readers reject it)
  std::uint16_t isotope = 0;           ///< mass number; 0 = natural abundance (not given)
  std::int8_t formal_charge = 0;       ///< in units of e
  std::uint8_t radical_electrons = 0;  ///< unpaired electrons (0 for closed shell)
  bool aromatic = false;               ///< member of an aromatic ring as perceived by the reader
  friend bool operator==(const Atom &a, const Atom &b) {
    return a.atomic_number == b.atomic_number && a.isotope == b.isotope &&
           a.formal_charge == b.formal_charge && a.radical_electrons == b.radical_electrons &&
           a.aromatic == b.aromatic;
  }
  friend bool operator!=(const Atom &a, const Atom &b) { return !(a == b); }
};

/// One bond between atoms `begin` < `end`. Plain value.
struct Bond {
  std::uint32_t begin = 0;
  std::uint32_t end = 0;
  BondOrder order = BondOrder::Single;
  friend bool operator==(const Bond &a, const Bond &b) {
    return a.begin == b.begin && a.end == b.end && a.order == b.order;
  }
  friend bool operator!=(const Bond &a, const Bond &b) { return !(a == b); }
};

/// Marker used in TetrahedralStereo::ligands for a lone pair (for example the
/// fourth position of a sulfoxide sulfur).
inline constexpr std::int32_t kLonePair = -1;

/// A tetrahedral stereocentre whose configuration the input specified.
/// Looking from ligands[0] towards the centre, ligands[1], [2], [3] run clockwise.
struct TetrahedralStereo {
  std::uint32_t centre = 0;
  std::array<std::int32_t, 4> ligands{{0, 0, 0, 0}};  ///< atom indices or kLonePair
  friend bool operator==(const TetrahedralStereo &a, const TetrahedralStereo &b) {
    return a.centre == b.centre && a.ligands == b.ligands;
  }
};

/// A double bond whose geometry the input specified: atom `ref_begin` (bonded to
/// `begin`) and atom `ref_end` (bonded to `end`) are cis (same side) or trans.
struct DoubleBondStereo {
  std::uint32_t begin = 0;
  std::uint32_t end = 0;
  std::uint32_t ref_begin = 0;
  std::uint32_t ref_end = 0;
  bool cis = false;
  friend bool operator==(const DoubleBondStereo &a, const DoubleBondStereo &b) {
    return a.begin == b.begin && a.end == b.end && a.ref_begin == b.ref_begin &&
           a.ref_end == b.ref_end && a.cis == b.cis;
  }
};

/// Everything needed to build a Molecule. Readers fill it; Molecule validates it.
struct MoleculeData {
  std::vector<Atom> atoms;
  std::vector<Bond> bonds;
  std::vector<TetrahedralStereo> tetrahedral;
  std::vector<DoubleBondStereo> double_bonds;
  /// Per atom: its position in the input record (0-based), or -1 for a hydrogen
  /// the reader added. Empty means "identity".
  std::vector<std::int32_t> input_index;
  std::string title;
  /// Optional coordinates, 3 per atom (Angstrom); empty when the input had none.
  std::vector<double> coordinates;
  bool coordinates_3d = false;
};

/// Immutable molecular graph with compressed adjacency.
class NMRPRED_API Molecule {
 public:
  Molecule() = default;
  /// Validates and freezes `data`: atom order as documented above, bond indices in
  /// range, no duplicate bonds or self-loops, stereo references consistent with the
  /// bonds. Throws InputError naming the first problem.
  explicit Molecule(MoleculeData data);

  std::size_t atom_count() const noexcept { return data_.atoms.size(); }
  std::size_t bond_count() const noexcept { return data_.bonds.size(); }
  /// Number of atoms that are not hydrogen; they are atoms [0, heavy_atom_count()).
  std::size_t heavy_atom_count() const noexcept { return heavy_count_; }

  const Atom &atom(std::size_t i) const { return data_.atoms.at(i); }
  const Bond &bond(std::size_t b) const { return data_.bonds.at(b); }
  const std::vector<Atom> &atoms() const noexcept { return data_.atoms; }
  const std::vector<Bond> &bonds() const noexcept { return data_.bonds; }

  /// Neighbours of atom i as [begin, end) pointers into an internal array, sorted
  /// by neighbour index. Parallel to bond_ids().
  const std::uint32_t *neighbours_begin(std::size_t i) const { return &adj_atom_[offset_.at(i)]; }
  const std::uint32_t *neighbours_end(std::size_t i) const { return &adj_atom_[0] + offset_.at(i + 1); }
  /// Bond index of each neighbour entry, same order as the neighbours.
  const std::uint32_t *bond_ids_begin(std::size_t i) const { return &adj_bond_[offset_.at(i)]; }
  // One range check for both ends: offset_ has an entry past the last atom.
  std::size_t degree(std::size_t i) const {
    check_atom(i);
    return offset_[i + 1] - offset_[i];
  }
  /// Bond between a and b, or -1.
  std::int64_t bond_between(std::size_t a, std::size_t b) const;
  /// Number of hydrogens (any isotope) bonded to atom i.
  std::size_t hydrogen_count(std::size_t i) const;
  /// For a hydrogen, the index of the atom it is bonded to; -1 otherwise (or if free).
  /// Inline: the predictors ask it of every hydrogen many times over.
  std::int64_t attached_to(std::size_t i) const {
    check_atom(i);
    // Hydrogens are the atoms from heavy_atom_count() on (see atom order).
    if (i < heavy_count_ || offset_[i] == offset_[i + 1]) return -1;
    return adj_atom_[offset_[i]];
  }
  bool is_hydrogen(std::size_t i) const { return atom(i).atomic_number == 1; }

  const std::vector<TetrahedralStereo> &tetrahedral_stereo() const noexcept { return data_.tetrahedral; }
  const std::vector<DoubleBondStereo> &double_bond_stereo() const noexcept { return data_.double_bonds; }
  const std::vector<std::int32_t> &input_index() const noexcept { return data_.input_index; }
  const std::string &title() const noexcept { return data_.title; }
  const std::vector<double> &coordinates() const noexcept { return data_.coordinates; }
  bool has_3d_coordinates() const noexcept { return data_.coordinates_3d; }
  /// Connected components: component id per atom, ids 0.. in order of lowest atom.
  const std::vector<std::uint32_t> &fragments() const noexcept { return fragment_; }
  std::size_t fragment_count() const noexcept { return fragment_count_; }

  /// Element symbol ("C", "Cl"); "?" is never returned for a valid molecule.
  static const char *element_symbol(unsigned atomic_number) noexcept;
  /// Atomic number for a symbol, 0 if unknown. Case-sensitive ("Cl", not "CL").
  static unsigned element_from_symbol(const std::string &symbol) noexcept;

  friend bool operator==(const Molecule &a, const Molecule &b) {
    return a.data_.atoms == b.data_.atoms && a.data_.bonds == b.data_.bonds &&
           a.data_.tetrahedral == b.data_.tetrahedral && a.data_.double_bonds == b.data_.double_bonds;
  }
  friend bool operator!=(const Molecule &a, const Molecule &b) { return !(a == b); }

 private:
  // Throws std::out_of_range, as vector::at() does, unless i is an atom.
  void check_atom(std::size_t i) const {
    if (i >= data_.atoms.size()) throw_atom_out_of_range(i);
  }
  [[noreturn]] static void throw_atom_out_of_range(std::size_t i);

  MoleculeData data_;
  std::size_t heavy_count_ = 0;
  std::vector<std::uint32_t> offset_{0};
  std::vector<std::uint32_t> adj_atom_;
  std::vector<std::uint32_t> adj_bond_;
  std::vector<std::uint32_t> fragment_;
  std::size_t fragment_count_ = 0;
};

}  // namespace nmrpred

#endif
