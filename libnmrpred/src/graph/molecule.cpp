#include <nmrpred/error.hpp>
#include <nmrpred/molecule.hpp>

#include <algorithm>
#include <array>
#include <numeric>
#include <stdexcept>

#include <fmt/format.h>

namespace nmrpred {

namespace {

constexpr std::array<const char *, 119> kSymbols = {
    "?",  "H",  "He", "Li", "Be", "B",  "C",  "N",  "O",  "F",  "Ne", "Na", "Mg", "Al", "Si", "P",
    "S",  "Cl", "Ar", "K",  "Ca", "Sc", "Ti", "V",  "Cr", "Mn", "Fe", "Co", "Ni", "Cu", "Zn", "Ga",
    "Ge", "As", "Se", "Br", "Kr", "Rb", "Sr", "Y",  "Zr", "Nb", "Mo", "Tc", "Ru", "Rh", "Pd", "Ag",
    "Cd", "In", "Sn", "Sb", "Te", "I",  "Xe", "Cs", "Ba", "La", "Ce", "Pr", "Nd", "Pm", "Sm", "Eu",
    "Gd", "Tb", "Dy", "Ho", "Er", "Tm", "Yb", "Lu", "Hf", "Ta", "W",  "Re", "Os", "Ir", "Pt", "Au",
    "Hg", "Tl", "Pb", "Bi", "Po", "At", "Rn", "Fr", "Ra", "Ac", "Th", "Pa", "U",  "Np", "Pu", "Am",
    "Cm", "Bk", "Cf", "Es", "Fm", "Md", "No", "Lr", "Rf", "Db", "Sg", "Bh", "Hs", "Mt", "Ds", "Rg",
    "Cn", "Nh", "Fl", "Mc", "Lv", "Ts", "Og"};

}  // namespace

const char *Molecule::element_symbol(unsigned atomic_number) noexcept {
  return atomic_number < kSymbols.size() ? kSymbols[atomic_number] : "?";
}

unsigned Molecule::element_from_symbol(const std::string &symbol) noexcept {
  for (unsigned z = 1; z < kSymbols.size(); ++z)
    if (symbol == kSymbols[z]) return z;
  return 0;
}

Molecule::Molecule(MoleculeData data) : data_(std::move(data)) {
  const std::size_t n = data_.atoms.size();
  if (n > 0xFFFFFFF0u) throw InputError("molecule has too many atoms");
  for (std::size_t i = 0; i < n; ++i) {
    const unsigned z = data_.atoms[i].atomic_number;
    if (z == 0 || z >= kSymbols.size())
      throw InputError(fmt::format("atom {}: atomic number {} is not an element", i, z));
  }
  // Heavy atoms first, then hydrogens: later stages rely on it.
  heavy_count_ = 0;
  while (heavy_count_ < n && data_.atoms[heavy_count_].atomic_number != 1) ++heavy_count_;
  for (std::size_t i = heavy_count_; i < n; ++i)
    if (data_.atoms[i].atomic_number != 1)
      throw InputError(fmt::format("atom {}: heavy atom after the first hydrogen", i));

  if (!data_.input_index.empty() && data_.input_index.size() != n)
    throw InputError("input_index size does not match the atom count");
  if (!data_.coordinates.empty() && data_.coordinates.size() != 3 * n)
    throw InputError("coordinate count does not match the atom count");

  offset_.assign(n + 1, 0);
  for (auto &b : data_.bonds) {
    if (b.begin > b.end) std::swap(b.begin, b.end);
    if (b.end >= n) throw InputError(fmt::format("bond {}-{}: atom index out of range", b.begin, b.end));
    if (b.begin == b.end) throw InputError(fmt::format("bond {}-{}: an atom bonded to itself", b.begin, b.end));
    ++offset_[b.begin + 1];
    ++offset_[b.end + 1];
  }
  for (std::size_t i = 0; i < n; ++i) offset_[i + 1] += offset_[i];
  const std::size_t entries = offset_[n];
  // Neighbour lists sorted by neighbour without sorting: list the bonds of
  // each atom in bond order, then hand every atom out to its neighbours in
  // increasing atom order, so each list fills in increasing order.
  std::vector<std::uint32_t> fill(offset_.begin(), offset_.end() - 1);
  std::vector<std::uint32_t> by_atom(entries);
  for (std::uint32_t k = 0; k < data_.bonds.size(); ++k) {
    by_atom[fill[data_.bonds[k].begin]++] = k;
    by_atom[fill[data_.bonds[k].end]++] = k;
  }
  std::copy(offset_.begin(), offset_.end() - 1, fill.begin());
  adj_atom_.resize(entries);
  adj_bond_.resize(entries);
  for (std::uint32_t a = 0; a < n; ++a)
    for (auto e = offset_[a]; e < offset_[a + 1]; ++e) {
      const auto k = by_atom[e];
      const auto &b = data_.bonds[k];
      const auto other = b.begin == a ? b.end : b.begin;
      adj_atom_[fill[other]] = a;
      adj_bond_[fill[other]++] = k;
    }
  for (std::size_t i = 0; i < n; ++i)
    for (auto k = offset_[i] + 1; k < offset_[i + 1]; ++k)
      if (adj_atom_[k] == adj_atom_[k - 1])
        throw InputError(fmt::format("atoms {} and {} are bonded twice", i, adj_atom_[k]));
  if (adj_atom_.empty()) {
    // Keep neighbours_begin() valid for a molecule without bonds.
    adj_atom_.push_back(0);
    adj_bond_.push_back(0);
  }

  for (const auto &t : data_.tetrahedral) {
    if (t.centre >= n) throw InputError("stereocentre index out of range");
    int lone = 0;
    for (auto l : t.ligands) {
      if (l == kLonePair) {
        ++lone;
        continue;
      }
      if (l < 0 || static_cast<std::size_t>(l) >= n || bond_between(t.centre, l) < 0)
        throw InputError(fmt::format("stereocentre {}: ligand {} is not bonded to it", t.centre, l));
    }
    if (lone > 1 || degree(t.centre) + lone != 4)
      throw InputError(fmt::format("stereocentre {}: ligands do not match its neighbours", t.centre));
  }
  for (const auto &d : data_.double_bonds) {
    if (std::max({d.begin, d.end, d.ref_begin, d.ref_end}) >= n || bond_between(d.begin, d.end) < 0 ||
        bond_between(d.begin, d.ref_begin) < 0 || bond_between(d.end, d.ref_end) < 0 ||
        d.ref_begin == d.end || d.ref_end == d.begin)
      throw InputError(fmt::format("double bond {}={}: stereo references are not its neighbours", d.begin, d.end));
  }

  // Connected components by iterative DFS (no recursion: 5,000-atom chains are legal).
  fragment_.assign(n, 0xFFFFFFFFu);
  fragment_count_ = 0;
  std::vector<std::uint32_t> stack;
  for (std::size_t s = 0; s < n; ++s) {
    if (fragment_[s] != 0xFFFFFFFFu) continue;
    const auto id = static_cast<std::uint32_t>(fragment_count_++);
    fragment_[s] = id;
    stack.push_back(static_cast<std::uint32_t>(s));
    while (!stack.empty()) {
      const auto a = stack.back();
      stack.pop_back();
      for (auto k = offset_[a]; k < offset_[a + 1]; ++k) {
        const auto b = adj_atom_[k];
        if (fragment_[b] == 0xFFFFFFFFu) {
          fragment_[b] = id;
          stack.push_back(b);
        }
      }
    }
  }
}

std::int64_t Molecule::bond_between(std::size_t a, std::size_t b) const {
  if (a >= atom_count() || b >= atom_count()) return -1;
  // Neighbour lists are a few entries long: a scan beats a binary search.
  for (auto k = offset_[a]; k < offset_[a + 1]; ++k)
    if (adj_atom_[k] == b) return adj_bond_[k];
  return -1;
}

std::size_t Molecule::hydrogen_count(std::size_t i) const {
  check_atom(i);
  std::size_t h = 0;
  for (auto k = offset_[i]; k < offset_[i + 1]; ++k)
    if (data_.atoms[adj_atom_[k]].atomic_number == 1) ++h;
  return h;
}

void Molecule::throw_atom_out_of_range(std::size_t i) {
  throw std::out_of_range(fmt::format("atom index {} is out of range", i));
}

const char *status_name(Status status) noexcept {
  switch (status) {
    case Status::Ok: return "ok";
    case Status::Argument: return "invalid argument";
    case Status::Input: return "unusable input";
    case Status::Unsupported: return "unsupported";
    case Status::Tables: return "table error";
    case Status::NoMemory: return "out of memory";
    case Status::Internal: return "internal error";
  }
  return "unknown status";
}

}  // namespace nmrpred
